package transform

import "math"

// HillSeries writes H(a[t]; K, S) into h and its derivatives into hl, hk
// and hs, and returns the four series' sums: hl is the derivative in the
// adstock's retention lam through da = da/dlam (dH/da da), hk and hs those
// in K and S (HillGrad's formulas). It is HillGrad with the constants
// hoisted, one log, one exp and two divisions per week; a week with a <= 0
// has all four zero, and one where (a/K)^S passes 1e300 has H = 1 and zero
// derivatives. Every slice has len(a).
func HillSeries(h, hl, hk, hs, a, da []float64, k, s float64) (sh, shl, shk, shs float64) {
	return hillSeries(h, hl, hk, hs, a, da, nil, 0, k, s)
}

// AdstockHillSeries is AdstockGrad then HillSeries, bit for bit the same
// values and sums, with h and hl holding the adstock and its derivative
// until they are replaced: no scratch series.
func AdstockHillSeries(h, hl, hk, hs, x []float64, lam, k, s float64) (sh, shl, shk, shs float64) {
	return hillSeries(h, hl, hk, hs, nil, nil, x, lam, k, s)
}

// hillSeries is HillSeries on the adstock ad with derivative da or, when x
// is not nil, AdstockHillSeries on x. It makes few passes over the weeks,
// each with few values live across its calls of math.Log or math.Exp:
// the adstock (fused: into h and hl), then log(a) - log K (into hs), then
// (a/K)^S (into hk), then every value from those in one pass without calls
// (each week's slots read before they are written), so the values and
// the sums' order are the week-by-week loop's.
func hillSeries(h, hl, hk, hs, ad, da, x []float64, lam, k, s float64) (sh, shl, shk, shs float64) {
	T := len(ad)
	if x != nil {
		T = len(x)
	}
	h, hl, hk, hs = h[:T], hl[:T], hk[:T], hs[:T]
	if x != nil {
		AdstockGrad(h, hl, x, lam)
		ad, da = h, hl
	}
	ad, da = ad[:T], da[:T]
	logK, invK := math.Log(k), 1/k
	for t, a := range ad {
		if a > 0 {
			hs[t] = math.Log(a) - logK
		}
	}
	for t, a := range ad {
		if a > 0 {
			hk[t] = math.Exp(s * hs[t])
		}
	}
	for t, a := range ad {
		if a <= 0 {
			h[t], hl[t], hk[t], hs[t] = 0, 0, 0, 0
			continue
		}
		la, r := hs[t], hk[t]
		if r > 1e300 {
			h[t], hl[t], hk[t], hs[t] = 1, 0, 0, 0
			sh++
			continue
		}
		inv := 1 / (1 + r)
		hi := r * inv
		w := hi * inv // H(1-H)
		sw := s * w
		li, ki, si := sw/a*da[t], -sw*invK, w*la
		h[t], hl[t], hk[t], hs[t] = hi, li, ki, si
		sh += hi
		shl += li
		shk += ki
		shs += si
	}
	return sh, shl, shk, shs
}
