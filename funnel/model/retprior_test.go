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

// retScaled is testScaled with the raw spend and the outcome's scale a
// return needs.
func retScaled(T int, seed uint64) *Scaled {
	sc := testScaled(T, seed)
	sc.UpperScale = []float64{2000, 500}
	sc.RawUpper = make([][]float64, len(sc.Upper))
	for c, x := range sc.Upper {
		sc.RawUpper[c] = make([]float64, len(x))
		for t, v := range x {
			sc.RawUpper[c][t] = v * sc.UpperScale[c]
		}
	}
	sc.OutcomeScale, sc.QueriesScale = 300, 5000
	return sc
}

// retWindow is weeks 20-29 of retScaled's data (2023-05-22 to 2023-07-24).
const retWindow = "2023-05-22:2023-07-30"

func newRet(t *testing.T, sc *Scaled, path ReturnPath, m ReturnMeasure) *ReturnPrior {
	t.Helper()
	per, stated := 1000.0, Prior{LogNormal90, 0.5, 3}
	if m == Incremental {
		per, stated = 1, Prior{LogNormal, 400, 300}
	}
	r, _, err := NewReturnPrior(sc, "video", path, m, retWindow, per, stated)
	if err != nil {
		t.Fatal(err)
	}
	if r.Window.From != 20 || r.Window.To != 29 {
		t.Fatalf("window %s resolved to weeks %d-%d, want 20-29", retWindow, r.Window.From, r.Window.To)
	}
	return r
}

// wantReturn is the path effects u (via search) and v (direct) of the
// window's spend in the user's units at the constrained draws, from
// Stage.Response, the drift's multiplier and gamma read by meaning, the
// sum running to the data's end: what ReturnPrior computes by its own
// passes, and what mediation.Split computes by the forward simulator.
func wantReturn(st []*Stage, v [][]float64, r *ReturnPrior) (u, w float64) {
	var L [2]float64
	for k, s := range st {
		j := s.ChannelIndex(r.Column)
		x := s.Channels[j].X
		cf := slices.Clone(x)
		for t := r.Window.From; t <= r.Window.To; t++ {
			cf[t] = 0
		}
		h, coef := s.Response(nil, j, v[k], x)
		hcf, _ := s.Response(nil, j, v[k], cf)
		m := s.Layout().View(v[k]).Multiplier(make([]float64, len(x)), j)
		for t := r.Window.From; t < len(x); t++ {
			L[k] += coef * m[t] * (h[t] - hcf[t])
		}
	}
	L[0] *= st[1].Layout().View(v[1]).Gamma()
	switch r.Path {
	case ReturnViaSearch:
		L[1] = 0
	case ReturnDirect:
		L[0] = 0
	}
	return r.Scale * L[0], r.Scale * L[1]
}

var retCases = []Options{{}, {Plain: true}, {Linear: map[string]bool{"video": true}},
	{Drift: map[string]bool{"video": true}},
	{Drift: map[string]bool{"video": true}, Linear: map[string]bool{"video": true}, Baseline: BaselineSmooth},
	{Drift: map[string]bool{"video": true}, DriftShape: DriftJumps}}

// TestReturnPriorTerm checks the return prior's term for each path and
// measure, with and without drift, linear or not: its gradient through the
// joint target against finite differences (the coefficients, gamma, the
// transforms and the drifts, in the sampling coordinates), no allocation,
// a clone that agrees, the covered coefficients' Conditional family, and
// its log density against the change of variables written out from
// wantReturn.
func TestReturnPriorTerm(t *testing.T) {
	sc := retScaled(70, 7)
	rng := rand.New(rand.NewPCG(3, 3))
	for _, o := range retCases {
		for _, path := range []ReturnPath{ReturnTotal, ReturnViaSearch, ReturnDirect} {
			for _, m := range []ReturnMeasure{ReturnOnSpend, Incremental} {
				r := newRet(t, sc, path, m)
				o.Returns = []*ReturnPrior{r}
				d, _ := Demand(sc, o)
				y, _ := Outcome(sc, o)
				n, _ := Naive(sc, o)
				st := []*Stage{d, y}
				fam := func(s *Stage) Family { return s.Channels[s.ChannelIndex("video")].Params[0].Prior.Family }
				if got, want := fam(d) == Conditional, path != ReturnDirect; got != want {
					t.Errorf("%s: alpha[video] conditional %v, want %v", r.Name(), got, want)
				}
				if got, want := fam(y) == Conditional, path != ReturnViaSearch; got != want {
					t.Errorf("%s: delta[video] conditional %v, want %v", r.Name(), got, want)
				}
				if fam(n) == Conditional {
					t.Errorf("%s: the naive stage's delta[video] is conditional", r.Name())
				}
				term := r.Term(0, 1)
				j, err := NewJoint(st, term)
				if err != nil {
					t.Fatal(err)
				}
				mcmctest.CheckGradient(t, j, 1e-6, &mcmctest.GradSettings{Seed: 12, Points: 4, Radius: 1, Step: 1e-5})
				mcmctest.CheckNoAlloc(t, j, make([]float64, j.Dim()))
				plain, _ := NewJoint(st)
				cl := j.Clone()
				n0 := len(d.Names())
				for rep := 0; rep < 3; rep++ {
					x, v, lp := clonedPoint(t, rng, j, cl)
					vd, vy := v[:n0], v[n0:]
					u, w := wantReturn(st, [][]float64{vd, vy}, r)
					jd, jy := d.ChannelIndex("video"), y.ChannelIndex("video")
					_, alpha := d.Response(nil, jd, vd, d.Channels[jd].X)
					_, delta := y.Response(nil, jy, vy, y.Channels[jy].X)
					R := u + w
					z := (math.Log(R) - r.Mu) / r.Sigma
					// log p(coefficients | rest) + log sigma + log sqrt(2 pi)
					var want float64
					switch path {
					case ReturnViaSearch:
						want = -0.5*z*z - math.Log(alpha)
					case ReturnDirect:
						want = -0.5*z*z - math.Log(delta)
					default:
						want = -0.5*z*z + math.Log(u*w/(R*R)) - math.Log(alpha*delta)
					}
					if got := lp - plain.LogProb(x); math.Abs(got-want) > 1e-8*max(1, math.Abs(want)) {
						t.Errorf("%v %s: term %v, want %v (R %v)", o, r.Name(), got, want, R)
					}
					if got := term.Value(vd, vy); math.Abs(got-R) > 1e-10*R {
						t.Errorf("%v %s: Value %v, want %v", o, r.Name(), got, R)
					}
				}
			}
		}
	}
}

// TestReturnPriorDraw checks Draw: a drawn pair's return is the drawn R,
// the path it covers alone, and the share uniform for the total.
func TestReturnPriorDraw(t *testing.T) {
	sc := retScaled(70, 7)
	rng := rand.New(rand.NewPCG(5, 5))
	for _, path := range []ReturnPath{ReturnTotal, ReturnViaSearch, ReturnDirect} {
		r := newRet(t, sc, path, ReturnOnSpend)
		o := Options{Drift: map[string]bool{"video": true}, Returns: []*ReturnPrior{r}}
		d, _ := Demand(sc, o)
		y, _ := Outcome(sc, o)
		rs, err := ReturnDraws(d, y)
		if err != nil || len(rs) != 1 {
			t.Fatalf("ReturnDraws: %v, %d priors", err, len(rs))
		}
		const n = 4000
		var below [2]int
		shareLow := 0
		for range n {
			vd, err := d.PriorDraw(nil, rng)
			if err != nil {
				t.Fatal(err)
			}
			vy, _ := y.PriorDraw(nil, rng)
			rs[0].Draw(vd, vy, rng)
			for _, v := range append(slices.Clone(vd), vy...) {
				if math.IsNaN(v) {
					t.Fatalf("%s: a coefficient left undrawn", r.Name())
				}
			}
			u, w := wantReturn([]*Stage{d, y}, [][]float64{vd, vy}, r)
			if path == ReturnViaSearch && w != 0 || path == ReturnDirect && u != 0 {
				t.Fatalf("%s: the other path moved", r.Name())
			}
			R := u + w
			for k, p := range []float64{0.05, 0.5} {
				if R < r.Quantile(p) {
					below[k]++
				}
			}
			if u/R < 0.25 {
				shareLow++
			}
		}
		// binomial sd at n = 4000: 0.0034 for p = 0.05, 0.0079 for 0.5
		for k, p := range []float64{0.05, 0.5} {
			if f := float64(below[k]) / n; math.Abs(f-p) > 4*math.Sqrt(p*(1-p)/n) {
				t.Errorf("%s: %.4f of draws below the stated %g quantile", r.Name(), f, p)
			}
		}
		if f := float64(shareLow) / n; path == ReturnTotal && math.Abs(f-0.25) > 4*math.Sqrt(0.25*0.75/n) {
			t.Errorf("%s: mediated share under 0.25 in %.4f of draws, want 0.25 (uniform)", r.Name(), f)
		}
	}
}

// TestReturnPriorReproduced samples the joint target with a return prior
// and no data (every week masked out of the likelihood) by NUTS: the
// return it implies must follow the stated lognormal, its 5%, 25%, 50%,
// 75% and 95% quantiles within Monte Carlo error (the share of draws below
// each stated quantile within 4 sd of its level, the sd from the quantile's
// effective sample size, Vehtari et al. 2021), and gamma must keep its
// own prior, HalfNormal(0.5) (the term is a normalised conditional density,
// so the other parameters' marginal prior is unchanged). With -short, the
// total path only.
func TestReturnPriorReproduced(t *testing.T) {
	sc := retScaled(70, 7)
	sc.Mask = make([]bool, sc.T)
	for i := range sc.Mask {
		sc.Mask[i] = true
	}
	paths := []ReturnPath{ReturnTotal, ReturnViaSearch}
	if testing.Short() {
		paths = paths[:1]
	}
	for _, path := range paths {
		r := newRet(t, sc, path, ReturnOnSpend)
		o := Options{Returns: []*ReturnPrior{r}}
		d, _ := Demand(sc, o)
		y, _ := Outcome(sc, o)
		term := r.Term(0, 1)
		j, err := NewJoint([]*Stage{d, y}, term)
		if err != nil {
			t.Fatal(err)
		}
		fit, err := mcmc.Run(context.Background(), j, &mcmc.Settings{Chains: 4, Warmup: 500, Draws: 1000, Seed: 21, TargetAccept: 0.95})
		if err != nil {
			t.Fatal(err)
		}
		n0 := len(d.Names())
		gi := n0 + y.Layout().GammaSlot()
		var logR, gam [][]float64
		val := term.Clone().(*ReturnPrior)
		for _, c := range fit.Chains {
			rows, _ := c.Draws.Dims()
			var lr, g []float64
			for i := range rows {
				row := c.Draws.RawRowView(i)
				lr = append(lr, math.Log(val.Value(row[:n0], row[n0:])))
				g = append(g, row[gi])
			}
			logR, gam = append(logR, lr), append(gam, g)
		}
		for _, p := range []float64{0.05, 0.25, 0.5, 0.75, 0.95} {
			q := math.Log(r.Quantile(p))
			ess := mcmc.ESSQuantile(logR, p)
			f := fracBelow(logR, q)
			sd := math.Sqrt(p * (1 - p) / ess)
			t.Logf("%s: %.3f of draws below the stated %g quantile %.4g (MC sd %.3f, ESS %.0f)", r.Name(), f, p, r.Quantile(p), sd, ess)
			if math.Abs(f-p) > 4*sd {
				t.Errorf("%s: %.3f of draws below the stated %g quantile, want %g ± %.3f", r.Name(), f, p, p, 4*sd)
			}
			// gamma ~ HalfNormal(0.5): its p quantile is 0.5 z((1+p)/2)
			qg := 0.5 * math.Sqrt2 * math.Erfinv(p)
			essg := mcmc.ESSQuantile(gam, p)
			if f := fracBelow(gam, qg); math.Abs(f-p) > 4*math.Sqrt(p*(1-p)/essg) {
				t.Errorf("%s: gamma below its prior's %g quantile in %.3f of draws (ESS %.0f)", r.Name(), p, f, essg)
			}
		}
	}
}

func fracBelow(x [][]float64, q float64) float64 {
	n, k := 0, 0
	for _, c := range x {
		for _, v := range c {
			n++
			if v < q {
				k++
			}
		}
	}
	return float64(k) / float64(n)
}

// TestNewReturnPrior checks the lognormal a stated prior gives and the
// errors, with the column at fault.
func TestNewReturnPrior(t *testing.T) {
	sc := retScaled(70, 7)
	r, _, err := NewReturnPrior(sc, "video", ReturnTotal, ReturnOnSpend, "all", 1000, Prior{LogNormal90, 0.5, 3})
	if err != nil {
		t.Fatal(err)
	}
	// the 5% and 95% quantiles are the stated ones, from mu and sigma too
	if r.Quantile(0.05) != 0.5 || r.Quantile(0.95) != 3 {
		t.Errorf("lognormal90(0.5, 3): quantiles %v %v", r.Quantile(0.05), r.Quantile(0.95))
	}
	for _, c := range []struct{ p, want float64 }{{0.05, 0.5}, {0.95, 3}} {
		if q := math.Exp(r.Mu + r.Sigma*math.Sqrt2*math.Erfinv(2*c.p-1)); math.Abs(q-c.want) > 1e-12 {
			t.Errorf("lognormal90(0.5, 3): mu, sigma give the %g quantile %v", c.p, q)
		}
	}
	spend := 0.0
	for _, v := range sc.RawUpper[0] {
		spend += v
	}
	if want := sc.OutcomeScale * 1000 / spend; math.Abs(r.Scale-want) > 1e-12*want {
		t.Errorf("scale %v, want %v", r.Scale, want)
	}
	r, _, _ = NewReturnPrior(sc, "video", ReturnTotal, Incremental, "all", 1, Prior{LogNormal, 400, 300})
	if math.Abs(r.Mean()-400) > 1e-9 || math.Abs(r.Scale-sc.OutcomeScale) > 0 {
		t.Errorf("lognormal(400, 300): mean %v, scale %v", r.Mean(), r.Scale)
	}
	// sd: sqrt(exp(s^2) - 1) mean
	if sd := math.Sqrt(math.Expm1(r.Sigma*r.Sigma)) * r.Mean(); math.Abs(sd-300) > 1e-9 {
		t.Errorf("lognormal(400, 300): sd %v", sd)
	}
	zero := retScaled(70, 7)
	for w := 20; w <= 29; w++ {
		zero.RawUpper[0][w] = 0
	}
	for _, c := range []struct {
		sc    *Scaled
		col   string
		win   string
		per   float64
		p     Prior
		which int
		want  string
	}{
		{sc, "search", "all", 1, Prior{LogNormal90, 1, 2}, 1, "not an upper-funnel column"},
		{sc, "video", "all", 1, Prior{Normal, 1, 2}, 2, "lognormal90"},
		{sc, "video", "all", 1, Prior{LogNormal90, 2, 1}, 4, "p1 < p2"},
		{sc, "video", "all", 1, Prior{LogNormal90, -1, 1}, 3, "numbers > 0"},
		{sc, "video", "2030Q1", 1, Prior{LogNormal90, 1, 2}, 5, "2030Q1"},
		{zero, "video", retWindow, 1, Prior{LogNormal90, 1, 2}, 5, "no spend"},
		{sc, "video", "all", 0, Prior{LogNormal90, 1, 2}, 6, "per"},
	} {
		_, which, err := NewReturnPrior(c.sc, c.col, ReturnTotal, ReturnOnSpend, c.win, c.per, c.p)
		if err == nil || which != c.which || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s %s %v: error %v at %d, want %q at %d", c.col, c.win, c.p, err, which, c.want, c.which)
		}
	}
}

// TestReturnPriorWithLift ties the stages by a lift test and a return
// prior at once: the joint density is the stages' plus both terms, and its
// gradient passes the finite-difference check.
func TestReturnPriorWithLift(t *testing.T) {
	sc := retScaled(70, 8)
	r := newRet(t, sc, ReturnTotal, ReturnOnSpend)
	st, lift := liftStages(sc, Options{Returns: []*ReturnPrior{r}}, LiftOutcome)
	term := r.Term(0, 1)
	j, err := NewJoint(st, lift, term)
	if err != nil {
		t.Fatal(err)
	}
	mcmctest.CheckGradient(t, j, 1e-6, &mcmctest.GradSettings{Seed: 13, Points: 4, Radius: 1, Step: 1e-5})
	plain, _ := NewJoint(st)
	onlyLift, _ := NewJoint(st, lift.Clone())
	onlyRet, _ := NewJoint(st, r.Term(0, 1))
	rng := rand.New(rand.NewPCG(8, 8))
	x := make([]float64, j.Dim())
	for i := range x {
		x[i] = rng.Float64()*2 - 1
	}
	g := make([]float64, j.Dim())
	both, p := j.LogProbGrad(g, x), plain.LogProbGrad(g, x)
	if want := (onlyLift.LogProbGrad(g, x) - p) + (onlyRet.LogProbGrad(g, x) - p); math.Abs(both-p-want) > 1e-9*max(1, math.Abs(want)) {
		t.Errorf("lift and return prior together add %v, apart %v", both-p, want)
	}
}

// BenchmarkJointReturnPrior is the gradient of the joint demand and
// outcome target on 156 weeks with a return prior on video's total over
// one quarter ("with") and without ("without"): the return prior's share
// of a sampler step. Measured on 2026-12-02 (load average about 19 on 2
// cores; whole-process CPU of 4,000 gradients, 5 runs each in turn):
// with/without median 1.44 (1.09-1.54). The term runs the actual and the
// counterfactual response of both paths from the window to the data's end;
// the stages already hold the actual one, which it recomputes.
func BenchmarkJointReturnPrior(b *testing.B) {
	sc := retScaled(156, 3)
	for _, with := range []bool{false, true} {
		name := "without"
		var cross []CrossTerm
		o := Options{}
		if with {
			r, _, err := NewReturnPrior(sc, "video", ReturnTotal, ReturnOnSpend, "2024Q3", 1000, Prior{LogNormal90, 0.5, 3})
			if err != nil {
				b.Fatal(err)
			}
			name, o.Returns, cross = "with", []*ReturnPrior{r}, []CrossTerm{r.Term(0, 1)}
		}
		d, _ := Demand(sc, o)
		y, _ := Outcome(sc, o)
		j, err := NewJoint([]*Stage{d, y}, cross...)
		if err != nil {
			b.Fatal(err)
		}
		x := mcmctest.Ramp(j.Dim())
		g := make([]float64, j.Dim())
		b.Run(name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				j.LogProbGrad(g, x)
			}
		})
	}
}
