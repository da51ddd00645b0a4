package model

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distmv"
	"gonum.org/v1/gonum/stat/distuv"

	"spillway/funnel/mcmc/mcmctest"
)

// jumpTieStages returns the demand and outcome stages with every channel
// drifting with jumps, and their ties.
func jumpTieStages(t *testing.T, sc *Scaled, o Options) ([]*Stage, []*JumpTie) {
	t.Helper()
	o.Drift = map[string]bool{"video": true, "audio": true, "search": true}
	o.DriftShape = DriftJumps
	d, err := Demand(sc, o)
	if err != nil {
		t.Fatal(err)
	}
	y, err := Outcome(sc, o)
	if err != nil {
		t.Fatal(err)
	}
	return []*Stage{d, y}, JumpTies(d, y, 0, 1)
}

func crossTerms(ties []*JumpTie) []CrossTerm {
	out := make([]CrossTerm, len(ties))
	for i, c := range ties {
		out[i] = c
	}
	return out
}

// TestJumpTie checks the tie of a channel's two paths' jumps: one tie per
// upper-funnel channel drifting with jumps (none for paid search, none for
// a smooth drift); its log density against the bivariate Student-t and the
// univariate ones of gonum's distmv and distuv, normalising constants
// included; the conditional law it gives one path's weight given the
// other's, t_{nu+1} with scale sqrt((nu + ua^2) / (nu + 1)); its gradient
// against central differences, alone at weights up to 6 and through the
// joint target; no allocation; clones that agree; and its refusals.
func TestJumpTie(t *testing.T) {
	sc := testScaled(70, 7)
	st, ties := jumpTieStages(t, sc, Options{})
	if len(ties) != 2 || ties[0].Column != "video" || ties[1].Column != "audio" {
		t.Fatalf("ties %+v, want video's and audio's", ties)
	}
	{
		o := Options{Drift: map[string]bool{"video": true, "search": true}}
		d, _ := Demand(sc, o)
		y, _ := Outcome(sc, o)
		if n := len(JumpTies(d, y, 0, 1)); n != 0 {
			t.Errorf("a smooth drift: %d ties", n)
		}
	}
	j, err := NewJoint(st, crossTerms(ties)...)
	if err != nil {
		t.Fatal(err)
	}
	plain, err := NewJoint(st)
	if err != nil {
		t.Fatal(err)
	}
	// the tie against the closed forms, at the joint's draws
	biv, ok := distmv.NewStudentsT([]float64{0, 0}, mat.NewSymDense(2, []float64{1, 0, 0, 1}), JumpDF, nil)
	if !ok {
		t.Fatal("bivariate t")
	}
	uni := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: JumpDF}
	rng := rand.New(rand.NewPCG(3, 3))
	n0 := len(st[0].Names())
	cl := j.Clone()
	for rep := 0; rep < 4; rep++ {
		x, v, lp := clonedPoint(t, rng, j, cl)
		vd, vy := v[:n0], v[n0:]
		want := 0.0
		for _, col := range []string{"video", "audio"} {
			cd, _ := st[0].Layout().Channel(col)
			cy, _ := st[1].Layout().Channel(col)
			for k := 0; k < cd.Drift.Basis.J(); k++ {
				ua, ud := vd[cd.Drift.Jump+1+k], vy[cy.Drift.Jump+1+k]
				want += biv.LogProb([]float64{ua, ud}) - uni.LogProb(ua) - uni.LogProb(ud)
			}
		}
		if got := lp - plain.LogProb(x); math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("tie %v, want %v", got, want)
		}
	}
	// alone, over a wide range of weights
	tie := ties[0]
	pts := j.pts
	n := tie.n
	alone := mcmctest.Func{N: 2 * n, F: func(grad, u []float64) float64 {
		copy(pts[0].Values[tie.a:], u[:n])
		copy(pts[1].Values[tie.d:], u[n:])
		for k := 0; k < n; k++ {
			pts[0].Grad[tie.a+k], pts[1].Grad[tie.d+k] = 0, 0
		}
		lp := tie.LogDensity(pts, grad != nil)
		if grad != nil {
			copy(grad[:n], pts[0].Grad[tie.a:tie.a+n])
			copy(grad[n:], pts[1].Grad[tie.d:tie.d+n])
		}
		return lp
	}}
	mcmctest.CheckGradient(t, alone, 1e-7, &mcmctest.GradSettings{Seed: 4, Points: 6, Radius: 6})
	// given ua, ud is t_{nu+1} with scale sqrt((nu + ua^2) / (nu + 1)):
	// the tie plus ud's own marginal differs from that law by a constant
	u := make([]float64, 2*n)
	for _, ua := range []float64{0, 1.5, 6} {
		cond := distuv.StudentsT{Mu: 0, Sigma: math.Sqrt((JumpDF + ua*ua) / (JumpDF + 1)), Nu: JumpDF + 1}
		at := func(ud float64) float64 {
			u[0], u[n] = ua, ud
			return alone.F(nil, u) + uni.LogProb(ud) - cond.LogProb(ud)
		}
		for _, ud := range []float64{-4, 0.5, 9} {
			if d := at(ud) - at(0); math.Abs(d) > 1e-12 {
				t.Errorf("ua %v: the tie's conditional of ud differs from t_%d at %v by %v", ua, JumpDF+1, ud, d)
			}
		}
	}
	// through the joint target: the stages' coordinates too
	mcmctest.CheckGradient(t, j, 1e-6, &mcmctest.GradSettings{Seed: 12, Points: 4, Radius: 1, Step: 1e-5})
	mcmctest.CheckNoAlloc(t, j, make([]float64, j.Dim()))

	// refusals: a weight with another prior, a stage without the channel's
	// jumps, the same stage twice
	st2, ties2 := jumpTieStages(t, sc, Options{})
	cd, _ := st2[1].Layout().Channel("video")
	st2[1].SetPrior(st2[1].Layout().Names()[cd.Drift.Jump+3], Prior{StudentT, 5, 1})
	if _, err := NewJoint(st2, crossTerms(ties2)...); err == nil || !strings.Contains(err.Error(), "one Student-t") {
		t.Errorf("a jump weight with another prior: error %v", err)
	}
	st3, _ := jumpTieStages(t, sc, Options{})
	st3[1].SetPrior(st3[1].Layout().Names()[cd.Drift.Jump+1], Prior{Normal, 0, 1})
	if _, err := NewJoint(st3, &JumpTie{Column: "video", Demand: 0, Outcome: 1}); err == nil || !strings.Contains(err.Error(), "needs a Student-t") {
		t.Errorf("a normal prior on a jump weight: error %v", err)
	}
	for _, bad := range []*JumpTie{{Column: "search", Demand: 0, Outcome: 1}, {Column: "video", Demand: 0, Outcome: 0}, {Column: "video", Demand: 0, Outcome: 2}} {
		if _, err := NewJoint(st, bad); err == nil {
			t.Errorf("tie %+v was accepted", *bad)
		}
	}
	// every user prior of one Student-t is kept: the tie takes its scale
	st4, ties4 := jumpTieStages(t, sc, Options{})
	for _, s := range st4 {
		for _, c := range s.Layout().Channels() {
			if c.Drift.Jump >= 0 {
				for k := 1; k <= c.Drift.Basis.J(); k++ {
					s.SetPrior(s.Layout().Names()[c.Drift.Jump+k], Prior{StudentT, 4, 2})
				}
			}
		}
	}
	j4, err := NewJoint(st4, crossTerms(ties4)...)
	if err != nil {
		t.Fatal(err)
	}
	if ties4[0].nu != 4 || ties4[0].s != 2 {
		t.Errorf("tie of Student-t(4, 0, 2) weights: nu %v, scale %v", ties4[0].nu, ties4[0].s)
	}
	mcmctest.CheckGradient(t, j4, 1e-6, &mcmctest.GradSettings{Seed: 13, Points: 2, Radius: 1, Step: 1e-5})
}

// TestJumpTieDraw checks the tie's prior draws against its law: each
// weight alone Student-t(nu), and (ua^2 + ud^2) / 2 F(2, nu), the law of a
// bivariate t's squared radius over its dimension, by Kolmogorov-Smirnov
// statistics under their 0.1% critical value 1.95 / sqrt(n) (Massey 1951,
// from memory); the same statistic of two independent t weights, the
// untied prior, is above it, so the check tells the two apart. Draw
// touches no other value.
func TestJumpTieDraw(t *testing.T) {
	sc := testScaled(70, 7)
	st, _ := jumpTieStages(t, sc, Options{})
	ties, err := JumpTieDraws(st[0], st[1])
	if err != nil || len(ties) != 2 {
		t.Fatalf("ties %v, %v", ties, err)
	}
	tie := ties[0]
	rng := rand.New(rand.NewPCG(8, 8))
	const n = 20000
	vd, vy := make([]float64, len(st[0].Names())), make([]float64, len(st[1].Names()))
	var ua, r2, indep []float64
	uni := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: JumpDF, Src: rng}
	for range n {
		tie.Draw(vd, vy, rng)
		k := rng.IntN(tie.n)
		a, d := vd[tie.a+k], vy[tie.d+k]
		ua, r2 = append(ua, a), append(r2, (a*a+d*d)/2)
		a, d = uni.Rand(), uni.Rand()
		indep = append(indep, (a*a+d*d)/2)
	}
	for i := range vd {
		if (i < tie.a || i >= tie.a+tie.n) && vd[i] != 0 {
			t.Fatalf("Draw wrote the demand stage's value %d", i)
		}
	}
	ks := func(x []float64, cdf func(float64) float64) float64 {
		s := slices.Clone(x)
		slices.Sort(s)
		d := 0.0
		for i, v := range s {
			c := cdf(v)
			d = math.Max(d, math.Max(math.Abs(float64(i+1)/n-c), math.Abs(c-float64(i)/n)))
		}
		return d
	}
	crit := 1.95 / math.Sqrt(n)
	f := distuv.F{D1: 2, D2: JumpDF}
	if d := ks(ua, distuv.StudentsT{Mu: 0, Sigma: 1, Nu: JumpDF}.CDF); d > crit {
		t.Errorf("a tied weight against t_%d: KS %.4f above %.4f", JumpDF, d, crit)
	}
	if d := ks(r2, f.CDF); d > crit {
		t.Errorf("the pair's squared radius over 2 against F(2, %d): KS %.4f above %.4f", JumpDF, d, crit)
	}
	t.Logf("KS: tied weight %.4f, tied radius %.4f, independent radius %.4f; critical %.4f", ks(ua, distuv.StudentsT{Mu: 0, Sigma: 1, Nu: JumpDF}.CDF), ks(r2, f.CDF), ks(indep, f.CDF), crit)
	if d := ks(indep, f.CDF); d <= crit {
		t.Errorf("independent weights pass as tied: KS %.4f, not above %.4f", d, crit)
	}
}

// TestPanelJumpTie checks the tie on region panels, whose drift every
// region shares: on a demand and an outcome panel of 4 regions with video
// and paid search drifting with jumps, one tie (video's), its gradient
// through the panel joint target against central differences, no
// allocation, a clone that agrees, and the tie's share of the log density:
// the joint with the tie less the joint without it is the bivariate t less
// the two marginals at the shared jump weights, read by the base layout.
func TestPanelJumpTie(t *testing.T) {
	o := testDrift
	o.DriftShape = DriftJumps
	panels, _ := panelLiftCase(t, 4, 7, o)
	ties := JumpTies(panels[0].Stages[0], panels[1].Stages[0], 0, 1)
	if len(ties) != 1 || ties[0].Column != "video" {
		t.Fatalf("ties %+v, want video's", ties)
	}
	j, err := NewPanelJoint(panels)
	if err != nil {
		t.Fatal(err)
	}
	plain, _ := NewPanelJoint(panels)
	if err := j.Tie(ties...); err != nil {
		t.Fatal(err)
	}
	r := mcmctest.CheckGradient(t, j, 1e-5, &mcmctest.GradSettings{Seed: 6, Points: 4, Radius: 1, Step: 1e-5})
	if r.Checked < 3 {
		t.Fatalf("only %d points had a finite density", r.Checked)
	}
	x := mcmctest.Ramp(j.Dim())
	mcmctest.CheckNoAlloc(t, j, x)
	cl := j.Clone()
	uni := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: JumpDF}
	biv, _ := distmv.NewStudentsT([]float64{0, 0}, mat.NewSymDense(2, []float64{1, 0, 0, 1}), JumpDF, nil)
	g := make([]float64, j.Dim())
	lp := j.LogProbGrad(g, x)
	if lc := cl.LogProbGrad(g, x); lc != lp {
		t.Errorf("clone: %v, want %v", lc, lp)
	}
	v := j.Constrain(nil, x)
	vd, vy := v[:j.Offset(1)], v[j.Offset(1):]
	cd, _ := panels[0].Stages[0].Layout().Channel("video")
	cy, _ := panels[1].Stages[0].Layout().Channel("video")
	want := 0.0
	for k := 0; k < cd.Drift.Basis.J(); k++ {
		ua, ud := vd[cd.Drift.Jump+1+k], vy[cy.Drift.Jump+1+k]
		want += biv.LogProb([]float64{ua, ud}) - uni.LogProb(ua) - uni.LogProb(ud)
	}
	if got := lp - plain.LogProb(x); math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
		t.Errorf("the tie's share %v, want %v", got, want)
	}
}
