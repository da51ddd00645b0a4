package model

import (
	"math"
	"math/rand/v2"
	"testing"

	"spillway/funnel/mcmc/mcmctest"
)

// measuredScaled returns testScaled(T, seed) with video's input an exposure
// measured as kind says: "break" (a break at week 24), "error" (latent
// errors, sd 0.2), "frequency" (reach and frequency), or "all" of them.
func measuredScaled(T int, seed uint64, kind string) *Scaled {
	sc := testScaled(T, seed)
	sc.RawExposure = [][]float64{sc.Upper[0], nil}
	if kind == "break" || kind == "all" {
		sc.Breaks = []int{24, 0}
	}
	if kind == "error" || kind == "all" {
		sc.Errors = []float64{0.2, 0}
	}
	if kind == "frequency" || kind == "all" {
		f := make([]float64, T)
		for w := range f {
			f[w] = 1.2 + float64(w%5)
		}
		sc.Freq, sc.FreqRecent = [][]float64{f, nil}, []float64{3, 0}
	}
	return sc
}

// TestLiftMeasured checks a lift test on a channel whose exposure is
// measured with doubt (a break before the test's weeks, latent errors, a
// frequency curve, all three), on the outcome (both paths) and on the
// queries: its gradient through the joint target in the sampling
// coordinates, the measurement parameters included, against central finite
// differences; no allocation; and its log density and Lift against the
// lift computed from the constrained draw by Stage.Response (the layout's
// Media, which runs the measured input, with the spend of the test's weeks
// and so their exposure removed).
func TestLiftMeasured(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	for _, kind := range []string{"break", "error", "frequency", "all"} {
		sc := measuredScaled(70, 11, kind)
		for _, m := range []LiftMetric{LiftOutcome, LiftQueries} {
			st, lift := liftStages(sc, Options{}, m)
			if cs, _ := st[0].Layout().Channel("video"); cs.Break < 0 && cs.ErrZ < 0 && cs.FreqK < 0 {
				t.Fatalf("%s: video's exposure is not measured", kind)
			}
			j, err := NewJoint(st, lift)
			if err != nil {
				t.Fatalf("%s %v: %v", kind, m, err)
			}
			mcmctest.CheckGradient(t, j, 1e-6, &mcmctest.GradSettings{Seed: 13, Points: 4, Radius: 1, Step: 1e-5})
			mcmctest.CheckNoAlloc(t, j, make([]float64, j.Dim()))
			plain, err := NewJoint(st)
			if err != nil {
				t.Fatal(err)
			}
			for range 3 {
				x := make([]float64, j.Dim())
				for i := range x {
					x[i] = rng.Float64()*2 - 1
				}
				g := make([]float64, j.Dim())
				lp := j.LogProbGrad(g, x)
				v := j.Constrain(nil, x)
				n0 := len(st[0].Names())
				vv := [][]float64{v[:n0], v[n0:]}
				if m == LiftQueries {
					vv[1] = nil
				}
				L := wantLift(st, vv, "video", lift.Start, lift.End, m == LiftOutcome)
				z := (lift.Estimate - L) / lift.SE
				if got := lp - plain.LogProbGrad(g, x); math.Abs(got-(-0.5*z*z)) > 1e-9 {
					t.Errorf("%s %v: lift term %v, want %v (lift %v)", kind, m, got, -0.5*z*z, L)
				}
				if got := lift.Lift(v[:n0], v[n0:]); math.Abs(got-L) > 1e-12*math.Max(1, math.Abs(L)) {
					t.Errorf("%s %v: Lift %v, want %v", kind, m, got, L)
				}
			}
		}
	}
}

// TestLiftMeasuredTerm checks the lift term of a measured channel on its
// own, in the natural values of what it reads (coefficients, gamma, the
// transforms, a break's log factor before the test's weeks, the latent
// errors of weeks before and inside them, the frequency curve), against
// central finite differences.
func TestLiftMeasuredTerm(t *testing.T) {
	sc := measuredScaled(70, 12, "all")
	st, lift := liftStages(sc, Options{}, LiftOutcome)
	j, err := NewJoint(st, lift)
	if err != nil {
		t.Fatal(err)
	}
	pts := j.pts
	type slot struct {
		pt, k       int
		base, scale float64
	}
	slots := []slot{{1, pts[1].Layout.GammaSlot(), 0.5, 0.3}}
	for k, p := range pts {
		c, _ := p.Layout.Channel("video")
		slots = append(slots, slot{k, c.Coef, 0.4, 0.3}, slot{k, c.Lam, 0.5, 0.4}, slot{k, c.K, 1, 0.5}, slot{k, c.S, 2, 1},
			slot{k, c.Break, 0.2, 0.5}, slot{k, c.FreqK, 2, 0.8}, slot{k, c.FreqK + 1, 1.5, 0.6})
		for i := range c.ErrWeeks {
			slots = append(slots, slot{k, c.ErrZ + i, 0.1 * float64(i%3), 1})
		}
	}
	f := mcmctest.Func{N: len(slots), F: func(grad, x []float64) float64 {
		for i, s := range slots {
			pts[s.pt].Values[s.k] = s.base + s.scale*x[i]
		}
		for _, p := range pts {
			clear(p.Grad)
		}
		lp := lift.LogDensity(pts, true)
		for i, s := range slots {
			grad[i] = pts[s.pt].Grad[s.k] * s.scale
		}
		return lp
	}}
	mcmctest.CheckGradient(t, f, 1e-7, termGrad)
	mcmctest.CheckNoAlloc(t, f, make([]float64, len(slots)))
}

// TestReturnPriorMeasured checks a return prior on a channel whose
// exposure is measured with doubt (a break, latent errors, a frequency
// curve, all three), each path, on spend and incremental: its gradient
// through the joint target, the measurement parameters included, against
// central finite differences; no allocation; and its Value against the
// return computed from the constrained draw by Stage.Response (the measured
// input, the window's spend and so its exposure removed, the sum running
// to the data's end).
func TestReturnPriorMeasured(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	for _, kind := range []string{"break", "error", "frequency", "all"} {
		sc := measuredScaled(70, 7, kind)
		ret := retScaled(70, 7)
		sc.UpperScale, sc.RawUpper, sc.OutcomeScale, sc.QueriesScale = ret.UpperScale, ret.RawUpper, ret.OutcomeScale, ret.QueriesScale
		for _, path := range []ReturnPath{ReturnTotal, ReturnViaSearch, ReturnDirect} {
			for _, m := range []ReturnMeasure{ReturnOnSpend, Incremental} {
				r := newRet(t, sc, path, m)
				o := Options{Returns: []*ReturnPrior{r}}
				d, err := Demand(sc, o)
				if err != nil {
					t.Fatalf("%s %s: %v", kind, r.Name(), err)
				}
				y, err := Outcome(sc, o)
				if err != nil {
					t.Fatalf("%s %s: %v", kind, r.Name(), err)
				}
				st := []*Stage{d, y}
				term := r.Term(0, 1)
				j, err := NewJoint(st, term)
				if err != nil {
					t.Fatal(err)
				}
				mcmctest.CheckGradient(t, j, 1e-6, &mcmctest.GradSettings{Seed: 14, Points: 3, Radius: 1, Step: 1e-5})
				mcmctest.CheckNoAlloc(t, j, make([]float64, j.Dim()))
				n0 := len(d.Names())
				for range 2 {
					x := make([]float64, j.Dim())
					for i := range x {
						x[i] = rng.Float64()*2 - 1
					}
					v := j.Constrain(nil, x)
					u, w := wantReturn(st, [][]float64{v[:n0], v[n0:]}, r)
					if got := term.Value(v[:n0], v[n0:]); math.Abs(got-(u+w)) > 1e-10*(u+w) {
						t.Errorf("%s %s: Value %v, want %v", kind, r.Name(), got, u+w)
					}
				}
			}
		}
	}
}
