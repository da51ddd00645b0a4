package model

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"spillway/funnel/mcmc"
	"spillway/funnel/mcmc/mcmctest"
)

// TestJointIndependent checks that a joint target of two stages that
// nothing ties is exactly the two stages side by side: the sum of their log
// densities, the concatenation of their gradients, names and constrained
// values.
func TestJointIndependent(t *testing.T) {
	sc := testScaled(70, 6)
	rng := rand.New(rand.NewPCG(9, 9))
	for _, o := range []Options{{}, {Plain: true}, {Linear: map[string]bool{"audio": true}}} {
		d, _ := Demand(sc, o)
		y, _ := Outcome(sc, o)
		j, err := NewJoint([]*Stage{d, y})
		if err != nil {
			t.Fatal(err)
		}
		td, _ := d.Target()
		ty, _ := y.Target()
		if j.Dim() != td.Dim()+ty.Dim() || j.Offset(1) != td.Dim() {
			t.Fatalf("joint dimension %d (offset %d), stages %d + %d", j.Dim(), j.Offset(1), td.Dim(), ty.Dim())
		}
		if want := append(d.Names(), y.Names()...); !slices.Equal(j.Names(), want) {
			t.Errorf("joint names %v, want %v", j.Names(), want)
		}
		for rep := 0; rep < 4; rep++ {
			x := make([]float64, j.Dim())
			for i := range x {
				x[i] = rng.Float64()*2 - 1
			}
			xd, xy := x[:td.Dim()], x[td.Dim():]
			gd, gy, g := make([]float64, td.Dim()), make([]float64, ty.Dim()), make([]float64, j.Dim())
			want := td.LogProbGrad(gd, xd) + ty.LogProbGrad(gy, xy)
			if got := j.LogProbGrad(g, x); got != want {
				t.Errorf("joint log density %v, sum of the stages' %v", got, want)
			}
			if !slices.Equal(g, append(gd, gy...)) {
				t.Errorf("joint gradient %v, want the stages' %v %v", g, gd, gy)
			}
			if got, want := j.LogProb(x), td.LogProb(xd)+ty.LogProb(xy); got != want {
				t.Errorf("joint LogProb %v, sum of the stages' %v", got, want)
			}
			if got, want := j.Constrain(nil, x), append(td.Constrain(nil, xd), ty.Constrain(nil, xy)...); !slices.Equal(got, want) {
				t.Errorf("joint constrained values %v, want %v", got, want)
			}
		}
		mcmctest.CheckNoAlloc(t, j, make([]float64, j.Dim()))
	}
	o, _ := Outcome(sc, Options{})
	n, _ := Naive(sc, Options{})
	if _, err := NewJoint([]*Stage{o, n}); err == nil || !strings.Contains(err.Error(), "mu_y") {
		t.Errorf("stages sharing parameter names: error %v", err)
	}
}

// liftStages returns the demand and outcome stages and a lift test of
// video on metric m that went dark for weeks 20-29.
func liftStages(sc *Scaled, o Options, m LiftMetric) ([]*Stage, *LiftTest) {
	d, _ := Demand(sc, o)
	y, _ := Outcome(sc, o)
	return []*Stage{d, y}, &LiftTest{Column: "video", Metric: m, Start: 20, End: 29,
		Estimate: 0.8, SE: 0.3, Demand: 0, Outcome: 1}
}

var liftCases = []Options{{}, {Plain: true}, {Linear: map[string]bool{"video": true}},
	{Priors: map[string]Prior{"alpha[video]": {Normal, 0, 1}, "K2[video]": {Fixed, 0.8, 0}}},
	{Drift: map[string]bool{"video": true, "search": true}},
	{Drift: map[string]bool{"video": true}, Linear: map[string]bool{"video": true}, Baseline: BaselineSmooth},
	{Drift: map[string]bool{"video": true, "search": true}, DriftShape: DriftJumps}}

// wantLift is the model's lift of column col over weeks from..to at the
// constrained draws v (per stage; nil for a stage the test leaves out),
// from Stage.Response, the drift's Params.Multiplier and gamma read by
// meaning: what LiftTest computes by its own passes.
func wantLift(st []*Stage, v [][]float64, col string, from, to int, viaGamma bool) float64 {
	L := make([]float64, 2)
	for k, s := range st {
		if v[k] == nil {
			continue
		}
		j := s.ChannelIndex(col)
		x := s.Channels[j].X
		cf := slices.Clone(x)
		for w := from; w <= to; w++ {
			cf[w] = 0
		}
		h, coef := s.Response(nil, j, v[k], x)
		hcf, _ := s.Response(nil, j, v[k], cf)
		m := s.Layout().View(v[k]).Multiplier(make([]float64, len(x)), j)
		for w := from; w <= to; w++ {
			L[k] += coef * m[w] * (h[w] - hcf[w])
		}
	}
	if viaGamma {
		L[0] *= st[1].Layout().View(v[1]).Gamma()
	}
	return L[0] + L[1]
}

// TestLiftTest checks the lift test term on queries and on the outcome, an
// upper-funnel and a paid-search channel, with and without drift: its
// gradient through the joint target (both stages' coefficients, transforms
// and drifts, in the sampling coordinates), no allocation, clones that
// agree, and its log density and Lift against the lift computed from the
// constrained draw by wantLift.
func TestLiftTest(t *testing.T) {
	sc := testScaled(70, 7)
	rng := rand.New(rand.NewPCG(10, 10))
	type tc struct {
		o      Options
		m      LiftMetric
		search bool
	}
	var cases []tc
	for _, o := range liftCases {
		cases = append(cases, tc{o, LiftOutcome, false}, tc{o, LiftQueries, false})
	}
	cases = append(cases, tc{Options{}, LiftOutcome, true}, tc{Options{Drift: map[string]bool{"search": true}}, LiftOutcome, true})
	for _, c := range cases {
		st, lift := liftStages(sc, c.o, c.m)
		if c.search {
			lift.Column = "search"
		}
		j, err := NewJoint(st, lift)
		if err != nil {
			t.Fatal(err)
		}
		// step 1e-5: these joint densities reach 1e4 in magnitude, where
		// central differences at 1e-6 lose eps |lp| / h ~ 1e-6 to rounding;
		// radius 0.6 with jumps, as TestSmoothStages
		radius := 1.0
		if c.o.DriftShape == DriftJumps {
			radius = 0.6
		}
		mcmctest.CheckGradient(t, j, 1e-6, &mcmctest.GradSettings{Seed: 12, Points: 4, Radius: radius, Step: 1e-5})
		mcmctest.CheckNoAlloc(t, j, make([]float64, j.Dim()))
		plain, err := NewJoint(st)
		if err != nil {
			t.Fatal(err)
		}
		cl := j.Clone()
		for rep := 0; rep < 3; rep++ {
			x, v, lp := clonedPoint(t, rng, j, cl)
			n0 := len(st[0].Names())
			vv := [][]float64{v[:n0], v[n0:]}
			if c.m == LiftQueries {
				vv[1] = nil
			}
			if c.search {
				vv[0] = nil
			}
			L := wantLift(st, vv, lift.Column, lift.Start, lift.End, c.m == LiftOutcome && !c.search)
			z := (lift.Estimate - L) / lift.SE
			if got := lp - plain.LogProb(x); math.Abs(got-(-0.5*z*z)) > 1e-9 {
				t.Errorf("%v %s %v: lift term %v, want %v (lift %v)", c.o, lift.Column, c.m, got, -0.5*z*z, L)
			}
			if got := lift.Lift(v[:n0], v[n0:]); math.Abs(got-L) > 1e-12 {
				t.Errorf("%v %s %v: Lift %v, want %v", c.o, lift.Column, c.m, got, L)
			}
		}
	}
	st, lift := liftStages(sc, Options{}, LiftOutcome)
	for _, bad := range []func(*LiftTest){
		func(l *LiftTest) { l.End = 500 },
		func(l *LiftTest) { l.Start, l.End = 30, 29 },
		func(l *LiftTest) { l.SE = 0 },
		func(l *LiftTest) { l.Column = "radio" },
		func(l *LiftTest) { l.Metric = LiftQueries; l.Column = "search" },
	} {
		l := *lift
		bad(&l)
		if _, err := NewJoint(st, &l); err == nil {
			t.Errorf("lift test %+v was accepted", l)
		}
	}
	// a window with no spend
	zero := testScaled(70, 7)
	for w := 20; w <= 29; w++ {
		zero.Upper[0][w] = 0
	}
	st, lift = liftStages(zero, Options{}, LiftOutcome)
	if _, err := NewJoint(st, lift); err == nil || !strings.Contains(err.Error(), "no spend") {
		t.Errorf("a window with no spend: error %v", err)
	}
}

// TestLiftTestTerm checks the lift test term on its own, in the natural
// values of the parameters it reads (the coefficients, gamma, both stages'
// transforms of the channel and their drifts), saturating and linear.
func TestLiftTestTerm(t *testing.T) {
	sc := testScaled(70, 8)
	for _, o := range []Options{{}, {Linear: map[string]bool{"video": true}}, {Drift: map[string]bool{"video": true}}} {
		st, lift := liftStages(sc, o, LiftOutcome)
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
			slots = append(slots, slot{k, c.Coef, 0.4, 0.3})
			if !c.Linear() {
				slots = append(slots, slot{k, c.Lam, 0.5, 0.4}, slot{k, c.K, 1, 0.5}, slot{k, c.S, 2, 1})
			}
			if d := c.Drift; d.Has() {
				slots = append(slots, slot{k, d.SD, 0.4, 0.2}, slot{k, d.Len, 25, 10})
				for i := 0; i < d.Basis.M; i++ {
					slots = append(slots, slot{k, d.Z + i, 0, 1})
				}
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
}

// TestJointRuns checks that the sampler runs a joint target with a lift test
// and writes one column per name of both stages.
func TestJointRuns(t *testing.T) {
	if testing.Short() {
		t.Skip("a short sampler run")
	}
	st, lift := liftStages(testScaled(70, 9), Options{}, LiftOutcome)
	j, err := NewJoint(st, lift)
	if err != nil {
		t.Fatal(err)
	}
	fit, err := mcmc.Run(context.Background(), j, &mcmc.Settings{Chains: 2, Warmup: 150, Draws: 50, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if r, c := fit.Chains[1].Draws.Dims(); r != 50 || c != len(j.Names()) || !slices.Equal(fit.Names, j.Names()) {
		t.Errorf("draws %d x %d, names %v", r, c, fit.Names)
	}
}

// clonedPoint returns a point x of j uniform in (-1, 1) in every
// coordinate, its constrained values and j's log density there, and checks
// that cl, a clone of j, gives the same log density.
func clonedPoint(t *testing.T, rng *rand.Rand, j *Joint, cl mcmc.Target) (x, v []float64, lp float64) {
	t.Helper()
	x = make([]float64, j.Dim())
	for i := range x {
		x[i] = rng.Float64()*2 - 1
	}
	g := make([]float64, j.Dim())
	lp = j.LogProbGrad(g, x)
	if lc := cl.LogProbGrad(g, x); lc != lp {
		t.Errorf("clone: %v, want %v", lc, lp)
	}
	return x, j.Constrain(nil, x), lp
}
