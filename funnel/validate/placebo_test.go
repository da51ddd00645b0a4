package validate

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/transform"
	"spillway/funnel/validate/score"
)

func TestShiftSpend(t *testing.T) {
	x := []float64{1, 2, 3, 4, 5}
	got := ShiftSpend(nil, x, 2)
	want := []float64{4, 5, 1, 2, 3}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("shift 2: got %v, want %v", got, want)
		}
	}
	if got := ShiftSpend(nil, x, -1); got[0] != 2 || got[4] != 1 {
		t.Errorf("shift -1: got %v", got)
	}
	s := PlaceboShifts(7, 156, 19)
	seen := map[int]bool{}
	for _, k := range s {
		if k < MinPlaceboShift || k > 156-MinPlaceboShift || seen[k] {
			t.Errorf("shift %d out of range or repeated: %v", k, s)
		}
		seen[k] = true
	}
	if len(s) != 19 || len(PlaceboShifts(7, 30, 19)) != 5 {
		t.Errorf("got %d shifts of 156 weeks, %d of 30 (want 19 and 5)", len(s), len(PlaceboShifts(7, 30, 19)))
	}
	if p := PlaceboP(3, []float64{1, 2, 3, 4}); p != 3.0/5 {
		t.Errorf("PlaceboP: %v, want 3/5 (ties count against the real value)", p)
	}
}

// flighted returns T weeks of spend in bursts: on for 2-8 weeks at a level
// drawn per burst, off for 2-10 weeks.
func flighted(rng *rand.Rand, T int) []float64 {
	x := make([]float64, T)
	for t := 0; t < T; {
		on, off := 2+rng.IntN(7), 2+rng.IntN(9)
		level := 0.5 + rng.Float64()
		for i := 0; i < on && t < T; i++ {
			x[t] = level
			t++
		}
		t += off
	}
	return x
}

// olsEffect is a fast stand-in for a refit: the least-squares coefficient
// of y on the adstocked spend (retention 0.5), with an intercept, a trend
// and one yearly harmonic, times the adstocked spend's sum (an effect in
// y's units, as a refit's total effect is).
func olsEffect(y, x []float64) float64 {
	T := len(y)
	a := make([]float64, T)
	transform.Adstock(a, x, 0.5)
	X := mat.NewDense(T, 5, nil)
	sum := 0.0
	for t := range T {
		w := 2 * math.Pi * float64(t) / 52.18
		X.SetRow(t, []float64{1, float64(t) / float64(T-1), math.Cos(w), math.Sin(w), a[t]})
		sum += a[t]
	}
	var b mat.VecDense
	if err := b.SolveVec(X, mat.NewVecDense(T, y)); err != nil {
		return math.NaN()
	}
	return b.AtVec(4) * sum
}

// TestPlaceboUniform checks the placebo machinery (PlaceboShifts,
// ShiftSpend, PlaceboP) on a scenario with a known zero effect: an outcome
// with trend, season and AR(1) noise that does not depend on the
// flighted spend. The model refit is replaced by a least-squares
// estimate (olsEffect) so that 400 replicates of 19 placebos take a
// fraction of a second; the machinery is the one the sweep uses. Under
// the null the p-value is roughly uniform on {1/20, ..., 1}: the counts
// at or below 0.05, 0.25, 0.5 and 0.75 must each fall in the central 99%
// binomial range for 400 trials. With a real effect (positive control)
// the p-value is at most 0.05 in most replicates.
func TestPlaceboUniform(t *testing.T) {
	const reps, T, N = 400, 156, 19
	rng := rand.New(rand.NewPCG(11, 12))
	run := func(effect float64) []float64 {
		var ps []float64
		for r := range reps {
			x := flighted(rng, T)
			a := make([]float64, T)
			transform.Adstock(a, x, 0.5)
			y := make([]float64, T)
			e := 0.0
			for t := range y {
				e = 0.5*e + rng.NormFloat64()
				y[t] = 10 + 2*float64(t)/T + math.Sin(2*math.Pi*float64(t)/52.18) + e + effect*a[t]
			}
			real := olsEffect(y, x)
			var plac []float64
			var xs []float64
			for _, k := range PlaceboShifts(uint64(r), T, N) {
				xs = ShiftSpend(xs, x, k)
				plac = append(plac, olsEffect(y, xs))
			}
			ps = append(ps, PlaceboP(real, plac))
		}
		return ps
	}
	null := run(0)
	for _, q := range []float64{0.05, 0.25, 0.5, 0.75} {
		k := 0
		for _, p := range null {
			if p <= q+1e-12 {
				k++
			}
		}
		lo, hi := score.BinomialRange(reps, q, 0.99)
		t.Logf("zero effect: %d of %d p-values <= %v (range %d-%d)", k, reps, q, lo, hi)
		if k < lo || k > hi {
			t.Errorf("zero effect: %d of %d p-values <= %v, want %d to %d (uniform)", k, reps, q, lo, hi)
		}
	}
	power := 0
	for _, p := range run(1) {
		if p <= 0.05+1e-12 {
			power++
		}
	}
	t.Logf("real effect: %d of %d p-values <= 0.05", power, reps)
	if power < reps*3/4 {
		t.Errorf("real effect: only %d of %d p-values <= 0.05", power, reps)
	}
}
