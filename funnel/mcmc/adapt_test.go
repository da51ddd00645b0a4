package mcmc_test

import (
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"spillway/funnel/mcmc"
)

// TestWindows checks the metric-adaptation schedule. For 1000 warm-up
// iterations the slow windows end at 99, 149, 249, 449, 949 (REFERENCES.md
// section 6, Stan's windowed_adaptation.hpp with init_buffer 75, window 25,
// term_buffer 50). 150 = 75 + 25 + 50 leaves one window; 100 falls back to
// 15%/75%/10% (init 15, window 75, term 10: one window ending at 89); below
// 20 there is no metric adaptation.
func TestWindows(t *testing.T) {
	for _, c := range []struct {
		warmup int
		want   []int
	}{
		{1000, []int{99, 149, 249, 449, 949}},
		{2000, []int{99, 149, 249, 449, 849, 1949}},
		{150, []int{99}},
		{100, []int{89}},
		{19, nil},
	} {
		if got := mcmc.Windows(c.warmup); !slices.Equal(got, c.want) {
			t.Errorf("Windows(%d): got %v, want %v", c.warmup, got, c.want)
		}
	}
}

// TestDualAveraging checks the recursion of Stan's stepsize_adaptation.hpp
// (REFERENCES.md section 6) with δ = 0.8, μ = log 10, γ = 0.05, κ = 0.75,
// t0 = 10 on the acceptance sequence 1, 0.5, 0.9, 1.3 (the last capped at 1).
// Want values computed by hand from the recursion (Python, float64).
func TestDualAveraging(t *testing.T) {
	da := mcmc.NewDualAveraging(0.8, math.Log(10))
	want := []struct{ eps, final float64 }{
		{14.385510095776777, 14.385510095776777},
		{7.900158579283462, 10.072939579028702},
		{10.000000000000002, 10.040876343230117},
		{17.707949524351548, 12.271170546883177},
	}
	for i, a := range []float64{1, 0.5, 0.9, 1.3} {
		eps := da.Learn(a)
		if !scalar.EqualWithinAbsOrRel(eps, want[i].eps, 1e-13, 1e-13) {
			t.Errorf("step %d: eps got %v, want %v", i+1, eps, want[i].eps)
		}
		if f := da.Final(); !scalar.EqualWithinAbsOrRel(f, want[i].final, 1e-13, 1e-13) {
			t.Errorf("step %d: final got %v, want %v", i+1, f, want[i].final)
		}
	}
	// After Restart, an acceptance exactly at the target leaves s̄ = 0, so the
	// step size is exp(μ) = 10 (fixed point of the recursion, closed form).
	da.Restart()
	if eps := da.Learn(0.8); !scalar.EqualWithinAbsOrRel(eps, 10, 1e-14, 1e-14) {
		t.Errorf("after restart: got %v, want 10", eps)
	}
}
