package allocate

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/floats/scalar"
)

var boxTests = []struct {
	name   string
	lo, hi []float64
	total  float64
}{
	{"no limits", []float64{0, 0, 0}, []float64{10, 10, 10}, 10},
	{"minimums", []float64{1, 2, 0.5}, []float64{10, 10, 10}, 10},
	{"caps bind", []float64{0, 0, 0, 0}, []float64{3, 2, 4, math.Inf(1)}, 8},
	{"tight", []float64{1, 1, 1}, []float64{2, 2, 2}, 5.5},
	{"two", []float64{0, 0}, []float64{1e6, math.Inf(1)}, 2.5e6},
}

// TestBoxSimplex checks the map onto the feasible plans: every z gives
// amounts within their limits that add up to the total, coords inverts
// amounts, and the chain rule matches central differences of the map.
func TestBoxSimplex(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, c := range boxTests {
		b := newBoxSimplex(c.lo, c.hi, c.total)
		m := len(c.lo)
		a, z, back := make([]float64, m), make([]float64, m-1), make([]float64, m-1)
		for trial := 0; trial < 200; trial++ {
			for i := range z {
				z[i] = 4 * rng.NormFloat64()
			}
			b.amounts(a, z)
			sum := 0.0
			for i, v := range a {
				sum += v
				if v < c.lo[i]-1e-12*c.total || v > c.hi[i]+1e-12*c.total {
					t.Fatalf("%s: z %v gives a[%d] = %v outside [%v, %v]", c.name, z, i, v, c.lo[i], c.hi[i])
				}
			}
			if !scalar.EqualWithinAbsOrRel(sum, c.total, 1e-12, 1e-12) {
				t.Fatalf("%s: z %v gives a total of %v, want %v", c.name, z, sum, c.total)
			}
			if math.Abs(z[0]) < 8 {
				b.coords(back, a, 1e-12)
				if !floats.EqualApprox(back, z, 1e-6) {
					t.Errorf("%s: coords(amounts(%v)) = %v", c.name, z, back)
				}
			}
			// the gradient of sum_i g[i] a[i](z), against central differences
			g := make([]float64, m)
			for i := range g {
				g[i] = rng.NormFloat64()
			}
			f := func(z []float64) float64 {
				a := make([]float64, m)
				b.amounts(a, z)
				return floats.Dot(g, a)
			}
			want := fd.Gradient(nil, f, z, &fd.Settings{Formula: fd.Central, Step: 1e-6})
			got := make([]float64, m-1)
			b.gradient(got, z, g)
			for i := range got {
				if !scalar.EqualWithinAbsOrRel(got[i], want[i], 1e-6*c.total, 1e-5) {
					t.Errorf("%s: z %v: gradient %v, central differences %v", c.name, z, got, want)
					break
				}
			}
		}
	}
}

// TestSpread checks that weekly amounts are whole cents adding up to the
// channel's amount exactly, shared by the pattern's weights.
func TestSpread(t *testing.T) {
	for _, c := range []struct {
		amount int64
		w      []float64
	}{
		{100000, []float64{0.25, 0.25, 0.25, 0.25}},
		{99999, []float64{1.0 / 3, 1.0 / 3, 1.0 / 3}},
		{7, []float64{0.1, 0.2, 0.3, 0.4}},
		{123456789, []float64{0.5, 0, 0.5}},
		{0, []float64{0.5, 0.5}},
	} {
		got := spread(c.amount, c.w)
		var sum int64
		for i, v := range got {
			sum += v
			if share := float64(c.amount) * c.w[i]; math.Abs(float64(v)-share) >= 1 {
				t.Errorf("spread(%d, %v)[%d] = %d, want within a cent of %v", c.amount, c.w, i, v, share)
			}
		}
		if sum != c.amount {
			t.Errorf("spread(%d, %v) = %v adds up to %d", c.amount, c.w, got, sum)
		}
	}
}
