package pipeline

import (
	"context"
	"fmt"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat/distuv"

	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/funnel/stat"
	"spillway/funnel/window"
	"spillway/mediation"
)

// fitDiag is one stage's convergence in one line.
type fitDiag struct {
	stage                 string
	wall                  float64
	rhat, essBulk, essTai float64
	worst                 string // the largest R-hat's parameter
	slowBulk, slowTail    string // the least bulk and tail ESS's
	div                   int
	steps, step           float64 // mean leapfrog steps per draw and step size over chains
}

func (d fitDiag) String() string {
	return fmt.Sprintf("%-8s wall %6.1f s  max R-hat %.3f (%s)  min bulk ESS %5.0f (%s)  min tail ESS %5.0f (%s)  divergences %d  steps/draw %.0f  step %.3g",
		d.stage, d.wall, d.rhat, d.worst, d.essBulk, d.slowBulk, d.essTai, d.slowTail, d.div, d.steps, d.step)
}

func diagnose(stage string, f *mcmc.Fit, wall float64) fitDiag {
	d := fitDiag{stage: stage, wall: wall, essBulk: math.Inf(1), essTai: math.Inf(1)}
	for _, s := range mcmc.Summarize(f) {
		if s.Constant() {
			continue
		}
		if s.Rhat > d.rhat {
			d.rhat, d.worst = s.Rhat, s.Parameter
		}
		if s.ESSBulk < d.essBulk || math.IsNaN(s.ESSBulk) { // NaN stays, as math.Min keeps it
			d.essBulk, d.slowBulk = s.ESSBulk, s.Parameter
		}
		if s.ESSTail < d.essTai || math.IsNaN(s.ESSTail) {
			d.essTai, d.slowTail = s.ESSTail, s.Parameter
		}
	}
	for _, c := range f.Chains {
		d.div += c.Stats.Divergences
		d.steps += c.Stats.MeanLeapfrogs / float64(len(f.Chains))
		d.step += c.Stats.StepSize / float64(len(f.Chains))
	}
	return d
}

// TestPanelOneRegion checks that the region model on one region is the
// national model on that region: every parameter's posterior mean and
// every effect's agree within their Monte Carlo error (4 MCSE of the
// difference), fitting the same data both ways.
func TestPanelOneRegion(t *testing.T) {
	if testing.Short() {
		t.Skip("two full fits")
	}
	sim, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: 1, Weeks: 104, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	ps, err := model.ScalePanel(sim.Data, nil)
	if err != nil {
		t.Fatal(err)
	}
	set := mcmc.Settings{Chains: 4, Warmup: 500, Draws: 500, Seed: 21}
	pf, err := FitPanel(context.Background(), ps, model.Options{}, set, nil)
	if err != nil {
		t.Fatal(err)
	}
	// each stage adapted to its own default acceptance (PanelSettings): the
	// outcome and naive stages at 0.99, the demand stage at 0.9 (whose
	// sampling, at the warm-up's averaged step, accepts about 0.95 here)
	for k, fit := range pf.Fits {
		a := 0.0
		for _, c := range fit.Chains {
			a += c.Stats.MeanAccept / float64(len(fit.Chains))
		}
		t.Logf("%s stage: mean acceptance %.3f", StageNames[k], a)
		if ta := PanelSettings(set, k).TargetAccept; (ta > 0.95) != (a > 0.975) {
			t.Errorf("%s stage: mean acceptance %.3f at its default target %.2f", StageNames[k], a, ta)
		}
	}
	set.Seed = 77
	nf, err := Fit(context.Background(), ps.Scaled[0], model.Options{}, set, nil)
	if err != nil {
		t.Fatal(err)
	}
	for k := range nf.Fits {
		ns, pss := mcmc.Summarize(nf.Fits[k]), mcmc.Summarize(pf.Fits[k])
		if len(ns) != len(pss) {
			t.Fatalf("%s: %d national parameters, %d panel ones", StageNames[k], len(ns), len(pss))
		}
		t.Logf("%v", diagnose(StageNames[k], pf.Fits[k], pf.Wall[k]))
		for i, a := range ns {
			b := pss[i]
			if a.Parameter != b.Parameter {
				t.Fatalf("parameter %d: national %s, panel %s", i, a.Parameter, b.Parameter)
			}
			tol := 4 * math.Hypot(a.MCSEMean, b.MCSEMean)
			if math.Abs(a.Mean-b.Mean) > tol {
				t.Errorf("%s %s: national mean %.5g, panel %.5g, beyond 4 MCSE (%.3g)", StageNames[k], a.Parameter, a.Mean, b.Mean, tol)
			}
		}
	}
	// the effects through the region split against the national split
	wins := window.Quarters(ps.Scaled[0].Weeks)[:1]
	pr, err := mediation.SplitPanel(pf.Inputs(), wins)
	if err != nil {
		t.Fatal(err)
	}
	nr, err := mediation.Split(nf.Inputs(), wins)
	if err != nil {
		t.Fatal(err)
	}
	for i, e := range nr.Effects {
		p := pr.Total.Effects[i]
		if p.Channel != e.Channel || p.Path != e.Path {
			t.Fatalf("effect %d: %s %s against %s %s", i, p.Channel, p.Path, e.Channel, e.Path)
		}
		a, b := mediation.Summarise(e.Draws), mediation.Summarise(p.Draws)
		// Monte Carlo error of a mean from about 1000 effective draws
		tol := 4 * math.Hypot(sdOf(e.Draws), sdOf(p.Draws)) / math.Sqrt(1000)
		if math.Abs(a.Mean-b.Mean) > tol {
			t.Errorf("%s %s: national %.4g, panel %.4g (tolerance %.3g)", e.Channel, e.Path, a.Mean, b.Mean, tol)
		}
	}
}

func sdOf(x []float64) float64 {
	m := 0.0
	for _, v := range x {
		m += v
	}
	m /= float64(len(x))
	s := 0.0
	for _, v := range x {
		s += (v - m) * (v - m)
	}
	return math.Sqrt(s / float64(len(x)-1))
}

// TestPanelExplore fits a simulated panel and prints its convergence, for
// measurements only: SPILLWAY_PANEL=G,T,warmup,draws[,stages[,coords]] with
// stages a string of stage numbers (012: demand, outcome, naive) and coords
// chosen (the default: conditional intercepts, coefficients by the weights),
// nc (every weight 0), c (every weight 1), lammu (the intercepts by their
// weights, not conditional), munc (the
// intercepts non-centred, the coefficients chosen), coefnc (the reverse) or
// round (the chosen weights rounded to 0 or 1), or several joined by +
// (lammu+munc); SPILLWAY_PANEL_ACCEPT sets
// the target acceptance.
func TestPanelExplore(t *testing.T) {
	spec := os.Getenv("SPILLWAY_PANEL")
	if spec == "" {
		t.Skip("set SPILLWAY_PANEL=G,T,warmup,draws[,stages[,coords]]")
	}
	var v [4]int
	rest := spec
	for i := range v {
		var part string
		part, rest, _ = cut(rest, ",")
		v[i], _ = strconv.Atoi(part)
	}
	stages, coords, _ := cut(rest, ",")
	if stages == "" {
		stages = "012"
	}
	sim, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: v[0], Weeks: v[1], Seed: 5, Dark: v[0] / 8, Big: true})
	if err != nil {
		t.Fatal(err)
	}
	ps, err := model.ScalePanel(sim.Data, nil)
	if err != nil {
		t.Fatal(err)
	}
	panels, err := model.PanelStages(ps, model.Options{})
	if err != nil {
		t.Fatal(err)
	}
	for _, ch := range stages {
		k := int(ch - '0')
		p := panels[k]
		c, err := model.ChooseCoordinates(p)
		if err != nil {
			t.Fatal(err)
		}
		for _, coords := range strings.Split(coords, "+") {
			switch coords {
			case "nc":
				c = p.Uniform(0)
			case "c":
				c = p.Uniform(1)
			case "lammu": // intercepts by the weights Mu, not conditional
				c.MuConditional = false
			case "munc": // intercepts non-centred, coefficients as chosen
				c.Mu, c.MuConditional = p.Uniform(0).Mu, false
			case "coefnc": // coefficients non-centred, intercepts as chosen
				c.Coef = p.Uniform(0).Coef
			case "round":
				for _, w := range append([][]float64{c.Mu}, c.Coef...) {
					for g := range w {
						w[g] = math.Round(w[g])
					}
				}
			}
		}
		p.Coords = c
		tg, err := p.Target()
		if err != nil {
			t.Fatal(err)
		}
		set := mcmc.Settings{Chains: 4, Warmup: v[2], Draws: v[3], Seed: 1, TargetAccept: DefaultTargetAccept}
		if a, err := strconv.ParseFloat(os.Getenv("SPILLWAY_PANEL_ACCEPT"), 64); err == nil {
			set.TargetAccept = a
		}
		t0 := time.Now()
		fit, err := mcmc.Run(context.Background(), tg, &set)
		if err != nil {
			t.Fatal(err)
		}
		grads := 0
		for _, c := range fit.Chains {
			grads += c.Stats.GradientEvaluations
		}
		t.Logf("%v  gradients %d", diagnose(StageNames[k], fit, time.Since(t0).Seconds()), grads)
		t.Logf("  coords %s: tau_mu %.3g, tau_coef %.3g; lam mu %.2f, coef %.2f", coords, c.TauMu, c.TauCoef, c.Mu, c.Coef)
		for _, s := range mcmc.Summarize(fit) {
			if strings.HasPrefix(s.Parameter, "tau_") {
				t.Logf("  %s mean %.3g [%.3g, %.3g] R-hat %.3f bulk ESS %.0f", s.Parameter, s.Mean, s.Q05, s.Q95, s.Rhat, s.ESSBulk)
			}
		}
	}
}

func cut(s, sep string) (string, string, bool) {
	for i := 0; i+len(sep) <= len(s); i++ {
		if s[i:i+len(sep)] == sep {
			return s[:i], s[i+len(sep):], true
		}
	}
	return s, "", false
}

// TestPanelRecovery fits panels simulated from the region model (4 and 12
// regions, regions that never run audio, one region ten times the others'
// size), several replicates of each (each its own draw of the region
// effects, flights and noise), and prints the coverage of the true
// per-region and summed effects (window all: via search, direct and total
// of each upper channel, paid search's controlled effect) by the 50% and
// 90% intervals, with the central 95% range of Binomial(n, level) a
// calibrated posterior would give were the effects independent trials
// (REFERENCES.md section 9), by path and by kind of region (big, dark,
// other), and each miss with the truth's place among the draws. Effects of
// one fit share its errors, so the count's true spread is wider than the
// binomial's: the test judges each replicate's share covered, averaged over
// the replicates, with its central 95% range from the spread over them
// (Student's t; TestExposureCoverage judges the same way), and fails when
// that range lies below 0.9.
// Runs with SPILLWAY_LONG=1 (each replicate a panel fit of 4 x (500 + 500)
// of the demand and outcome stages, SPILLWAY_WARMUP and SPILLWAY_DRAWS);
// SPILLWAY_REPLICATES=N sets the replicates per panel shape (default 4),
// SPILLWAY_FIRST_REPLICATE=K starts at replicate K (0-based) so that
// several processes can share the replicates, SPILLWAY_REGIONS=G keeps the
// shapes of G regions only, and SPILLWAY_VERBOSE=1 logs every effect, not
// only the misses.
func TestPanelRecovery(t *testing.T) {
	if os.Getenv("SPILLWAY_LONG") != "1" {
		t.Skip("set SPILLWAY_LONG=1: several full panel fits")
	}
	reps, first := 4, 0
	if s := os.Getenv("SPILLWAY_REPLICATES"); s != "" {
		reps, _ = strconv.Atoi(s)
	}
	if s := os.Getenv("SPILLWAY_FIRST_REPLICATE"); s != "" {
		// to spread the replicates over processes or machines
		first, _ = strconv.Atoi(s)
	}
	shapes := []scenario.PanelOptions{
		{Regions: 4, Weeks: 104, Dark: 1, Big: true, Seed: 300}, // replicate r: seed 300 + r
		{Regions: 12, Weeks: 104, Dark: 2, Big: true, Seed: 400},
	}
	if s := os.Getenv("SPILLWAY_REGIONS"); s != "" {
		// only the shapes of these many regions
		var keep []scenario.PanelOptions
		for _, o := range shapes {
			if strconv.Itoa(o.Regions) == s {
				keep = append(keep, o)
			}
		}
		shapes = keep
	}
	type tally struct{ n, in50, in90 int }
	var region, summed tally
	perShape := make([][2]tally, len(shapes))
	// each replicate's shares covered (90%, 50%), per shape, per region and
	// summed: effects of one fit share its errors, so the spread of these
	// shares over replicates, not the binomial, says how far coverage may
	// stray
	shares := make([][2][][2]float64, len(shapes))
	// per region, by path and by kind of region (big, dark, other)
	byClass := map[string]*tally{}
	var classes []string
	class := func(key string) *tally {
		if byClass[key] == nil {
			byClass[key] = &tally{}
			classes = append(classes, key)
		}
		return byClass[key]
	}
	// replicate by replicate over the shapes, so that a run cut short has
	// both shapes
	for r := first; r < first+reps; r++ {
		for s, o := range shapes {
			o.Seed += uint64(r)
			sim, err := scenario.SimulatePanel(o)
			if err != nil {
				t.Fatal(err)
			}
			ps, err := model.ScalePanel(sim.Data, nil)
			if err != nil {
				t.Fatal(err)
			}
			in := fitPanelTwoStages(t, ps, mcmc.Settings{Chains: 4, Seed: o.Seed,
				Warmup: envInt(t, "SPILLWAY_WARMUP", 500, 1), Draws: envInt(t, "SPILLWAY_DRAWS", 500, 1)})
			wins := window.Quarters(ps.Scaled[0].Weeks)[:1]
			res, err := mediation.SplitPanel(in, wins)
			if err != nil {
				t.Fatal(err)
			}
			truth, err := sim.TrueEffects(wins)
			if err != nil {
				t.Fatal(err)
			}
			dark := map[string]bool{}
			for g := o.Regions - o.Dark; g < o.Regions; g++ {
				dark[ps.Regions[g]] = true
			}
			cover := func(where string, got, want *mediation.Result, tallies func(mediation.Effect) []*tally) {
				all := append(append([]mediation.Effect(nil), got.Effects...), got.Borrowed...)
				tru := append(append([]mediation.Effect(nil), want.Effects...), want.Borrowed...)
				for j, e := range all {
					switch e.Path {
					case "via_search", "direct", "total", "controlled":
					default:
						continue
					}
					if e.Spend == 0 {
						continue // exactly zero in every draw and in truth
					}
					if tru[j].Channel != e.Channel || tru[j].Path != e.Path {
						t.Fatalf("effect %d: %s %s against truth %s %s", j, e.Channel, e.Path, tru[j].Channel, tru[j].Path)
					}
					sm := mediation.Summarise(e.Draws)
					q25, q75 := quantile(e.Draws, 0.25), quantile(e.Draws, 0.75)
					v := tru[j].Draws[0]
					if v < sm.Q05 || v > sm.Q95 || os.Getenv("SPILLWAY_VERBOSE") == "1" {
						// a miss: where it is and how far out the truth lies
						below := 0
						for _, d := range e.Draws {
							if d < v {
								below++
							}
						}
						t.Logf("miss90=%v seed %d %s %s %s truth %.4g interval [%.4g, %.4g] P(draw<truth) %.3f",
							v < sm.Q05 || v > sm.Q95, o.Seed, where, e.Channel, e.Path, v, sm.Q05, sm.Q95, float64(below)/float64(len(e.Draws)))
					}
					for _, x := range tallies(e) {
						x.n++
						if v >= sm.Q05 && v <= sm.Q95 {
							x.in90++
						}
						if v >= q25 && v <= q75 {
							x.in50++
						}
					}
				}
			}
			var one [2]tally
			for g, rr := range res.Regions {
				where, kind := rr.Region, "other"
				if g == 0 && o.Big {
					where, kind = where+"(big)", "big"
				}
				if dark[rr.Region] {
					where, kind = where+"(dark)", "dark"
				}
				cover(where, rr.Result, truth.Regions[g].Result, func(e mediation.Effect) []*tally {
					return []*tally{&region, &perShape[s][0], &one[0],
						class(fmt.Sprintf("%d regions, per region, %s regions", o.Regions, kind)),
						class(fmt.Sprintf("%d regions, per region, %s %s", o.Regions, e.Channel, e.Path))}
				})
			}
			cover("summed", res.Total, truth.Total, func(mediation.Effect) []*tally { return []*tally{&summed, &perShape[s][1], &one[1]} })
			for k := range one {
				shares[s][k] = append(shares[s][k], [2]float64{float64(one[k].in90) / float64(one[k].n), float64(one[k].in50) / float64(one[k].n)})
			}
			t.Logf("%d regions, seed %d: per region %d and %d of %d inside the 90%% and 50%% intervals; summed %d and %d of %d",
				o.Regions, o.Seed, one[0].in90, one[0].in50, one[0].n, one[1].in90, one[1].in50, one[1].n)
		}
	}
	report := func(what string, x tally) {
		lo90, hi90 := binomialRange(x.n, 0.9)
		lo50, hi50 := binomialRange(x.n, 0.5)
		t.Logf("%s: 90%% intervals cover %d of %d (%.1f%%; calibrated: %d to %d), 50%% intervals %d of %d (%.1f%%; calibrated: %d to %d)",
			what, x.in90, x.n, 100*float64(x.in90)/float64(x.n), lo90, hi90, x.in50, x.n, 100*float64(x.in50)/float64(x.n), lo50, hi50)
	}
	for _, key := range classes {
		report(key, *byClass[key])
	}
	for s, o := range shapes {
		for k, what := range [2]string{"per region", "summed"} {
			name := fmt.Sprintf("%d regions x %d weeks, %s", o.Regions, o.Weeks, what)
			report(name, perShape[s][k])
			sh := shares[s][k]
			if len(sh) < 2 {
				continue
			}
			// Student's t with R-1 degrees of freedom: with a handful of
			// replicates their sd is itself uncertain
			tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(len(sh) - 1)}.Quantile(0.975)
			var m, half [2]float64
			for l := range m {
				x := make([]float64, len(sh))
				for r := range sh {
					x[r] = sh[r][l]
				}
				var sd float64
				m[l], sd = stat.MeanSD(x)
				half[l] = tq * sd / math.Sqrt(float64(len(x)))
			}
			t.Logf("%s, share covered averaged over %d replicates: 90%% intervals %.3f (range %.3f to %.3f), 50%% intervals %.3f (range %.3f to %.3f)",
				name, len(sh), m[0], m[0]-half[0], m[0]+half[0], m[1], m[1]-half[1], m[1]+half[1])
			if m[0]+half[0] < 0.9 {
				t.Errorf("%s: 90%% intervals cover %.3f of the true effects averaged over %d replicates; the range %.3f to %.3f lies below 0.9",
					name, m[0], len(sh), m[0]-half[0], m[0]+half[0])
			}
		}
	}
	report("all panels, per region", region)
	report("all panels, summed", summed)
}

// fitPanelTwoStages fits a panel's demand and outcome stages (the split
// needs no naive stage) and pairs their draws, logging each stage's
// convergence; each stage starts as FitPanel starts it (PanelStart).
func fitPanelTwoStages(t *testing.T, ps *model.PanelScaled, set mcmc.Settings) *mediation.PanelInputs {
	t.Helper()
	panels, err := model.PanelStages(ps, model.Options{})
	if err != nil {
		t.Fatal(err)
	}
	var fits [2]*mcmc.Fit
	for k := 0; k < 2; k++ {
		p := panels[k]
		if p.Coords, err = model.ChooseCoordinates(p); err != nil {
			t.Fatal(err)
		}
		tg, err := p.Target()
		if err != nil {
			t.Fatal(err)
		}
		var wall float64
		if fits[k], wall, err = run(context.Background(), tg, PanelStart(tg, settings(set, k)), nil, p.Name); err != nil {
			t.Fatal(err)
		}
		t.Logf("%d regions: %v", len(ps.Regions), diagnose(StageNames[k], fits[k], wall))
	}
	return &mediation.PanelInputs{Data: ps, Demand: panels[0], Outcome: panels[1],
		DemandDraws: mediation.FromFit(fits[0]), OutcomeDraws: mediation.FromFit(fits[1])}
}

// quantile is R's type-7 quantile of x (sorted here on a copy).
func quantile(x []float64, p float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	return stat.Quantile(s, p)
}

// TestPanelAccept checks each panel stage's default target acceptance (the
// outcome and naive stages' warm-up windows at the fits' default, their
// terminal window and draws at PanelOutcomeAccept), its seed, and that a
// chosen acceptance applies to every stage throughout.
func TestPanelAccept(t *testing.T) {
	for k, want := range []float64{DefaultTargetAccept, PanelOutcomeAccept, PanelOutcomeAccept} {
		s := PanelSettings(mcmc.Settings{Seed: 10}, k)
		if s.TargetAccept != want || s.Seed != 10+uint64(k) {
			t.Errorf("%s stage: default acceptance %g and seed %d, want %g and %d", StageNames[k], s.TargetAccept, s.Seed, want, 10+k)
		}
		if wantWarm := map[bool]float64{true: DefaultTargetAccept}[k != 0]; s.WarmupAccept != wantWarm {
			t.Errorf("%s stage: warm-up acceptance %g, want %g", StageNames[k], s.WarmupAccept, wantWarm)
		}
		if s := PanelSettings(mcmc.Settings{TargetAccept: 0.85}, k); s.TargetAccept != 0.85 || s.WarmupAccept != 0 {
			t.Errorf("%s stage: acceptance %g, warm-up %g with 0.85 chosen", StageNames[k], s.TargetAccept, s.WarmupAccept)
		}
	}
	if PanelOutcomeAccept <= DefaultTargetAccept {
		t.Errorf("the outcome panel's default %g is not above the fits' %g", PanelOutcomeAccept, DefaultTargetAccept)
	}
}
