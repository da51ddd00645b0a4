package transform

import (
	"math"
	"math/rand/v2"
	"testing"
)

// hillLoop is the week-by-week loop the model ran before HillSeries (one
// log, one exp and two divisions a week, the constants hoisted), kept as
// the bit-for-bit reference.
func hillLoop(h, hl, hk, hs, ad, da []float64, k, s float64) (sh, shl, shk, shs float64) {
	logK, invK := math.Log(k), 1/k
	for i, a := range ad {
		if a <= 0 {
			h[i], hl[i], hk[i], hs[i] = 0, 0, 0, 0
			continue
		}
		la := math.Log(a) - logK
		r := math.Exp(s * la)
		if r > 1e300 {
			h[i], hl[i], hk[i], hs[i] = 1, 0, 0, 0
			sh++
			continue
		}
		inv := 1 / (1 + r)
		hi := r * inv
		w := hi * inv
		sw := s * w
		h[i], hl[i], hk[i], hs[i] = hi, sw/a*da[i], -sw*invK, w*la
		sh += hi
		shl += hl[i]
		shk += hk[i]
		shs += hs[i]
	}
	return sh, shl, shk, shs
}

// seriesCase is a random spend series with dark stretches and a transform,
// K and S drawn over their extremes as well as their usual range.
func seriesCases(n int) []struct {
	x         []float64
	lam, k, s float64
} {
	rng := rand.New(rand.NewPCG(11, 12))
	pick := func(vals []float64, lo, hi float64) float64 {
		if rng.IntN(3) == 0 {
			return vals[rng.IntN(len(vals))]
		}
		return lo + (hi-lo)*rng.Float64()
	}
	var out []struct {
		x         []float64
		lam, k, s float64
	}
	for c := 0; c < n; c++ {
		T := 1 + rng.IntN(200)
		x := make([]float64, T)
		dark := rng.IntN(4) // 0: all dark, else spend in some weeks
		for t := range x {
			switch {
			case dark == 0:
			case rng.IntN(dark+1) == 0:
			default:
				x[t] = math.Exp(3 * rng.NormFloat64())
			}
		}
		if c%7 == 0 {
			x[0] = 1e-300 // a tiny first week: the log's far end
		}
		out = append(out, struct {
			x         []float64
			lam, k, s float64
		}{x,
			pick([]float64{0, 1e-12, 0.5, 0.999999, 1}, 0, 0.95),
			pick([]float64{1e-8, 1e-3, 1, 1e3, 1e8}, 0.05, 5),
			pick([]float64{1e-6, 0.05, 1, 20, 200}, 0.2, 6)})
	}
	return out
}

func bitsEqual(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }

// TestHillSeriesBits checks HillSeries and AdstockHillSeries against the
// week-by-week loop (after AdstockGrad) bit for bit: every value, every
// derivative and the four sums, on random series with zero spend, tiny
// spend and K and S at their extremes (overflowing (a/K)^S included).
func TestHillSeriesBits(t *testing.T) {
	for n, c := range seriesCases(400) {
		T := len(c.x)
		mk := func() [4][]float64 {
			return [4][]float64{make([]float64, T), make([]float64, T), make([]float64, T), make([]float64, T)}
		}
		a, da := make([]float64, T), make([]float64, T)
		AdstockGrad(a, da, c.x, c.lam)
		want, got, fused := mk(), mk(), mk()
		var ws, gs, fs [4]float64
		ws[0], ws[1], ws[2], ws[3] = hillLoop(want[0], want[1], want[2], want[3], a, da, c.k, c.s)
		gs[0], gs[1], gs[2], gs[3] = HillSeries(got[0], got[1], got[2], got[3], a, da, c.k, c.s)
		fs[0], fs[1], fs[2], fs[3] = AdstockHillSeries(fused[0], fused[1], fused[2], fused[3], c.x, c.lam, c.k, c.s)
		for j := range 4 {
			if !bitsEqual(gs[j], ws[j]) || !bitsEqual(fs[j], ws[j]) {
				t.Fatalf("case %d (lam %v K %v S %v), sum %d: HillSeries %x, AdstockHillSeries %x, want %x", n, c.lam, c.k, c.s, j,
					math.Float64bits(gs[j]), math.Float64bits(fs[j]), math.Float64bits(ws[j]))
			}
			for i := range T {
				if !bitsEqual(got[j][i], want[j][i]) || !bitsEqual(fused[j][i], want[j][i]) {
					t.Fatalf("case %d (lam %v K %v S %v), series %d week %d: HillSeries %v, AdstockHillSeries %v, want %v", n, c.lam, c.k, c.s, j, i,
						got[j][i], fused[j][i], want[j][i])
				}
			}
		}
	}
}

// TestHillSeriesIsHillGrad ties HillSeries to the scalar HillGrad (which
// takes log(a/K) where the series takes log a - log K, so only to
// rounding) and its values to Hill.
func TestHillSeriesIsHillGrad(t *testing.T) {
	for n, c := range seriesCases(200) {
		if c.s > 50 || c.k < 1e-6 || c.k > 1e6 {
			continue // (a/K)^S near overflow: the two logs' rounding is amplified
		}
		T := len(c.x)
		a, da := make([]float64, T), make([]float64, T)
		AdstockGrad(a, da, c.x, c.lam)
		h, hl, hk, hs := make([]float64, T), make([]float64, T), make([]float64, T), make([]float64, T)
		HillSeries(h, hl, hk, hs, a, da, c.k, c.s)
		close := func(got, want float64) bool {
			return math.Abs(got-want) <= 1e-9*(math.Abs(want)+1e-300)+1e-300
		}
		for i := range T {
			if a[i]/c.k < 1e-300 {
				continue // HillGrad's log(a/K) underflows to -Inf
			}
			wh, wa, wk, ws := HillGrad(a[i], c.k, c.s)
			if !close(h[i], wh) || !close(hl[i], wa*da[i]) || !close(hk[i], wk) || !close(hs[i], ws) {
				t.Fatalf("case %d week %d (a %v K %v S %v): series (%v %v %v %v), HillGrad (%v %v %v %v)",
					n, i, a[i], c.k, c.s, h[i], hl[i], hk[i], hs[i], wh, wa*da[i], wk, ws)
			}
			if v := Hill(a[i], c.k, c.s); !close(h[i], v) {
				t.Fatalf("case %d week %d: series %v, Hill %v", n, i, h[i], v)
			}
		}
	}
}

func BenchmarkAdstockHillSeries(b *testing.B) {
	x := make([]float64, 156)
	rng := rand.New(rand.NewPCG(1, 2))
	for t := range x {
		if rng.IntN(4) > 0 {
			x[t] = math.Exp(rng.NormFloat64())
		}
	}
	h, hl, hk, hs := make([]float64, 156), make([]float64, 156), make([]float64, 156), make([]float64, 156)
	a, da := make([]float64, 156), make([]float64, 156)
	b.Run("fused", func(b *testing.B) {
		for b.Loop() {
			AdstockHillSeries(h, hl, hk, hs, x, 0.6, 0.8, 2.5)
		}
	})
	b.Run("two-pass", func(b *testing.B) {
		for b.Loop() {
			AdstockGrad(a, da, x, 0.6)
			HillSeries(h, hl, hk, hs, a, da, 0.8, 2.5)
		}
	})
	b.Run("loop", func(b *testing.B) {
		for b.Loop() {
			AdstockGrad(a, da, x, 0.6)
			hillLoop(h, hl, hk, hs, a, da, 0.8, 2.5)
		}
	})
}
