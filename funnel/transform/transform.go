package transform

import "math"

// Adstock writes the normalised geometric adstock of x with retention lam into
// dst and returns it:
//
//	a[0] = (1-lam) x[0],  a[t] = (1-lam) x[t] + lam a[t-1].
//
// The impulse response weights (1-lam) lam^l sum to one, so a constant input
// converges to that constant (the scale is preserved). If dst is nil a new
// slice is allocated; a non-nil dst must have len(x).
func Adstock(dst, x []float64, lam float64) []float64 {
	dst = resize(dst, len(x))
	prev := 0.0
	for t, v := range x {
		prev = (1-lam)*v + lam*prev
		dst[t] = prev
	}
	return dst
}

// AdstockGrad writes the adstock of x into a and its derivative with respect
// to lam into da (both len(x), both written):
//
//	da[t]/dlam = a[t-1] - x[t] + lam da[t-1]/dlam.
func AdstockGrad(a, da, x []float64, lam float64) {
	if len(a) != len(x) || len(da) != len(x) {
		panic("transform: length mismatch")
	}
	prev, dprev := 0.0, 0.0
	for t, v := range x {
		d := prev - v + lam*dprev
		prev = (1-lam)*v + lam*prev
		a[t], da[t] = prev, d
		dprev = d
	}
}

// Hill returns the Hill saturation of a >= 0 with half-saturation K > 0 and
// shape S > 0:
//
//	H(a; K, S) = a^S / (a^S + K^S) = 1 / (1 + (a/K)^-S).
//
// H(K) = 1/2 for every S; H(0) = 0 and H tends to 1 as a grows.
func Hill(a, k, s float64) float64 {
	if a <= 0 {
		return 0
	}
	r := math.Pow(a/k, s)
	if math.IsInf(r, 1) {
		return 1
	}
	return r / (1 + r)
}

// HillGrad returns H(a; K, S) and its partial derivatives with respect to a,
// K and S. With r = (a/K)^S and H = r/(1+r), dH/dr = H(1-H)/r, so
//
//	dH/da = S H (1-H) / a,  dH/dK = -S H (1-H) / K,  dH/dS = H (1-H) ln(a/K).
//
// At a = 0 all four are zero.
func HillGrad(a, k, s float64) (h, dA, dK, dS float64) {
	if a <= 0 {
		return 0, 0, 0, 0
	}
	la := math.Log(a / k)
	r := math.Exp(s * la)
	if math.IsInf(r, 1) {
		return 1, 0, 0, 0
	}
	h = r / (1 + r)
	w := h / (1 + r) // H(1-H)
	return h, s * w / a, -s * w / k, w * la
}

// HalfLifeToRetention returns the geometric retention lam whose impulse
// weights fall to half the lag-0 weight after h weeks: lam = 0.5^(1/h)
// (common practice).
func HalfLifeToRetention(h float64) float64 { return math.Pow(0.5, 1/h) }

// RetentionToHalfLife returns h = ln 0.5 / ln lam, the inverse of
// HalfLifeToRetention.
func RetentionToHalfLife(lam float64) float64 { return math.Log(0.5) / math.Log(lam) }

// resize returns a resliced x if cap(x) >= n, and a new slice otherwise.
func resize(x []float64, n int) []float64 {
	if x == nil {
		return make([]float64, n)
	}
	if len(x) != n {
		panic("transform: length mismatch")
	}
	return x
}
