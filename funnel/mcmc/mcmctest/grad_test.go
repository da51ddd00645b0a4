package mcmctest_test

import (
	"math"
	"testing"

	"spillway/funnel/mcmc/mcmctest"
)

// rosenbrock is −f(x) for Rosenbrock's function (Rosenbrock, H.H., Computer
// J. 3 (1960) 175-184) in 2-d, with its exact gradient.
type rosenbrock struct{ wrong, modify bool }

func (rosenbrock) Dim() int { return 2 }
func (r rosenbrock) LogProbGrad(grad, x []float64) float64 {
	a, b := x[0], x[1]
	f := (1-a)*(1-a) + 100*(b-a*a)*(b-a*a)
	grad[0] = -(-2*(1-a) - 400*a*(b-a*a))
	grad[1] = -(200 * (b - a*a))
	if r.wrong {
		grad[1] *= 1.001
	}
	if r.modify {
		x[0] += 1e-3
	}
	return -f
}

// halfLine is finite only for x > 0.
type halfLine struct{}

func (halfLine) Dim() int { return 1 }
func (halfLine) LogProbGrad(grad, x []float64) float64 {
	if x[0] <= 0 {
		return math.Inf(-1)
	}
	grad[0] = 1 / x[0]
	return math.Log(x[0])
}

func TestGradient(t *testing.T) {
	r := mcmctest.CheckGradient(t, rosenbrock{}, 1e-6, &mcmctest.GradSettings{Seed: 1})
	if r.Checked != 20 || r.MaxScaled > 1e-6 {
		t.Errorf("exact gradient: %v", r)
	}
	bad := mcmctest.Gradient(rosenbrock{wrong: true}, &mcmctest.GradSettings{Seed: 1})
	if bad.MaxScaled < 1e-4 || bad.Index != 1 {
		t.Errorf("a 0.1%% error in grad[1] went unnoticed: %v", bad)
	}
	if !mcmctest.Gradient(rosenbrock{modify: true}, nil).Modified {
		t.Errorf("modification of x went unnoticed")
	}
	h := mcmctest.Gradient(halfLine{}, &mcmctest.GradSettings{Seed: 2, Points: 50, At: [][]float64{{0.5}}})
	if h.Skipped == 0 || h.Checked+h.Skipped != 51 || h.MaxScaled > 1e-6 {
		t.Errorf("half line: %v", h)
	}
	mcmctest.CheckNoAlloc(t, rosenbrock{}, []float64{0.3, 0.2})
}

// TestFunc checks the adapter on log x(1-x), whose derivative is
// 1/x - 1/(1-x) (closed form), with Gradient finding a wrong one.
func TestFunc(t *testing.T) {
	f := func(wrong float64) mcmctest.Func {
		return mcmctest.Func{N: 1, F: func(grad, x []float64) float64 {
			v := 0.5 + 0.4*x[0] // (0.1, 0.9) for |x| < 1
			grad[0] = 0.4 * (1/v - 1/(1-v) + wrong)
			return math.Log(v) + math.Log1p(-v)
		}}
	}
	mcmctest.CheckGradient(t, f(0), 1e-8, &mcmctest.GradSettings{Seed: 4, Radius: 1})
	mcmctest.CheckNoAlloc(t, f(0), []float64{0.3})
	if r := mcmctest.Gradient(f(1e-2), &mcmctest.GradSettings{Seed: 4, Radius: 1}); r.MaxScaled < 1e-4 {
		t.Errorf("a wrong derivative went unnoticed: %v", r)
	}
}
