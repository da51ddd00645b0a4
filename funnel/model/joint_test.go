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

// liftStages returns the demand and outcome stages and a lift test of video
// that went dark for weeks 20-29, measured over weeks 20-39.
func liftStages(sc *Scaled, o Options) ([]*Stage, *LiftTest) {
	d, _ := Demand(sc, o)
	y, _ := Outcome(sc, o)
	j := d.ChannelIndex("video")
	cf := slices.Clone(d.Channels[j].X)
	for t := 20; t < 30; t++ {
		cf[t] = 0
	}
	return []*Stage{d, y}, &LiftTest{Column: "video", Counterfactual: cf, From: 20, To: 40,
		Estimate: 0.8, SE: 0.3, Demand: 0, Outcome: 1}
}

// TestLiftTest checks the lift test term: its gradient through the joint
// target (both stages' coefficients and transforms, in the sampling
// coordinates), no allocation, clones that agree, and its log density
// against the lift computed from the constrained draw with Stage.Response.
func TestLiftTest(t *testing.T) {
	sc := testScaled(70, 7)
	rng := rand.New(rand.NewPCG(10, 10))
	for _, o := range []Options{{}, {Plain: true}, {Linear: map[string]bool{"video": true}}, {Priors: map[string]Prior{"alpha[video]": {Normal, 0, 1}, "K2[video]": {Fixed, 0.8, 0}}}} {
		st, lift := liftStages(sc, o)
		j, err := NewJoint(st, lift)
		if err != nil {
			t.Fatal(err)
		}
		mcmctest.CheckGradient(t, j, 1e-6, &mcmctest.GradSettings{Seed: 12, Points: 6, Radius: 1})
		mcmctest.CheckNoAlloc(t, j, make([]float64, j.Dim()))
		plain, err := NewJoint(st)
		if err != nil {
			t.Fatal(err)
		}
		c := j.Clone()
		for rep := 0; rep < 3; rep++ {
			x := make([]float64, j.Dim())
			for i := range x {
				x[i] = rng.Float64()*2 - 1
			}
			g := make([]float64, j.Dim())
			lp := j.LogProbGrad(g, x)
			if lc := c.LogProbGrad(g, x); lc != lp {
				t.Errorf("clone: %v, want %v", lc, lp)
			}
			// the lift from DESIGN.md's formulas on the constrained values
			v := j.Constrain(nil, x)
			vd, vy := v[:len(st[0].Names())], v[len(st[0].Names()):]
			jd, jy := st[0].ChannelIndex("video"), st[1].ChannelIndex("video")
			x0 := st[0].Channels[jd].X
			hq, alpha := st[0].Response(nil, jd, vd, x0)
			hqcf, _ := st[0].Response(nil, jd, vd, lift.Counterfactual)
			hy, delta := st[1].Response(nil, jy, vy, x0)
			hycf, _ := st[1].Response(nil, jy, vy, lift.Counterfactual)
			gamma := st[1].Layout().View(vy).Gamma()
			L := 0.0
			for w := lift.From; w < lift.To; w++ {
				L += gamma*alpha*(hq[w]-hqcf[w]) + delta*(hy[w]-hycf[w])
			}
			z := (lift.Estimate - L) / lift.SE
			if got := lp - plain.LogProbGrad(g, x); math.Abs(got-(-0.5*z*z)) > 1e-9 {
				t.Errorf("lift term %v, want %v (lift %v)", got, -0.5*z*z, L)
			}
		}
	}
	st, lift := liftStages(sc, Options{})
	lift.To = 500
	if _, err := NewJoint(st, lift); err == nil {
		t.Error("a lift test past the data's end was accepted")
	}
}

// TestLiftTestTerm checks the lift test term on its own, in the natural
// values of the parameters it reads (the coefficients, gamma and both
// stages' transforms of the channel), saturating and linear.
func TestLiftTestTerm(t *testing.T) {
	sc := testScaled(70, 8)
	for _, o := range []Options{{}, {Linear: map[string]bool{"video": true}}} {
		st, lift := liftStages(sc, o)
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
	st, lift := liftStages(testScaled(70, 9), Options{})
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
