package mcmc_test

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/floats/scalar"

	"spillway/funnel/mcmc"
)

type transform interface {
	Value(u float64) float64
	LogJac(u float64) float64
	LogJacGrad(u float64) float64
	Unconstrain(x float64) float64
}

// TestTransforms checks each transform's log-Jacobian against the log of a
// central finite difference of Value, its derivative against a finite
// difference of LogJac, and Unconstrain as the inverse of Value.
func TestTransforms(t *testing.T) {
	for _, c := range []struct {
		name string
		tr   transform
	}{
		{"Positive", mcmc.Positive{}},
		{"Unit", mcmc.Unit{}},
		{"Bounded", mcmc.Bounded{Lo: -1, Hi: 3}},
		{"Asinh", mcmc.Asinh{S: 0.5}},
	} {
		for _, u := range []float64{-6, -1.5, -0.2, 0, 0.7, 2, 5} {
			dx := fd.Derivative(c.tr.Value, u, &fd.Settings{Formula: fd.Central, Step: 1e-6})
			if got, want := c.tr.LogJac(u), math.Log(math.Abs(dx)); !scalar.EqualWithinAbsOrRel(got, want, 1e-6, 1e-6) {
				t.Errorf("%s.LogJac(%v): got %v, want %v (finite difference)", c.name, u, got, want)
			}
			dj := fd.Derivative(c.tr.LogJac, u, &fd.Settings{Formula: fd.Central, Step: 1e-5})
			if got := c.tr.LogJacGrad(u); !scalar.EqualWithinAbsOrRel(got, dj, 1e-6, 1e-6) {
				t.Errorf("%s.LogJacGrad(%v): got %v, want %v (finite difference)", c.name, u, got, dj)
			}
			if got := c.tr.Unconstrain(c.tr.Value(u)); !scalar.EqualWithinAbsOrRel(got, u, 1e-9, 1e-9) {
				t.Errorf("%s.Unconstrain(Value(%v)) = %v", c.name, u, got)
			}
		}
	}
	// Closed forms: logistic(0) = 1/2 with log-Jacobian log(1/4); the bounded
	// map's midpoint is (Lo+Hi)/2 with log-Jacobian log((Hi−Lo)/4).
	if v, j := (mcmc.Unit{}).Value(0), (mcmc.Unit{}).LogJac(0); v != 0.5 || !scalar.EqualWithinAbs(j, math.Log(0.25), 1e-15) {
		t.Errorf("Unit at 0: %v, %v", v, j)
	}
	b := mcmc.Bounded{Lo: 2, Hi: 10}
	if v, j := b.Value(0), b.LogJac(0); v != 6 || !scalar.EqualWithinAbs(j, math.Log(2), 1e-15) {
		t.Errorf("Bounded at 0: %v, %v", v, j)
	}
	// Asinh's Slope is dx/du, exp of its log-Jacobian.
	a := mcmc.Asinh{S: 0.5}
	for _, u := range []float64{-6, -0.2, 0, 2, 5} {
		if got, want := a.Slope(a.Value(u)), math.Exp(a.LogJac(u)); !scalar.EqualWithinAbsOrRel(got, want, 1e-12, 1e-12) {
			t.Errorf("Asinh.Slope(Value(%v)) = %v, want %v", u, got, want)
		}
	}
	// Far tails stay finite.
	if j := (mcmc.Unit{}).LogJac(-800); math.IsInf(j, 0) || math.IsNaN(j) {
		t.Errorf("Unit.LogJac(-800) = %v", j)
	}
}

type transformAt interface {
	transform
	LogJacAt(x float64) float64
	ChainGrad(dfdx, x float64) float64
}

// TestTransformsAt checks the methods that take the constrained value:
// LogJacAt(Value(u)) against LogJac(u), and ChainGrad against a central
// finite difference of u -> f(Value(u)) + LogJac(u) for f(x) = sin x + x².
func TestTransformsAt(t *testing.T) {
	f := func(x float64) float64 { return math.Sin(x) + x*x }
	df := func(x float64) float64 { return math.Cos(x) + 2*x }
	for _, c := range []struct {
		name string
		tr   transformAt
	}{
		{"Positive", mcmc.Positive{}},
		{"Unit", mcmc.Unit{}},
		{"Bounded", mcmc.Bounded{Lo: -1, Hi: 3}},
		{"Asinh", mcmc.Asinh{S: 0.5}},
	} {
		for _, u := range []float64{-6, -1.5, -0.2, 0, 0.7, 2, 5} {
			x := c.tr.Value(u)
			if got, want := c.tr.LogJacAt(x), c.tr.LogJac(u); !scalar.EqualWithinAbsOrRel(got, want, 1e-10, 1e-10) {
				t.Errorf("%s.LogJacAt(Value(%v)): got %v, want LogJac %v", c.name, u, got, want)
			}
			num := fd.Derivative(func(u float64) float64 { return f(c.tr.Value(u)) + c.tr.LogJac(u) }, u,
				&fd.Settings{Formula: fd.Central, Step: 1e-5})
			if got := c.tr.ChainGrad(df(x), x); !scalar.EqualWithinAbsOrRel(got, num, 1e-6, 1e-6) {
				t.Errorf("%s.ChainGrad at u=%v: got %v, want %v (finite difference)", c.name, u, got, num)
			}
		}
	}
}
