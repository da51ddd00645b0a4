package model

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/mcmc/mcmctest"
)

// testPanel returns a panel of G regions of T weeks built by build (Demand,
// Outcome or Naive), each region's data from testScaled with its own seed;
// with dark, region 1 never runs the first upper channel and region 2 runs
// it and paid search in the same weeks and proportions as region 0 (a
// national buy: the same scaled series, whose transforms the target
// computes once).
func testPanel(t *testing.T, G, T int, build func(*Scaled, Options) (*Stage, error), dark bool) *Panel {
	t.Helper()
	return testPanelOpts(t, G, T, build, dark, Options{})
}

// testDrift drifts video (saturating) and, linear, paid search: a drifting
// channel of each kind, and in testPanel's dark region one that never runs.
var testDrift = Options{Drift: map[string]bool{"video": true, "search": true}, Linear: map[string]bool{"search": true}}

// testBaseline is a baseline that moves (one f(t) for every region).
var testBaseline = Options{Baseline: BaselineSmooth}

// testPanelOpts is testPanel with each region's stage built with options o.
func testPanelOpts(t *testing.T, G, T int, build func(*Scaled, Options) (*Stage, error), dark bool, o Options) *Panel {
	t.Helper()
	return testPanelMask(t, G, T, build, dark, o, nil)
}

// testPanelMask is testPanelOpts with the weeks mask marks held out of the
// likelihood in every region (nil: none).
func testPanelMask(t *testing.T, G, T int, build func(*Scaled, Options) (*Stage, error), dark bool, o Options, mask []bool) *Panel {
	t.Helper()
	p := &Panel{TauMu: PriorTauMu, TauCoef: PriorTauCoef}
	var first *Scaled
	for g := 0; g < G; g++ {
		sc := testScaled(T, uint64(20+g))
		sc.Mask = mask
		if g == 0 {
			first = sc
		}
		if dark && g == 1 {
			for i := range sc.Upper[0] {
				sc.Upper[0][i] = 0
			}
		}
		if dark && g == 2 {
			copy(sc.Upper[0], first.Upper[0])
			copy(sc.Search[0], first.Search[0])
		}
		st, err := build(sc, o)
		if err != nil {
			t.Fatal(err)
		}
		p.Stages = append(p.Stages, st)
		p.Regions = append(p.Regions, fmt.Sprintf("r%d", g+1))
	}
	p.Name = p.Stages[0].Name
	return p
}

// randomCoords returns weights drawn uniformly in [0, 1], with some at the
// ends.
func randomCoords(p *Panel, seed uint64) *Coords {
	rng := rand.New(rand.NewPCG(seed, 3))
	c := p.Uniform(0)
	pick := func() float64 {
		switch rng.IntN(4) {
		case 0:
			return 0
		case 1:
			return 1
		}
		return rng.Float64()
	}
	for g := range c.Mu {
		c.Mu[g] = pick()
	}
	for k := range c.Coef {
		se, est := make([]float64, len(c.Coef[k])), make([]float64, len(c.Coef[k]))
		for g := range c.Coef[k] {
			c.Coef[k][g] = pick()
			// least-squares estimates for gamma's conditional coordinates,
			// one region without any
			se[g], est[g] = 0.05+0.5*rng.Float64(), -2*rng.Float64()
			if g == 1 {
				est[g] = math.NaN()
			}
		}
		c.SECoef, c.CoefLog = append(c.SECoef, se), append(c.CoefLog, est)
	}
	// the residual sd behind a moving baseline's coordinates (baseCoord):
	// large enough that its weights' data and prior precisions are
	// comparable at the tests' points, so both ends of the interpolation
	// count
	c.SigmaEst = 0.5 + rng.Float64()
	return c
}

type panelBuild struct {
	name  string
	build func(*Scaled, Options) (*Stage, error)
}

var panelBuilds = []panelBuild{{"demand", Demand}, {"outcome", Outcome}, {"naive", Naive}}

// TestPanelGradient checks the whole panel density's gradient against
// central finite differences, for each stage, with mixed coordinates, a
// region that never runs a channel, one region (pooled), and drifting
// channels (a saturating and a linear one, one multiplier for every
// region), a baseline that moves (one f(t) for every region; with weeks
// held out, where f's mean over every week is not 0), and that an
// evaluation allocates nothing.
func TestPanelGradient(t *testing.T) {
	for _, b := range panelBuilds {
		for _, c := range []struct {
			G     int
			cond  bool
			drift bool
			jumps bool // the drift that can jump (jump.go)
			base  bool // the moving baseline
			mask  bool // weeks 22-26 held out
			gamma bool // gamma in its conditional coordinates (with cond)
			coef  bool // the channels' coefficients in theirs
		}{{1, false, false, false, false, false, false, false}, {4, false, false, false, false, false, false, false}, {4, true, false, false, false, false, false, false},
			{1, false, true, false, false, false, false, false}, {4, true, true, false, false, false, false, false}, {4, false, true, false, false, false, false, false}, {4, true, true, true, false, false, false, false},
			{1, false, false, false, true, false, false, false}, {4, true, false, false, true, false, false, false}, {4, false, false, false, true, true, false, false}, {4, true, true, false, true, true, false, false},
			{4, true, false, false, false, false, true, false}, {4, true, true, false, false, false, true, false}, {4, true, true, false, true, true, true, false},
			{4, false, false, false, false, false, false, true}, {4, true, false, false, false, false, true, true}, {4, true, true, true, false, false, true, true}, {4, true, true, false, true, true, true, true}} {
			G := c.G
			o := Options{}
			if c.drift {
				o = testDrift
			}
			if c.jumps {
				o.DriftShape = DriftJumps
			}
			if c.base {
				o.Baseline = BaselineSmooth
			}
			var mask []bool
			if c.mask {
				mask = make([]bool, 30)
				for i := 22; i <= 26; i++ {
					mask[i] = true
				}
			}
			p := testPanelMask(t, G, 30, b.build, G > 1, o, mask)
			p.Coords = randomCoords(p, uint64(G))
			p.Coords.MuConditional = c.cond
			p.Coords.GammaConditional = c.gamma
			p.Coords.CoefConditional = c.coef
			p.Coords.CoefOwnSpread = c.coef && c.drift // both references
			tg, err := p.Target()
			if err != nil {
				t.Fatal(err)
			}
			if c.drift && tg.chans[0].sm == nil {
				t.Fatalf("%s: video does not drift", b.name)
			}
			if c.base != (tg.base != nil) {
				t.Fatalf("%s: moving baseline %v, want %v", b.name, tg.base != nil, c.base)
			}
			if c.gamma && b.name == "outcome" && tg.condGamma() == nil {
				t.Fatal("outcome: gamma is not in its conditional coordinates")
			}
			if c.coef && G > 1 && tg.coefs[len(tg.coefs)-1].cc == nil {
				t.Fatalf("%s: the last channel's coefficient is not in its conditional coordinates", b.name)
			}
			name := fmt.Sprintf("%s G=%d conditional=%v gamma=%v coef=%v drift=%v jumps=%v", b.name, G, c.cond, c.gamma, c.coef, c.drift, c.jumps)
			if c.base {
				name += fmt.Sprintf(" baseline masked=%v", c.mask)
			}
			t.Run(name, func(t *testing.T) {
				gs := &mcmctest.GradSettings{Seed: 5, Points: 6, Radius: 1}
				if c.jumps {
					// the jumps' weights are sinh of their coordinates
					// (HeavyReal), and their multipliers at random points
					// of radius 1 put the density's rounding and
					// truncation errors near 1e-5 at every step; at radius
					// 0.6 (weights up to 0.64, cosh up to 1.19) centred
					// differences at 1e-5 agree with the gradient to about
					// 1e-7
					gs.Radius, gs.Step = 0.6, 1e-5
				}
				r := mcmctest.CheckGradient(t, tg, 1e-5, gs)
				if r.Checked < 4 {
					t.Fatalf("only %d points had a finite density", r.Checked)
				}
				x := mcmctest.Ramp(tg.Dim())
				mcmctest.CheckNoAlloc(t, tg, x)
			})
		}
	}
}

// panelReference is the log posterior density of the region model on
// DESIGN.md's parameters, written plainly from the panel's layout and each
// region's national stage (Stage.Predict): the priors of the shared and
// hyper parameters, mu[g] ~ Normal(mu, tau_mu), theta[c,g] ~
// LogNormal(log theta[c], tau) (density in theta[c,g]), and each region's
// weekly normal likelihood. Constants dropped.
func panelReference(p *Panel, v []float64) float64 {
	l := p.Layout()
	st := p.Stages[0]
	lp := 0.0
	base := st.Names()
	prior := map[string]Prior{st.Intercept: st.MuPrior, st.Sigma: st.SigmaPrior}
	for _, r := range st.Regressors {
		prior[r.Name] = r.Prior
	}
	for _, c := range st.Channels {
		for _, q := range c.Params {
			prior[q.Name] = q.Prior
		}
		if c.Drift != nil {
			for _, q := range c.Drift.Params {
				prior[q.Name] = q.Prior
			}
		}
	}
	if st.Baseline != nil {
		for _, q := range st.Baseline.Params {
			prior[q.Name] = q.Prior
		}
	}
	for i, n := range base {
		d, _ := prior[n].LogPdf(v[i])
		lp += d
	}
	if l.TauMu() >= 0 {
		tmu := v[l.TauMu()]
		d, _ := p.TauMu.LogPdf(tmu)
		lp += d
		mu := v[l.Base().InterceptSlot()]
		for g := range p.Regions {
			z := (v[l.Intercepts().Start+g] - mu) / tmu
			lp += -0.5*z*z - math.Log(tmu)
		}
		for _, c := range l.Coefs() {
			tau := v[c.Tau]
			d, _ := p.TauCoef.LogPdf(tau)
			lp += d
			for g := range p.Regions {
				th := v[c.Block.Start+g]
				z := (math.Log(th) - math.Log(v[c.Hyper])) / tau
				lp += -0.5*z*z - math.Log(tau) - math.Log(th)
			}
		}
	}
	for g, sg := range p.Stages {
		rv := l.Region(nil, v, g)
		n := sg.Predict(nil, rv)
		sigma := rv[sg.Layout().SigmaSlot()]
		for i, y := range sg.Y {
			if sg.Mask != nil && sg.Mask[i] {
				continue
			}
			e := (y - n[i]) / sigma
			lp += -0.5*e*e - math.Log(sigma)
		}
	}
	return lp
}

// logDetJacobian returns log |det dC/dx| of the target's Constrain at x, by
// central differences.
func logDetJacobian(tg *PanelTarget, x []float64) float64 {
	n := tg.Dim()
	J := mat.NewDense(n, n, nil)
	xp := append([]float64(nil), x...)
	const h = 1e-6
	for j := 0; j < n; j++ {
		xp[j] = x[j] + h
		up := tg.Constrain(nil, xp)
		xp[j] = x[j] - h
		dn := tg.Constrain(nil, xp)
		xp[j] = x[j]
		for i := 0; i < n; i++ {
			J.Set(i, j, (up[i]-dn[i])/(2*h))
		}
	}
	var lu mat.LU
	lu.Factorize(J)
	ld, _ := lu.LogDet()
	return ld
}

// TestPanelSamePosterior checks that the sampling coordinates (any weights,
// the shear, the rescaled coefficients) leave the posterior on DESIGN.md's
// parameters as written in panelReference: by the change of variables
// formula, lp(x) - log|det dC/dx| - reference(C(x)) must be one constant
// over points and coordinates.
func TestPanelSamePosterior(t *testing.T) {
	held := make([]bool, 25)
	for i := 19; i <= 22; i++ {
		held[i] = true
	}
	for _, c := range []struct {
		b     panelBuild
		G     int
		drift bool
		jumps bool
		base  bool   // the moving baseline
		mask  []bool // weeks held out
	}{{panelBuilds[0], 3, false, false, false, nil}, {panelBuilds[1], 3, false, false, false, nil}, {panelBuilds[1], 1, false, false, false, nil},
		{panelBuilds[0], 3, true, false, false, nil}, {panelBuilds[1], 3, true, false, false, nil}, {panelBuilds[1], 1, true, false, false, nil}, {panelBuilds[1], 3, true, true, false, nil},
		{panelBuilds[0], 3, false, false, true, nil}, {panelBuilds[1], 3, false, false, true, held}, {panelBuilds[1], 1, false, false, true, held}, {panelBuilds[2], 3, true, false, true, nil}} {
		b := c.b
		o := Options{}
		if c.drift {
			o = testDrift
		}
		if c.jumps {
			o.DriftShape = DriftJumps
		}
		if c.base {
			o.Baseline = BaselineSmooth
		}
		p := testPanelMask(t, c.G, 25, b.build, c.G > 1, o, c.mask)
		rng := rand.New(rand.NewPCG(9, 9))
		var c0 float64
		for rep := 0; rep < 6; rep++ {
			p.Coords = randomCoords(p, uint64(rep))
			p.Coords.MuConditional = rep%2 == 1
			p.Coords.GammaConditional = rep >= 3
			p.Coords.CoefConditional = rep == 2 || rep >= 4
			p.Coords.CoefOwnSpread = rep == 4
			if rep == 0 {
				p.Coords = p.Uniform(1)
			}
			tg, err := p.Target()
			if err != nil {
				t.Fatal(err)
			}
			x := make([]float64, tg.Dim())
			for i := range x {
				x[i] = rng.Float64() - 0.5
			}
			if c.G == 3 && (tg.chans[0].same[2] != 0 || tg.chans[0].same[1] != 1) {
				t.Fatalf("%s: video's shared series %v, want region 3 computed as region 1 and no other sharing", b.name, tg.chans[0].same)
			}
			v := tg.Constrain(nil, x)
			got := tg.LogProb(x) - logDetJacobian(tg, x) - panelReference(p, v)
			if rep == 0 {
				c0 = got
				continue
			}
			if math.Abs(got-c0) > 1e-5*math.Max(1, math.Abs(c0)) {
				t.Errorf("%s rep %d: lp - log|J| - reference = %.9g, first point %.9g", b.name, rep, got, c0)
			}
		}
	}
}

// BenchmarkPanelLogProbGrad is the outcome panel's gradient at 10, 40 and
// 160 regions of 156 weeks (two upper channels, one paid search, one
// control): the cost per region-week should stay flat, with no allocation;
// cpu-ns/region-week is the process's CPU time (user + system) per
// region-week, the figure to quote on a loaded machine. national-regions gives every region region 1's flights (a national buy split
// by region size): the channels' transforms are then computed once.
// drift-regions has every channel drifting (one multiplier per channel,
// shared by the regions): the drift's cost beside regions=40.
// baseline-regions has the moving baseline in place of the trend line.
func BenchmarkPanelLogProbGrad(b *testing.B) {
	for _, c := range []struct {
		G        int
		national bool
		drift    bool
		base     bool
	}{{10, false, false, false}, {40, false, false, false}, {160, false, false, false}, {40, true, false, false}, {40, false, true, false}, {40, false, false, true}} {
		G := c.G
		name := fmt.Sprintf("regions=%d", G)
		if c.national {
			name = fmt.Sprintf("national-regions=%d", G)
		}
		o := Options{}
		if c.drift {
			name = fmt.Sprintf("drift-regions=%d", G)
			o.Drift = map[string]bool{"video": true, "audio": true, "search": true}
		}
		if c.base {
			name = fmt.Sprintf("baseline-regions=%d", G)
			o.Baseline = BaselineSmooth
		}
		b.Run(name, func(b *testing.B) {
			p := &Panel{TauMu: PriorTauMu, TauCoef: PriorTauCoef}
			first := testScaled(156, 20)
			for g := 0; g < G; g++ {
				sc := testScaled(156, uint64(20+g))
				if c.national {
					sc.Upper, sc.Search = first.Upper, first.Search
				}
				st, _ := Outcome(sc, o)
				p.Stages = append(p.Stages, st)
				p.Regions = append(p.Regions, fmt.Sprintf("r%d", g+1))
			}
			p.Coords = p.Uniform(0.5)
			tg, err := p.Target()
			if err != nil {
				b.Fatal(err)
			}
			x := mcmctest.Ramp(tg.Dim())
			g := make([]float64, tg.Dim())
			b.ReportAllocs()
			cpu0 := cpuSeconds()
			for b.Loop() {
				tg.LogProbGrad(g, x)
			}
			perOp := float64(b.N) * float64(G*156)
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/perOp, "ns/region-week")
			// CPU time: on a shared machine wall time also counts the waits
			b.ReportMetric((cpuSeconds()-cpu0)*1e9/perOp, "cpu-ns/region-week")
		})
	}
}

// TestPanelRegionDraw checks that a region's national draw holds the
// shared values and that region's intercept and coefficients, read by
// meaning through each layout.
func TestPanelRegionDraw(t *testing.T) {
	p := testPanel(t, 3, 20, Outcome, false)
	l := p.Layout()
	v := make([]float64, l.Len())
	for i := range v {
		v[i] = float64(i)
	}
	for g := range p.Regions {
		r := l.Region(nil, v, g)
		rl := p.Stages[g].Layout()
		pr := rl.View(r)
		if got, want := pr.Intercept(), v[l.Intercepts().Start+g]; got != want {
			t.Errorf("region %d intercept %v, want %v", g, got, want)
		}
		if got, want := pr.Sigma(), v[l.Base().SigmaSlot()]; got != want {
			t.Errorf("region %d sigma %v, want %v", g, got, want)
		}
		for _, c := range l.Coefs() {
			want := v[c.Block.Start+g]
			if c.Column == "" {
				if pr.Gamma() != want {
					t.Errorf("region %d gamma %v, want %v", g, pr.Gamma(), want)
				}
				continue
			}
			m, _ := pr.Channel(c.Column)
			if m.Coef != want {
				t.Errorf("region %d %s coefficient %v, want %v", g, c.Name, m.Coef, want)
			}
			cs, _ := rl.Channel(c.Column)
			if r[cs.Lam] != v[cs.Lam] {
				t.Errorf("region %d %s retention not shared", g, c.Name)
			}
		}
	}
}

// TestPanelRegionDrift checks that with a drifting channel every region's
// national-shaped draw carries the panel's one drift: the multiplier read
// through each region's own stage layout (what the forward simulator
// applies) is the base layout's, week for week, and not 1.
func TestPanelRegionDrift(t *testing.T) {
	p := testPanelOpts(t, 3, 20, Outcome, false, testDrift)
	l := p.Layout()
	v := make([]float64, l.Len())
	for i := range v {
		v[i] = 0.2 + 0.1*math.Sin(float64(i))
	}
	for _, col := range []string{"video", "search"} {
		j := p.Stages[0].ChannelIndex(col)
		base := l.Base().View(v[:l.Base().Len()]).Multiplier(make([]float64, 20), j)
		if math.Abs(base[0]-1) < 1e-3 {
			t.Fatalf("%s: multiplier %v in week 1, want one that moves", col, base[0])
		}
		for g := range p.Regions {
			got := p.Stages[g].Layout().View(l.Region(nil, v, g)).Multiplier(make([]float64, 20), j)
			for w := range base {
				if got[w] != base[w] {
					t.Fatalf("%s region %d week %d: multiplier %v, the panel's %v", col, g, w, got[w], base[w])
				}
			}
		}
	}
}

// checkStart checks a panel's start: the start point x0's log density is
// above that of every one of 20 of the sampler's usual starts (uniform in
// (-2, 2)) and every variance of the start metric, which it returns, is in
// (0, 1].
func checkStart(t *testing.T, name string, tg *PanelTarget, x0 []float64) []float64 {
	t.Helper()
	lp0 := tg.LogProb(x0)
	rng := rand.New(rand.NewPCG(7, 7))
	x := make([]float64, tg.Dim())
	for rep := 0; rep < 20; rep++ {
		for i := range x {
			x[i] = -2 + 4*rng.Float64()
		}
		if lp := tg.LogProb(x); !(lp0 > lp) {
			t.Errorf("%s: log density %.6g at the start point, %.6g at a uniform start", name, lp0, lp)
		}
	}
	m := tg.StartMetric()
	if len(m) != tg.Dim() {
		t.Fatalf("%s: start metric of %d values, want %d", name, len(m), tg.Dim())
	}
	names := tg.CoordNames()
	for i, v := range m {
		if !(v > 0 && v <= 1) {
			t.Errorf("%s: %s start variance %v, want in (0, 1]", name, names[i], v)
		}
	}
	return m
}

// TestPanelStart: the start the panel offers the sampler (StartPoint,
// StartMetric) on 6 regions of 104 weeks: the start point's log density is
// above that of every one of 20 of the sampler's usual starts (uniform in
// (-2, 2)); the conditional intercepts' coordinates have their exact
// posterior variance 1 and sigma's log 1/(2 region-weeks); every variance
// is in (0, 1]. With one region there is no start. (Whether the metric
// pays is measured by BenchmarkPanelFit: warm-up gradients per stretch.)
func TestPanelStart(t *testing.T) {
	for _, b := range panelBuilds[:2] {
		p := testPanel(t, 6, 104, b.build, true)
		var err error
		if p.Coords, err = ChooseCoordinates(p); err != nil {
			t.Fatal(err)
		}
		tg, err := p.Target()
		if err != nil {
			t.Fatal(err)
		}
		x0 := make([]float64, tg.Dim())
		if !tg.StartPoint(x0) {
			t.Fatalf("%s: no start point", b.name)
		}
		m := checkStart(t, b.name, tg, x0)
		names := tg.CoordNames()
		for g := 0; g < tg.G; g++ {
			if v := m[tg.inter.block+g]; v != 1 {
				t.Errorf("%s: %s start variance %v, want 1", b.name, names[tg.inter.block+g], v)
			}
		}
		if got, want := m[tg.par[tg.sigma].free], 1/(2*float64(tg.nObs)); math.Abs(got-want) > 1e-15 {
			t.Errorf("%s: sigma's start variance %v, want %v", b.name, got, want)
		}
	}
	p := testPanel(t, 1, 30, Demand, false)
	tg, err := p.Target()
	if err != nil {
		t.Fatal(err)
	}
	if m, ok := tg.StartMetric(), tg.StartPoint(make([]float64, tg.Dim())); m != nil || ok {
		t.Errorf("one region: start metric %v and point %v, want none", m, ok)
	}
}

// TestSharedCoords: on 6 regions of 104 weeks, the shared coordinates are
// the ones CoordNames does not mark "v:" (a region's), named after a shared
// or hyper parameter (no region in the name), and as many as the target's
// dimension less one block of 6 per hierarchical coefficient and the
// intercepts'.
func TestSharedCoords(t *testing.T) {
	for _, b := range panelBuilds[:2] {
		p := testPanel(t, 6, 104, b.build, true)
		tg, err := p.Target()
		if err != nil {
			t.Fatal(err)
		}
		names := tg.CoordNames()
		sh := tg.SharedCoords()
		in := make([]bool, tg.Dim())
		for _, i := range sh {
			in[i] = true
			if strings.HasPrefix(names[i], "v:") {
				t.Errorf("%s: shared coordinate %d is %s", b.name, i, names[i])
			}
			for _, r := range p.Regions {
				// a region's own: mu_y[r1], beta[search,r1]
				if strings.Contains(names[i], "["+r+"]") || strings.Contains(names[i], ","+r+"]") {
					t.Errorf("%s: shared coordinate %d is region %s's %s", b.name, i, r, names[i])
				}
			}
		}
		for i, n := range names {
			if !in[i] && !strings.HasPrefix(n, "v:") {
				t.Errorf("%s: coordinate %d (%s) is neither shared nor a region's", b.name, i, n)
			}
		}
		if want := tg.Dim() - 6*(1+len(tg.coefs)); len(sh) != want {
			t.Errorf("%s: %d shared coordinates, want %d", b.name, len(sh), want)
		}
	}
}
