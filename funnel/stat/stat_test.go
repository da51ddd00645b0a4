package stat_test

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"spillway/funnel/stat"
)

// TestQuantileType7 checks Quantile against R's quantile(type = 7):
// quantile(c(1, 2, 4, 8, 16), c(0.05, 0.5, 0.95, 0, 1)) gives
// 1.2, 4, 14.4, 1, 16 (hand-computed from the type-7 definition,
// Hyndman and Fan 1996).
func TestQuantileType7(t *testing.T) {
	x := []float64{1, 2, 4, 8, 16}
	for _, c := range []struct{ p, want float64 }{{0.05, 1.2}, {0.5, 4}, {0.95, 14.4}, {0, 1}, {1, 16}} {
		if got := stat.Quantile(x, c.p); !scalar.EqualWithinAbsOrRel(got, c.want, 1e-14, 1e-14) {
			t.Errorf("Quantile(%v): got %v, want %v", c.p, got, c.want)
		}
	}
	if got := stat.Quantile([]float64{3}, 0.9); got != 3 {
		t.Errorf("Quantile of one value: got %v, want 3", got)
	}
	if got := stat.Quantile(nil, 0.5); !math.IsNaN(got) {
		t.Errorf("Quantile of no values: got %v, want NaN", got)
	}
}

// TestMeanSD checks against R: mean(c(1, 2, 4, 8, 16)) is 6.2,
// var() 37.2 (148.8 / 4), sd() its square root.
func TestMeanSD(t *testing.T) {
	x := []float64{1, 2, 4, 8, 16}
	m, sd := stat.MeanSD(x)
	if m != 6.2 || stat.Mean(x) != 6.2 {
		t.Errorf("mean %v, want 6.2", m)
	}
	if v := stat.Variance(x); !scalar.EqualWithinAbsOrRel(v, 37.2, 1e-14, 1e-14) {
		t.Errorf("variance %v, want 37.2", v)
	}
	if !scalar.EqualWithinAbsOrRel(sd, math.Sqrt(37.2), 1e-14, 1e-14) {
		t.Errorf("sd %v, want sqrt(37.2)", sd)
	}
	if m, sd := stat.MeanSD([]float64{5}); m != 5 || !math.IsNaN(sd) {
		t.Errorf("one value: got %v, %v; want 5, NaN", m, sd)
	}
	if m := stat.Mean(nil); !math.IsNaN(m) {
		t.Errorf("mean of no values: got %v, want NaN", m)
	}
}
