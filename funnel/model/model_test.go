package model

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"

	"spillway/funnel/mcmc/mcmctest"
)

// testScaled builds a small scaled series with two upper channels, one search
// channel and one control, in the shapes the loader produces.
func testScaled(T int, seed uint64) *Scaled {
	rng := rand.New(rand.NewPCG(seed, 1))
	sc := &Scaled{T: T, UpperNames: []string{"video", "audio"}, SearchNames: []string{"search"}, ControlNames: []string{"price"}}
	sc.Weeks = make([]time.Time, T)
	sc.Tau = make([]float64, T)
	for k := range sc.Season {
		sc.Season[k] = make([]float64, T)
	}
	for i := 0; i < T; i++ {
		sc.Weeks[i] = time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC).AddDate(0, 0, 7*i)
		sc.Tau[i] = float64(i) / float64(T-1)
		w := 2 * math.Pi * float64(i+1) / SeasonPeriod
		sc.Season[0][i], sc.Season[1][i], sc.Season[2][i], sc.Season[3][i] = math.Cos(w), math.Cos(2*w), math.Sin(w), math.Sin(2*w)
	}
	spend := func(pZero float64) []float64 {
		x := make([]float64, T)
		for i := range x {
			if rng.Float64() > pZero {
				x[i] = rng.ExpFloat64()
			}
		}
		d := SpendScale(x)
		for i := range x {
			x[i] /= d
		}
		return x
	}
	sc.Upper = [][]float64{spend(0.3), spend(0.5)}
	sc.Search = [][]float64{spend(0)}
	sc.Queries = make([]float64, T)
	sc.Outcome = make([]float64, T)
	z := make([]float64, T)
	for i := 0; i < T; i++ {
		sc.Queries[i] = 1 + 0.2*rng.NormFloat64()
		sc.Outcome[i] = 1 + 0.2*rng.NormFloat64()
		z[i] = rng.NormFloat64()
	}
	sc.Controls = [][]float64{z}
	return sc
}

func stages(t *testing.T, sc *Scaled, o Options) []*Stage {
	t.Helper()
	var out []*Stage
	for _, f := range []func(*Scaled, Options) (*Stage, error){Demand, Outcome, Naive} {
		st, err := f(sc, o)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, st)
	}
	return out
}

var optionCases = []struct {
	name string
	o    Options
}{
	{"default", Options{}},
	{"plain", Options{Plain: true}},
	{"linear video", Options{Linear: map[string]bool{"video": true}}},
	{"fixed and real priors", Options{Priors: map[string]Prior{
		"b_q": {Fixed, 0, 0}, "b_y": {Fixed, 0, 0}, "K[audio]": {Fixed, 0.8, 0},
		"alpha[video]": {Normal, 0, 1}, "delta[video]": {Normal, 0, 1}, "delta[audio]": {Flat, 0, 0}, "sigma_q": {Jeffreys, 0, 0}, "mu_y": {Flat, 0, 0},
	}}},
	{"fixed intercept", Options{Priors: map[string]Prior{"mu_q": {Fixed, 0.3, 0}, "mu_y": {Fixed, 0.3, 0}}}},
}

// TestGradient compares the analytic gradient of every stage with central
// finite differences (gonum diff/fd) at seeded random points.
func TestGradient(t *testing.T) {
	sc := testScaled(80, 3)
	masked := testScaled(80, 3)
	masked.Mask = make([]bool, 80)
	for i := 60; i < 72; i++ {
		masked.Mask[i] = true // a held-out stretch
	}
	rng := rand.New(rand.NewPCG(7, 7))
	cases := append(optionCases, struct {
		name string
		o    Options
	}{"masked", Options{}})
	for _, oc := range cases {
		data := sc
		if oc.name == "masked" {
			data = masked
		}
		for _, st := range stages(t, data, oc.o) {
			tg, err := st.Target()
			if err != nil {
				t.Fatalf("%s %s: %v", oc.name, st.Name, err)
			}
			n := tg.Dim()
			// the project's reusable check (gonum fd central differences)
			mcmctest.CheckGradient(t, tg, 1e-4, &mcmctest.GradSettings{Seed: 3, Points: 5, Radius: 1})
			mcmctest.CheckNoAlloc(t, tg, make([]float64, n))
			grad := make([]float64, n)
			for rep := 0; rep < 5; rep++ {
				x := make([]float64, n)
				for i := range x {
					x[i] = rng.Float64()*2 - 1
				}
				f := func(x []float64) float64 { return tg.LogProbGrad(make([]float64, n), x) }
				lp := tg.LogProbGrad(grad, x)
				if math.IsInf(lp, 0) || math.IsNaN(lp) {
					t.Fatalf("%s %s: log density %v", oc.name, st.Name, lp)
				}
				if v := tg.LogProb(x); math.Abs(v-lp) > 1e-9*math.Max(1, math.Abs(lp)) {
					t.Errorf("%s %s: LogProb %v, LogProbGrad %v", oc.name, st.Name, v, lp)
				}
				want := fd.Gradient(nil, f, x, &fd.Settings{Formula: fd.Central, Step: 1e-6})
				// |grad - fd|inf relative to max(1, |fd|inf): central differences
				// lose about eps^(2/3) of the largest component
				worst, scale := 0.0, 1.0
				for i := range want {
					worst = math.Max(worst, math.Abs(grad[i]-want[i]))
					scale = math.Max(scale, math.Abs(want[i]))
				}
				worst /= scale
				if worst > 1e-7 {
					t.Errorf("%s %s: |grad - fd|inf (relative) = %.3g\n got %v\nwant %v", oc.name, st.Name, worst, grad, want)
				}
			}
		}
	}
}

// TestSamePosterior checks that the sampling coordinates change nothing about
// the posterior on the DESIGN.md parameters (with and without drifting
// coefficients and a moving baseline): at any natural point v,
// lp_reparam(U(v)) - log|det dC/dx| must equal lp_plain(U_plain(v)) -
// log|det dC_plain/dx| up to one constant, where C is Constrain (the change
// of variables formula).
func TestSamePosterior(t *testing.T) {
	sc := testScaled(80, 4)
	rng := rand.New(rand.NewPCG(8, 8))
	drift := map[string]bool{"video": true, "search": true}
	for _, name := range []string{"demand", "outcome", "demand drift", "outcome drift and baseline"} {
		var base float64
		opts := []Options{{}, {Plain: true}}
		switch name {
		case "demand drift":
			opts = []Options{{Drift: drift}, {Drift: drift, Plain: true}}
		case "outcome drift and baseline":
			opts = []Options{{Drift: drift, Baseline: BaselineSmooth}, {Drift: drift, Baseline: BaselineSmooth, Plain: true}}
		}
		for rep := 0; rep < 6; rep++ {
			var vals [2]float64
			var v []float64
			for k, o := range opts {
				var st *Stage
				if strings.HasPrefix(name, "demand") {
					st, _ = Demand(sc, o)
				} else {
					st, _ = Outcome(sc, o)
				}
				tg, err := st.Target()
				if err != nil {
					t.Fatal(err)
				}
				n := tg.Dim()
				if k == 0 {
					x := make([]float64, n)
					for i := range x {
						x[i] = rng.Float64()*2 - 1
					}
					v = tg.Constrain(nil, x)
				}
				x := tg.Unconstrain(nil, v)
				back := tg.Constrain(nil, x)
				for i := range v {
					if math.Abs(back[i]-v[i]) > 1e-9*math.Max(1, math.Abs(v[i])) {
						t.Fatalf("%s: Constrain(Unconstrain(v))[%d] = %v, want %v", name, i, back[i], v[i])
					}
				}
				lp := tg.LogProbGrad(make([]float64, n), x)
				jac := mat.NewDense(n, n, nil)
				fd.Jacobian(jac, func(dst, x []float64) {
					c := tg.Constrain(nil, x)
					j := 0
					for i, p := range tg.par {
						if p.free >= 0 {
							dst[j] = c[i]
							j++
						}
					}
				}, x, &fd.JacobianSettings{Formula: fd.Central})
				var lu mat.LU
				lu.Factorize(jac)
				logdet, _ := lu.LogDet()
				vals[k] = lp - logdet
			}
			diff := vals[0] - vals[1]
			if rep == 0 {
				base = diff
			} else if math.Abs(diff-base) > 1e-5 {
				t.Errorf("%s: density difference not constant: %v vs %v", name, diff, base)
			}
		}
	}
}

// BenchmarkLogProbGrad and BenchmarkLogProb time the outcome stage (three
// saturating channels, 156 weeks); the goal is a gradient at most 4 times
// the cost of the density alone, with no allocation.
func BenchmarkLogProbGrad(b *testing.B) {
	tg, x := benchTarget()
	g := make([]float64, tg.Dim())
	b.ReportAllocs()
	for b.Loop() {
		tg.LogProbGrad(g, x)
	}
}

func BenchmarkLogProb(b *testing.B) {
	tg, x := benchTarget()
	b.ReportAllocs()
	for b.Loop() {
		tg.LogProb(x)
	}
}

func benchTarget() (*Target, []float64) {
	sc := testScaled(156, 3)
	st, _ := Outcome(sc, Options{})
	tg, _ := st.Target()
	x := mcmctest.Ramp(tg.Dim())
	return tg, x
}

// TestMaskDropsWeeks checks that a masked week leaves the likelihood: the
// density must not change when a masked week's response changes.
func TestMaskDropsWeeks(t *testing.T) {
	sc := testScaled(60, 5)
	sc.Mask = make([]bool, 60)
	sc.Mask[30] = true
	st, _ := Outcome(sc, Options{})
	tg, _ := st.Target()
	x := make([]float64, tg.Dim())
	a := tg.LogProb(x)
	sc.Outcome[30] += 5
	b := tg.LogProb(x)
	sc.Outcome[31] += 5
	c := tg.LogProb(x)
	if a != b || b == c {
		t.Errorf("masked week changed the density (%v, %v) or an unmasked one did not (%v)", a, b, c)
	}
}
