package ols

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// enumerateLSI solves min ‖a·x − b‖ subject to g·x ≥ h by brute force, a
// method independent of Lawson and Hanson's: for every set of constraints
// taken as equalities, the KKT system [aᵀa gₛᵀ; gₛ 0][x; λ] = [aᵀb; hₛ];
// the best solution that meets every constraint wins. It returns nil when
// no set gives a feasible point.
func enumerateLSI(a *mat.Dense, b []float64, g *mat.Dense, h []float64) ([]float64, float64) {
	_, n := a.Dims()
	mc, _ := g.Dims()
	var ata mat.Dense
	ata.Mul(a.T(), a)
	var atb mat.VecDense
	atb.MulVec(a.T(), mat.NewVecDense(len(b), b))
	best, bestx := math.Inf(1), []float64(nil)
	for mask := 0; mask < 1<<mc; mask++ {
		var act []int
		for i := 0; i < mc; i++ {
			if mask>>i&1 == 1 {
				act = append(act, i)
			}
		}
		if len(act) > n {
			continue
		}
		k := n + len(act)
		kkt := mat.NewDense(k, k, nil)
		rhs := mat.NewVecDense(k, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				kkt.Set(i, j, ata.At(i, j))
			}
			rhs.SetVec(i, atb.AtVec(i))
		}
		for c, i := range act {
			for j := 0; j < n; j++ {
				kkt.Set(n+c, j, g.At(i, j))
				kkt.Set(j, n+c, g.At(i, j))
			}
			rhs.SetVec(n+c, h[i])
		}
		var sol mat.VecDense
		if err := sol.SolveVec(kkt, rhs); err != nil {
			continue
		}
		x := sol.RawVector().Data[:n]
		if slack(g, h, x) < -1e-9 {
			continue
		}
		if f := rss(a, b, x); f < best {
			best, bestx = f, append([]float64(nil), x...)
		}
	}
	return bestx, best
}

// slack returns min_i (g·x − h)_i.
func slack(g *mat.Dense, h, x []float64) float64 {
	m := math.Inf(1)
	for i := range h {
		s := -h[i]
		for j, xj := range x {
			s += g.At(i, j) * xj
		}
		m = math.Min(m, s)
	}
	return m
}

func rss(a *mat.Dense, b, x []float64) float64 {
	f := 0.0
	for i := range b {
		s := -b[i]
		for j, xj := range x {
			s += a.At(i, j) * xj
		}
		f += s * s
	}
	return f
}

// TestLSIAgainstEnumeration: on 300 random problems (8 rows, 3 columns, 5
// constraints) LSI's residual equals the best feasible point over every
// active set, its solution meets every constraint, and it reports
// infeasibility exactly when no active set gives a feasible point.
func TestLSIAgainstEnumeration(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	bound, infeasible := 0, 0
	for it := 0; it < 300; it++ {
		m, n, mc := 8, 3, 5
		a, g := mat.NewDense(m, n, nil), mat.NewDense(mc, n, nil)
		b, h := make([]float64, m), make([]float64, mc)
		for i := 0; i < m; i++ {
			for j := 0; j < n; j++ {
				a.Set(i, j, rng.NormFloat64())
			}
			b[i] = 3 * rng.NormFloat64()
		}
		for i := 0; i < mc; i++ {
			for j := 0; j < n; j++ {
				g.Set(i, j, rng.NormFloat64())
			}
			h[i] = rng.NormFloat64() - 1
		}
		x, isBound, err := LSI(a, b, g, h)
		want, wantF := enumerateLSI(a, b, g, h)
		if want == nil {
			infeasible++
			if !errors.Is(err, ErrInfeasible) {
				t.Errorf("problem %d: no feasible point, LSI gave %v, %v", it, x, err)
			}
			continue
		}
		if err != nil {
			t.Errorf("problem %d: %v (enumeration: %v)", it, err, want)
			continue
		}
		if isBound {
			bound++
		}
		if s := slack(g, h, x); s < -1e-10 {
			t.Errorf("problem %d: a constraint is broken by %g", it, -s)
		}
		if f := rss(a, b, x); math.Abs(f-wantF) > 1e-9*(1+wantF) || !floats.EqualApprox(x, want, 1e-6) {
			t.Errorf("problem %d: LSI %v (rss %v), enumeration %v (rss %v)", it, x, f, want, wantF)
		}
	}
	if bound < 100 || infeasible == 0 {
		t.Errorf("the problems test too little: %d of 300 bound, %d infeasible", bound, infeasible)
	}
}

// TestNNLS: cases solved by hand (least squares on the columns left free),
// and random problems against LSI with the constraints x ≥ 0.
func TestNNLS(t *testing.T) {
	a := mat.NewDense(3, 2, []float64{1, 0, 1, 0, 0, 1})
	for _, c := range []struct{ b, want []float64 }{
		{[]float64{2, 1, 1}, []float64{1.5, 1}}, // nothing binds: the least-squares mean 1.5
		{[]float64{-1, -2, 1}, []float64{0, 1}}, // x1 would be -1.5
		{[]float64{-1, -2, -3}, []float64{0, 0}},
	} {
		x, err := NNLS(a, c.b)
		if err != nil || !floats.EqualApprox(x, c.want, 1e-14) {
			t.Errorf("b %v: got %v, %v; want %v", c.b, x, err, c.want)
		}
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for it := 0; it < 200; it++ {
		m, n := 10, 4
		a := mat.NewDense(m, n, nil)
		b := make([]float64, m)
		for i := 0; i < m; i++ {
			for j := 0; j < n; j++ {
				a.Set(i, j, rng.NormFloat64())
			}
			b[i] = rng.NormFloat64()
		}
		eye := mat.NewDense(n, n, nil)
		for j := 0; j < n; j++ {
			eye.Set(j, j, 1)
		}
		want, _, err := LSI(a, b, eye, make([]float64, n))
		if err != nil {
			t.Fatal(err)
		}
		x, err := NNLS(a, b)
		if err != nil || !floats.EqualApprox(x, want, 1e-9) {
			t.Errorf("problem %d: NNLS %v (%v), LSI %v", it, x, err, want)
		}
	}
}
