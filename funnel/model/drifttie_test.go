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
func jumpTieStages(t *testing.T, sc *Scaled, o Options) ([]*Stage, []*DriftTie) {
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
	return []*Stage{d, y}, DriftTies(d, y, 0, 1)
}

func crossTerms(ties []*DriftTie) []CrossTerm {
	out := make([]CrossTerm, len(ties))
	for i, c := range ties {
		out[i] = c
	}
	return out
}

// TestDriftTie checks the tie of a channel's two paths' drifts: one tie per
// upper-funnel channel drifting in both stages (none for paid search, none
// when the stages' shapes differ), for a smooth drift and for one that can
// jump; its log density against the bivariate normal and Student-t and the
// univariate laws of gonum's distmv and distuv, normalising constants
// included; the conditional law it gives one path's weight given the
// other's (N(rho za, 1 - rho^2) for a smooth weight, t_{nu+1} at rho ua with
// scale sqrt((nu + ua^2) (1 - rho^2) / (nu + 1)) for a jump weight); its
// gradient against central differences, alone at weights up to 6 and
// through the joint target; no allocation; clones that agree; and its
// refusals.
func TestDriftTie(t *testing.T) {
	sc := testScaled(70, 7)
	st, ties := jumpTieStages(t, sc, Options{})
	if len(ties) != 2 || ties[0].Column != "video" || ties[1].Column != "audio" {
		t.Fatalf("ties %+v, want video's and audio's", ties)
	}
	{
		o := Options{Drift: map[string]bool{"video": true, "search": true}}
		d, _ := Demand(sc, o)
		y, _ := Outcome(sc, o)
		sm := DriftTies(d, y, 0, 1)
		if len(sm) != 1 || sm[0].Column != "video" {
			t.Fatalf("a smooth drift of video and paid search: ties %+v, want video's", sm)
		}
		js := o
		js.DriftShape = DriftJumps
		yj, _ := Outcome(sc, js)
		if n := len(DriftTies(d, yj, 0, 1)); n != 0 {
			t.Errorf("a smooth drift in one stage and jumps in the other: %d ties", n)
		}
		j, err := NewJoint([]*Stage{d, y}, crossTerms(sm)...)
		if err != nil {
			t.Fatal(err)
		}
		plain, _ := NewJoint([]*Stage{d, y})
		if sm[0].n != 0 || sm[0].m != d.Layout().Channels()[0].Drift.Basis.M {
			t.Errorf("smooth tie: %d jump weights, %d smooth ones", sm[0].n, sm[0].m)
		}
		rng := rand.New(rand.NewPCG(5, 5))
		n0 := len(d.Names())
		cd, _ := d.Layout().Channel("video")
		cy, _ := y.Layout().Channel("video")
		for rep := 0; rep < 3; rep++ {
			x, v, lp := clonedPoint(t, rng, j, j.Clone())
			want := tieWant(t, v[:n0], v[n0:], cd, cy)
			if got := lp - plain.LogProb(x); math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
				t.Errorf("smooth tie %v, want %v", got, want)
			}
		}
		// given za, the tie plus zd's own normal is N(rho za, 1 - rho^2)
		// up to a constant
		tie, pts := sm[0], j.pts
		r := DriftTieCorr
		cond := func(za float64) distuv.Normal { return distuv.Normal{Mu: r * za, Sigma: math.Sqrt(1 - r*r)} }
		for _, za := range []float64{-2, 0, 1.3} {
			at := func(zd float64) float64 {
				pts[0].Values[tie.za], pts[1].Values[tie.zd] = za, zd
				return tie.LogDensity(pts, false) + distuv.UnitNormal.LogProb(zd) - cond(za).LogProb(zd)
			}
			for _, zd := range []float64{-3, 0.4, 2.5} {
				if dd := at(zd) - at(0); math.Abs(dd) > 1e-12 {
					t.Errorf("za %v: the tie's conditional of zd differs from N(rho za, 1 - rho^2) at %v by %v", za, zd, dd)
				}
			}
		}
		mcmctest.CheckGradient(t, j, 1e-6, &mcmctest.GradSettings{Seed: 14, Points: 4, Radius: 1, Step: 1e-5})
		mcmctest.CheckNoAlloc(t, j, make([]float64, j.Dim()))
		// a smooth weight with another prior is refused
		y.SetPrior(y.Layout().Names()[cy.Drift.Z+2], Prior{Normal, 0, 2})
		if _, err := NewJoint([]*Stage{d, y}, crossTerms(DriftTies(d, y, 0, 1))...); err == nil || !strings.Contains(err.Error(), "on every smooth weight") {
			t.Errorf("a smooth weight with another prior: error %v", err)
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
			want += tieWant(t, vd, vy, cd, cy)
		}
		if got := lp - plain.LogProb(x); math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("tie %v, want %v", got, want)
		}
	}
	// alone, over a wide range of weights
	tie := ties[0]
	pts := j.pts
	n, m := tie.n, tie.m
	// u: the jump weights of both stages, then the smooth weights of both
	alone := mcmctest.Func{N: 2*n + 2*m, F: func(grad, u []float64) float64 {
		copy(pts[0].Values[tie.a:], u[:n])
		copy(pts[1].Values[tie.d:], u[n:2*n])
		copy(pts[0].Values[tie.za:], u[2*n:2*n+m])
		copy(pts[1].Values[tie.zd:], u[2*n+m:])
		for k := 0; k < n; k++ {
			pts[0].Grad[tie.a+k], pts[1].Grad[tie.d+k] = 0, 0
		}
		for k := 0; k < m; k++ {
			pts[0].Grad[tie.za+k], pts[1].Grad[tie.zd+k] = 0, 0
		}
		lp := tie.LogDensity(pts, grad != nil)
		if grad != nil {
			copy(grad[:n], pts[0].Grad[tie.a:tie.a+n])
			copy(grad[n:2*n], pts[1].Grad[tie.d:tie.d+n])
			copy(grad[2*n:2*n+m], pts[0].Grad[tie.za:tie.za+m])
			copy(grad[2*n+m:], pts[1].Grad[tie.zd:tie.zd+m])
		}
		return lp
	}}
	mcmctest.CheckGradient(t, alone, 1e-7, &mcmctest.GradSettings{Seed: 4, Points: 6, Radius: 6})
	// given ua, ud is t_{nu+1} at rho ua with scale
	// sqrt((nu + ua^2) (1 - rho^2) / (nu + 1)): the tie plus ud's own
	// marginal differs from that law by a constant
	u := make([]float64, 2*n+2*m)
	rho := DriftTieCorr
	for _, ua := range []float64{0, 1.5, 6} {
		cond := distuv.StudentsT{Mu: rho * ua, Sigma: math.Sqrt((JumpDF + ua*ua) * (1 - rho*rho) / (JumpDF + 1)), Nu: JumpDF + 1}
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
	if _, err := NewJoint(st3, &DriftTie{Column: "video", Demand: 0, Outcome: 1}); err == nil || !strings.Contains(err.Error(), "needs a Student-t") {
		t.Errorf("a normal prior on a jump weight: error %v", err)
	}
	for _, bad := range []*DriftTie{{Column: "search", Demand: 0, Outcome: 1}, {Column: "video", Demand: 0, Outcome: 0}, {Column: "video", Demand: 0, Outcome: 2}} {
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

// TestDriftTieDraw checks the tie's prior draws against its law: each
// smooth weight standard normal and its pair N(rho za, 1 - rho^2) given it;
// each jump weight alone Student-t(nu), and
// (ua^2 - 2 rho ua ud + ud^2) / (2 (1 - rho^2)) F(2, nu), the law of a
// bivariate t's quadratic form over its dimension, by Kolmogorov-Smirnov
// statistics under their 0.1% critical value 1.95 / sqrt(n) (Massey 1951,
// from memory); the same statistic of two independent t weights, the
// untied prior, is above it, so the check tells the two apart. Draw
// touches no other value.
func TestDriftTieDraw(t *testing.T) {
	sc := testScaled(70, 7)
	st, _ := jumpTieStages(t, sc, Options{})
	ties, err := DriftTieDraws(st[0], st[1])
	if err != nil || len(ties) != 2 {
		t.Fatalf("ties %v, %v", ties, err)
	}
	tie := ties[0]
	rng := rand.New(rand.NewPCG(8, 8))
	const n = 20000
	vd, vy := make([]float64, len(st[0].Names())), make([]float64, len(st[1].Names()))
	var ua, r2, indep, za, zres []float64
	var szz float64
	rho := DriftTieCorr
	uni := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: JumpDF, Src: rng}
	for range n {
		tie.Draw(vd, vy, rng)
		j := rng.IntN(tie.m)
		a0, d0 := vd[tie.za+j], vy[tie.zd+j]
		za, zres = append(za, a0), append(zres, (d0-rho*a0)/math.Sqrt(1-rho*rho))
		szz += a0 * d0
		k := rng.IntN(tie.n)
		a, d := vd[tie.a+k], vy[tie.d+k]
		ua, r2 = append(ua, a), append(r2, (a*a-2*rho*a*d+d*d)/(2*(1-rho*rho)))
		a, d = uni.Rand(), uni.Rand()
		indep = append(indep, (a*a-2*rho*a*d+d*d)/(2*(1-rho*rho)))
	}
	for i := range vd {
		if (i < tie.a || i >= tie.a+tie.n) && (i < tie.za || i >= tie.za+tie.m) && vd[i] != 0 {
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
		t.Errorf("the pair's quadratic form over 2 against F(2, %d): KS %.4f above %.4f", JumpDF, d, crit)
	}
	t.Logf("KS: tied weight %.4f, tied radius %.4f, independent radius %.4f; critical %.4f", ks(ua, distuv.StudentsT{Mu: 0, Sigma: 1, Nu: JumpDF}.CDF), ks(r2, f.CDF), ks(indep, f.CDF), crit)
	if d := ks(indep, f.CDF); d <= crit {
		t.Errorf("independent weights pass as tied: KS %.4f, not above %.4f", d, crit)
	}
	// the smooth weights: za standard normal, and zd less rho za over
	// sqrt(1 - rho^2) standard normal (independent zd would give it the
	// variance (1 + rho^2) / (1 - rho^2)); their mean product rho within
	// four of its standard errors, sqrt(1 + rho^2) / sqrt(n)
	norm := distuv.UnitNormal.CDF
	if d := ks(za, norm); d > crit {
		t.Errorf("a smooth weight against N(0, 1): KS %.4f above %.4f", d, crit)
	}
	if d := ks(zres, norm); d > crit {
		t.Errorf("a smooth weight given its pair's against N(rho za, 1 - rho^2): KS %.4f above %.4f", d, crit)
	}
	if c := szz / n; math.Abs(c-rho) > 4*math.Sqrt((1+rho*rho)/n) {
		t.Errorf("the smooth weights' mean product %.4f, want %v", c, rho)
	}
}

// TestPanelDriftTie checks the tie on region panels, whose drift every
// region shares: on a demand and an outcome panel of 4 regions with video
// and paid search drifting with jumps, one tie (video's), its gradient
// through the panel joint target against central differences, no
// allocation, a clone that agrees, and the tie's share of the log density:
// the joint with the tie less the joint without it is the closed forms
// (tieWant) at the shared smooth and jump weights, read by the base layout.
func TestPanelDriftTie(t *testing.T) {
	o := testDrift
	o.DriftShape = DriftJumps
	panels, _ := panelLiftCase(t, 4, 7, o)
	ties := DriftTies(panels[0].Stages[0], panels[1].Stages[0], 0, 1)
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
	g := make([]float64, j.Dim())
	lp := j.LogProbGrad(g, x)
	if lc := cl.LogProbGrad(g, x); lc != lp {
		t.Errorf("clone: %v, want %v", lc, lp)
	}
	v := j.Constrain(nil, x)
	vd, vy := v[:j.Offset(1)], v[j.Offset(1):]
	cd, _ := panels[0].Stages[0].Layout().Channel("video")
	cy, _ := panels[1].Stages[0].Layout().Channel("video")
	want := tieWant(t, vd, vy, cd, cy)
	if got := lp - plain.LogProb(x); math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
		t.Errorf("the tie's share %v, want %v", got, want)
	}
}

// tieWant is the drift tie of one channel by the closed forms of gonum's
// distmv and distuv: each frequency's smooth weights' bivariate normal with
// correlation DriftTieCorr less two standard normals, and each candidate
// week's jump weights' bivariate Student-t less two univariate ones; vd
// and vy are the two stages' values, cd and cy the channel's slots.
func tieWant(t *testing.T, vd, vy []float64, cd, cy ChannelSlots) float64 {
	t.Helper()
	r := DriftTieCorr
	bvn, ok := distmv.NewNormal([]float64{0, 0}, mat.NewSymDense(2, []float64{1, r, r, 1}), nil)
	if !ok {
		t.Fatal("bivariate normal")
	}
	un := distuv.UnitNormal
	want := 0.0
	for k := 0; k < cd.Drift.Basis.M; k++ {
		za, zd := vd[cd.Drift.Z+k], vy[cy.Drift.Z+k]
		want += bvn.LogProb([]float64{za, zd}) - un.LogProb(za) - un.LogProb(zd)
	}
	if cd.Drift.Jump < 0 {
		return want
	}
	biv, ok := distmv.NewStudentsT([]float64{0, 0}, mat.NewSymDense(2, []float64{1, r, r, 1}), JumpDF, nil)
	if !ok {
		t.Fatal("bivariate t")
	}
	uni := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: JumpDF}
	for k := 0; k < cd.Drift.Basis.J(); k++ {
		ua, ud := vd[cd.Drift.Jump+1+k], vy[cy.Drift.Jump+1+k]
		want += biv.LogProb([]float64{ua, ud}) - uni.LogProb(ua) - uni.LogProb(ud)
	}
	return want
}
