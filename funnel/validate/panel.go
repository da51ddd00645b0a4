package validate

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"sync"
	"time"

	"spillway/funnel/data"
	"spillway/funnel/forward"
	"spillway/funnel/lifts"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
	"spillway/funnel/stat"
	"spillway/funnel/validate/score"
	"spillway/funnel/window"
	"spillway/mediation"
)

// A region panel is a case of the same sweep (Input.Panel): the same jobs,
// seeds, records, aggregation and files, with every fit the region model of
// DESIGN.md ("Region panel", model.PanelStages) instead of the national
// one. Each job records every region's effects (Record.Region the region's
// name) and their sum over regions (Record.Region empty, where a national
// sweep's effects are), so validation.csv judges the summed effects as it
// judges a national fit's and validation_by_region.csv the same metrics
// region by region (Aggregate):
//
//   - recovery: each replicate draws one paired posterior draw of the
//     reference panel fit, turns it into every region's parameters
//     (model.PanelLayout Region), simulates each region's queries and
//     outcome from them on the region's own spend, controls and weeks
//     (as the national replicate does), refits the panel and compares
//     every region's effects and their sum with the truth. Calibration
//     ranks are not computed: the coefficients are per region, in each
//     region's own scaling.
//   - holdout: the panel fitted on the weeks before each origin forecasts
//     every region's queries and outcome, and their sum draw by draw (the
//     regions' noise is independent, so the sum of one draw per region is a
//     draw of the summed forecast), each against the seasonal rule on its
//     own series. There is no refit without media for a panel.
//   - stability: refits leaving out each quarter (masked in every region),
//     refits leaving out each region in turn, and refits with other seeds.
//     A refit without region g moves the other regions' effects (compared
//     with the reference's) and the sum over the regions it kept, compared
//     with the reference's sum over the same regions (Record Stat
//     "shift_sd": the move in that sum's posterior sd).
//   - placebo (when asked for): refits with one channel's spend moved
//     circularly by the same number of weeks in every region (each
//     region's flighting and the regions' common timing kept, only the
//     timing against the outcome broken), without lift tests (as a national
//     placebo: the tests no longer describe the moved spend), keeping the
//     channel's effect summed over regions. Only the sum is judged: a
//     region's own effect is a share of one fit of every region, and
//     regions without the channel's spend have none to judge.
//
// Effects of a channel a region never runs are exactly zero in every draw
// and in truth; they are not recorded.
//
// Every fit takes the sweep's model options (a drifting effectiveness
// among them: the reference draw that simulates a replicate carries the
// multiplier into every region's truth, through PanelLayout Region) and
// the lift tests of the data it fits (Input.Lifts; a test may name a
// region), as a national sweep's fits do: the reference every test, a
// holdout fit those ending before its origin, a fit leaving a quarter out
// those outside it, a recovery replicate the same tests simulated from its
// truth (the true lift in the test's units, from the reference draw it was
// simulated from, plus Normal(0, se) noise). A fit leaving out region g
// drops the tests in g and the national tests too: a national test
// measured the sum over every region, g included, which that fit cannot
// take without crediting g's lift to the regions it kept. With a test of
// the outcome the demand and outcome panels are fitted as one target
// (pipeline.FitPanelStages).

// RegionJobLabel prefixes the label of a stability job that leaves out a
// region ("without region R03").
const RegionJobLabel = "without region "

// panelSweep is what a panel sweep adds to a Sweep.
type panelSweep struct {
	ds *data.Dataset
	ps *model.PanelScaled
	// panels are the demand and outcome panels built on ps (checked before
	// any sampling; each fit builds its own on its data).
	panels [2]*model.Panel
	// tests are Input.Lifts as terms bound to panels, and units their
	// units in the metric's own (lifts.Test PanelUnit): a test's true lift
	// under a draw of the reference fit is units[i] * tests[i].Lift (a
	// Clone of it); nil without tests.
	tests []*model.PanelLiftTest
	units []float64
	// fitted, if not nil (tests only), sees every fit of the sweep with
	// the lift tests it took (as the fitted panels hold them); jobs run in
	// parallel, so it may be called concurrently.
	fitted func(f *panelFitted, tests []lifts.Test)
	// the reference fit's split, computed once for the jobs leaving out a
	// region
	once     sync.Once
	refSplit *mediation.PanelResult
	refErr   error
}

// newPanel checks a panel input and builds its stages.
func newPanel(in Input, set Settings) (*panelSweep, error) {
	ds := in.Panel
	switch {
	case len(ds.Regions) < 2:
		return nil, fmt.Errorf("validate: a region panel needs at least 2 regions, the data have %d", len(ds.Regions))
	case in.Truth != nil && in.Truth.Regions == nil:
		return nil, fmt.Errorf("validate: the given true parameters are national; a region panel's recovery needs each region's (a truth.json of a regional simulation), or simulates from its reference fit without them")
	case in.Truth != nil && len(in.Lifts) > 0:
		return nil, fmt.Errorf("validate: a region panel's recovery from given true parameters takes no lift tests (a replicate's tests are simulated from a draw of the reference panel fit); leave out the true parameters or the lift tests")
	}
	p := &panelSweep{ds: ds}
	var err error
	if p.ps, err = model.ScalePanel(ds, nil); err != nil {
		return nil, fmt.Errorf("validate: %w", err)
	}
	all, err := model.PanelStages(p.ps, in.Options)
	if err != nil {
		return nil, fmt.Errorf("validate: %w", err)
	}
	p.panels = [2]*model.Panel{all[0], all[1]}
	for _, pn := range p.panels {
		if pn.Coords, err = model.ChooseCoordinates(pn); err != nil {
			return nil, fmt.Errorf("validate: %s stage: %w", pn.Name, err)
		}
	}
	if len(in.Lifts) > 0 {
		// bound to both panels whatever their metric, so that Lift reads
		// a paired draw of the two
		for _, t := range in.Lifts {
			p.tests = append(p.tests, t.PanelTerm(p.ps, 0, 1))
			p.units = append(p.units, t.PanelUnit(p.ps))
		}
		if _, err := model.NewPanelJoint(p.panels[:], p.tests...); err != nil {
			return nil, fmt.Errorf("validate: %w", err)
		}
	}
	for _, name := range set.LeaveOutRegions {
		if !slices.Contains(p.ps.Regions, name) {
			return nil, fmt.Errorf("validate: region %q is not in the data; the data have %v", name, p.ps.Regions)
		}
	}
	return p, nil
}

// regionJobs lists the stability jobs leaving out one region each.
func (p *panelSweep) regionJobs(set Settings, T int) []Job {
	names := set.LeaveOutRegions
	if names == nil {
		names = p.ps.Regions
	}
	G := len(p.ps.Regions)
	var out []Job
	for _, name := range names {
		// the flag level of swingAt for losing 1/G of the region-weeks
		w := int(math.Round(float64(T) / float64(G)))
		out = append(out, Job{Check: Stability, Label: RegionJobLabel + name, Region: name, Weeks: max(1, w)})
	}
	return out
}

// panelFitted is a fit of a panel's demand and outcome stages.
type panelFitted struct {
	ps     *model.PanelScaled
	panels [2]*model.Panel
	fits   [2]*mcmc.Fit
}

func (f *panelFitted) inputs() *mediation.PanelInputs {
	return &mediation.PanelInputs{Data: f.ps, Demand: f.panels[0], Outcome: f.panels[1],
		DemandDraws: mediation.FromFit(f.fits[0]), OutcomeDraws: mediation.FromFit(f.fits[1])}
}

// fitPanel fits the region model's demand and outcome stages to ps with
// the sweep's settings, in the coordinates chosen from ps, the demand
// stage with seed and the outcome stage with seed+1 (as fit does).
func (sw *Sweep) fitPanel(ctx context.Context, ps *model.PanelScaled, seed uint64) (*panelFitted, error) {
	all, err := model.PanelStages(ps, sw.in.Options)
	if err != nil {
		return nil, err
	}
	f := &panelFitted{ps: ps, panels: [2]*model.Panel{all[0], all[1]}}
	for k, p := range f.panels {
		if p.Coords, err = model.ChooseCoordinates(p); err != nil {
			return nil, fmt.Errorf("%s stage: %w", p.Name, err)
		}
		tg, err := p.Target()
		if err != nil {
			return nil, fmt.Errorf("%s stage: %w", p.Name, err)
		}
		// seed + k and the stage's default acceptance, as fit's
		set := pipeline.PanelSettings(mcmc.Settings{Chains: sw.set.Chains, Warmup: sw.set.Warmup, Draws: sw.set.Draws, Seed: seed}, k)
		set = pipeline.PanelStart(tg, set) // the same start as fit's
		if f.fits[k], err = mcmc.Run(ctx, tg, &set); err != nil {
			return nil, fmt.Errorf("%s stage: %w", p.Name, err)
		}
	}
	return f, nil
}

// fitPanelTests is fitPanel with lift tests as data (pipeline.FitPanelStages:
// with a test of the outcome, or an upper channel's drift tied across the
// two paths, the demand and outcome panels as one joint target; seeds as
// fitPanel's); without tests or ties, fitPanel itself, so a sweep without
// them is unchanged.
func (sw *Sweep) fitPanelTests(ctx context.Context, ps *model.PanelScaled, seed uint64, tests []lifts.Test) (*panelFitted, error) {
	var f *panelFitted
	var fitted []lifts.Test // the tests the fit took
	if len(tests) == 0 && !sw.tied {
		var err error
		if f, err = sw.fitPanel(ctx, ps, seed); err != nil {
			return nil, err
		}
	} else {
		// each stage's default target acceptance, as fit's
		set := mcmc.Settings{Chains: sw.set.Chains, Warmup: sw.set.Warmup, Draws: sw.set.Draws, Seed: seed}
		pf, err := pipeline.FitPanelStages(ctx, ps, sw.in.Options, tests, set, nil)
		if err != nil {
			return nil, err
		}
		f = &panelFitted{ps: ps, panels: [2]*model.Panel{pf.Panels[0], pf.Panels[1]}, fits: [2]*mcmc.Fit{pf.Fits[0], pf.Fits[1]}}
		fitted = pf.Tests
	}
	if sw.pan.fitted != nil {
		sw.pan.fitted(f, fitted)
	}
	return f, nil
}

// testsWithoutRegion returns the lift tests a fit leaving out region
// may take: those of the other regions. A national test is dropped too (it
// measured the lift summed over every region, region's included).
func (sw *Sweep) testsWithoutRegion(region string) []lifts.Test {
	var out []lifts.Test
	for _, t := range sw.in.Lifts {
		if t.Region != "" && t.Region != region {
			out = append(out, t)
		}
	}
	return out
}

// simulatedPanelTests returns the sweep's lift tests as a replicate
// simulated from the reference fit's paired draw (vd, vo) would have given
// them: over the same weeks and regions with the same standard errors,
// each estimate the true lift under that draw plus Normal(0, se) noise. A
// lift in the metric's own units depends on the parameters and the spend
// only, not on the replicate's noise, so it is read on the data's own
// scaling, where the draw lives.
func (p *panelSweep) simulatedPanelTests(tests []lifts.Test, vd, vo []float64, rng *rand.Rand) []lifts.Test {
	out := make([]lifts.Test, len(tests))
	for i, t := range tests {
		t.Estimate = p.units[i]*p.tests[i].Clone().Lift(vd, vo) + t.SE*rng.NormFloat64()
		out[i] = t
	}
	return out
}

// panelFitRecords are the convergence records of a panel fit (each stage's
// worst over all its parameters, spreads and region blocks included).
func panelFitRecords(job int, f *panelFitted) []Record {
	var recs []Record
	for k, fit := range f.fits {
		recs = append(recs, stageRecords(job, f.panels[k].Name, fit)...)
	}
	return recs
}

// withRegion sets the region of records.
func withRegion(recs []Record, region string) []Record {
	for i := range recs {
		recs[i].Region = region
	}
	return recs
}

// panelEffectRecords summarises every region's key effects and their sum
// (quarters as keyEffects has them), each with its truth when truth is not
// nil (keyed by effectKey of region, channel, path, window). Effects of a
// channel a region never runs are left out.
func panelEffectRecords(job int, res *mediation.PanelResult, quarters bool, truth map[string]float64) ([]Record, error) {
	var recs []Record
	add := func(region string, r *mediation.Result) error {
		for _, e := range keyEffects(r, quarters) {
			if e.Spend == 0 && region != "" {
				continue
			}
			var tv *float64
			if truth != nil {
				v, ok := truth[truthKey(region, e)]
				if !ok {
					return fmt.Errorf("validate: no true value for %s %s %s %s", region, e.Channel, e.Path, e.Window)
				}
				tv = &v
			}
			recs = append(recs, withRegion(effectRecords(job, e, tv), region)...)
		}
		return nil
	}
	for _, r := range res.Regions {
		if err := add(r.Region, r.Result); err != nil {
			return nil, err
		}
	}
	if err := add("", res.Total); err != nil {
		return nil, err
	}
	return recs, nil
}

func truthKey(region string, e mediation.Effect) string {
	return region + "\x00" + e.Channel + "\x00" + e.Path + "\x00" + e.Window
}

// panelReference fits the whole panel with the sweep's seed, or returns
// the given reference (Input.Reference).
func (sw *Sweep) panelReference(ctx context.Context) (*panelFitted, error) {
	if r := sw.in.Reference; r != nil {
		return &panelFitted{ps: sw.pan.ps, panels: sw.pan.panels, fits: [2]*mcmc.Fit{r.Demand, r.Outcome}}, nil
	}
	f, err := sw.fitPanelTests(ctx, sw.pan.ps, sw.set.Seed, sw.in.Lifts)
	if err != nil {
		return nil, fmt.Errorf("validate: reference fit: %w", err)
	}
	return f, nil
}

// referenceSplit returns the reference fit's split over the whole data,
// computed once.
func (sw *Sweep) referenceSplit(ref *panelFitted) (*mediation.PanelResult, error) {
	p := sw.pan
	p.once.Do(func() { p.refSplit, p.refErr = mediation.SplitPanel(ref.inputs(), sw.windows[:1]) })
	return p.refSplit, p.refErr
}

// runPanelJob computes one job's records of a panel sweep.
func (sw *Sweep) runPanelJob(ctx context.Context, j Job, ref *panelFitted) ([]Record, error) {
	switch j.Check {
	case Reference:
		res, err := sw.referenceSplit(ref)
		if err != nil {
			return nil, err
		}
		recs, err := panelEffectRecords(j.Index, res, false, nil)
		if sw.set.has(Placebo) {
			for _, col := range append(append([]string(nil), sw.in.Spec.Upper...), sw.in.Spec.Search...) {
				recs = append(recs, placeboRecord(j.Index, res.Total, col))
			}
		}
		return append(panelFitRecords(j.Index, ref), recs...), err
	case Recovery:
		return sw.panelRecoveryJob(ctx, j, ref)
	case Holdout:
		return sw.panelHoldoutJob(ctx, j)
	case Stability:
		return sw.panelStabilityJob(ctx, j, ref)
	case Placebo:
		return sw.panelPlaceboJob(ctx, j)
	}
	return nil, fmt.Errorf("validate: the %s check does not run on a region panel", j.Check)
}

// truthGenerator simulates every replicate of a panel from each region's
// given true parameters (t.Regions), carried into stages with options o as
// a national truth is (truthValuesOn).
func (p *panelSweep) truthGenerator(t *Truth, o model.Options) (*generator, error) {
	var f fingerprint
	g := &generator{}
	for r, name := range p.ps.Regions {
		rt := t.Regions[name]
		if rt == nil {
			return nil, fmt.Errorf("validate: the given true parameters have no region %q; they have %d regions, the data %d", name, len(t.Regions), len(p.ps.Regions))
		}
		st := [2]*model.Stage{p.panels[0].Stages[r], p.panels[1].Stages[r]}
		v1, v2, err := truthValuesOn(p.ps.Scaled[r], st, o, rt)
		if err != nil {
			return nil, fmt.Errorf("%w (region %s)", err, name)
		}
		g.regions = append(g.regions, [2][]float64{v1, v2})
		f.str(name)
		f.point(st, v1, v2)
	}
	g.name = "given true parameters per region (" + f.sum()[:16] + ")"
	return g, nil
}

// panelRecoveryJob simulates one panel from a posterior draw of the
// reference fit, or from each region's given true parameters, refits it
// and records every region's and the summed effects with their truth.
func (sw *Sweep) panelRecoveryJob(ctx context.Context, j Job, ref *panelFitted) ([]Record, error) {
	rng := rand.New(rand.NewPCG(j.Seed, 1))
	var in *mediation.PanelInputs
	d := 0
	if sw.gen.regions == nil {
		in = ref.inputs()
		d = rng.IntN(len(in.DemandDraws.Rows))
	}
	p := sw.pan
	G := len(p.ps.Regions)
	ds := &data.Dataset{Spec: p.ds.Spec, File: p.ds.File, Weeks: p.ds.Weeks, Regions: make([]data.Region, G)}
	// every region's true parameters in the data's model units
	type truth struct{ v1, v2 []float64 }
	tr := make([]truth, G)
	for g := range G {
		sc := p.ps.Scaled[g]
		st := [2]*model.Stage{p.panels[0].Stages[g], p.panels[1].Stages[g]}
		var v1, v2 []float64
		if sw.gen.regions != nil {
			v1, v2 = sw.gen.regions[g][0], sw.gen.regions[g][1]
		} else {
			v1 = p.panels[0].Layout().Region(nil, in.DemandDraws.Rows[d], g)
			v2 = p.panels[1].Layout().Region(nil, in.OutcomeDraws.Rows[d], g)
		}
		tr[g] = truth{v1, v2}
		q, y, err := simulateSeries(sc, st, v1, v2, rng)
		if err != nil {
			return nil, fmt.Errorf("region %s: %w", p.ps.Regions[g], err)
		}
		r := p.ds.Regions[g]
		r.Series.Queries, r.Series.Outcome = q, y
		ds.Regions[g] = r
	}
	ps, err := model.ScalePanel(ds, nil)
	if err != nil {
		return nil, fmt.Errorf("validate: a simulated panel: %w", err)
	}
	// the truth's effects on the replicate, its parameters rescaled to the
	// units a fit to the replicate works in (as simulate does per series)
	regions := make([]mediation.RegionResult, G)
	for g := range G {
		sc := ps.Scaled[g]
		st1, err := model.Demand(sc, sw.in.Options)
		if err != nil {
			return nil, err
		}
		st2, err := model.Outcome(sc, sw.in.Options)
		if err != nil {
			return nil, err
		}
		kq := p.ps.Scaled[g].QueriesScale / sc.QueriesScale
		ky := p.ps.Scaled[g].OutcomeScale / sc.OutcomeScale
		u1 := st1.Layout().View(tr[g].v1).Rescaled(kq, 0)
		u2 := st2.Layout().View(tr[g].v2).Rescaled(ky, ky/kq)
		res, err := mediation.Split(&mediation.Inputs{Data: sc, Demand: st1, Outcome: st2,
			DemandDraws:  mediation.Draws{Names: st1.Names(), Rows: [][]float64{u1}},
			OutcomeDraws: mediation.Draws{Names: st2.Names(), Rows: [][]float64{u2}}}, sw.windows)
		if err != nil {
			return nil, err
		}
		regions[g] = mediation.RegionResult{Region: ps.Regions[g], Result: res}
	}
	want, err := mediation.SumRegions(regions)
	if err != nil {
		return nil, err
	}
	tv := map[string]float64{}
	for _, r := range append(want.Regions, mediation.RegionResult{Result: want.Total}) {
		for _, e := range append(append([]mediation.Effect(nil), r.Effects...), r.Borrowed...) {
			tv[truthKey(r.Region, e)] = e.Draws[0]
		}
	}
	var tests []lifts.Test
	if len(sw.in.Lifts) > 0 {
		tests = p.simulatedPanelTests(sw.in.Lifts, in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d], rng)
	}
	f, err := sw.fitPanelTests(ctx, ps, j.Seed, tests)
	if err != nil {
		return nil, err
	}
	got, err := mediation.SplitPanel(f.inputs(), sw.windows)
	if err != nil {
		return nil, err
	}
	recs, err := panelEffectRecords(j.Index, got, true, tv)
	return append(panelFitRecords(j.Index, f), recs...), err
}

// simulateSeries draws one series' queries and outcome, in raw units, from
// parameter values v1, v2 of stages st on sc (model units of sc): q~ = m +
// sigma_q e1, y~ = n (at the simulated queries) + sigma_y e2, as simulate
// does for a national replicate.
func simulateSeries(sc *model.Scaled, st [2]*model.Stage, v1, v2 []float64, rng *rand.Rand) (q, y []float64, err error) {
	sim, err := forward.New(sc, st[0], st[1])
	if err != nil {
		return nil, nil, err
	}
	dr := sim.Draw(v1, v2)
	var run forward.Run
	sim.Fit(&run, dr)
	gamma := dr.Outcome.Gamma()
	q, y = make([]float64, sc.T), make([]float64, sc.T)
	for t := range q {
		q[t] = forward.Predictive(run.Queries[t], dr.Demand.Sigma(), rng)
	}
	for t := range y {
		y[t] = forward.Predictive(run.Outcome[t]+gamma*(q[t]-sc.Queries[t]), dr.Outcome.Sigma(), rng) * sc.OutcomeScale
		q[t] *= sc.QueriesScale
	}
	return q, y, nil
}

// cutDataset returns the first n weeks of every region of ds (sharing the
// backing arrays).
func cutDataset(ds *data.Dataset, n int) *data.Dataset {
	out := &data.Dataset{Spec: ds.Spec, File: ds.File, Weeks: ds.Weeks[:n]}
	for _, r := range ds.Regions {
		c := r
		c.Series = cutSeries(r.Series, n)
		out.Regions = append(out.Regions, c)
	}
	return out
}

// panelHoldoutJob fits the panel on the weeks before the origin (every
// region's series cut after the forecast weeks, which are masked out of
// the likelihood) and forecasts every region's queries and outcome and
// their sum over the horizon.
func (sw *Sweep) panelHoldoutJob(ctx context.Context, j Job) ([]Record, error) {
	h := sw.set.Horizon
	cut := j.Origin + h
	ds := cutDataset(sw.pan.ds, cut)
	train := make([]bool, cut)
	for t := range j.Origin {
		train[t] = true
	}
	ps, err := model.ScalePanel(ds, train)
	if err != nil {
		return nil, err
	}
	f, err := sw.fitPanelTests(ctx, ps, j.Seed, sw.testsBefore(j.Origin))
	if err != nil {
		return nil, err
	}
	recs := panelFitRecords(j.Index, f)
	rng := rand.New(rand.NewPCG(j.Seed, 2))
	in := f.inputs()
	G := len(ps.Regions)
	nd := len(in.DemandDraws.Rows)
	// pred[g][k][i][d]: region g (G: the sum), stage k, week i, draw d
	pred := make([][2][][]float64, G+1)
	for g := range pred {
		for k := range 2 {
			pred[g][k] = make([][]float64, h)
			for i := range pred[g][k] {
				pred[g][k][i] = make([]float64, nd)
			}
		}
	}
	for g := range G {
		rin, err := in.Region(g)
		if err != nil {
			return nil, err
		}
		sc := ps.Scaled[g]
		sim, err := forward.New(sc, rin.Demand, rin.Outcome)
		if err != nil {
			return nil, err
		}
		var run forward.Run
		for d := range nd {
			dr := sim.Draw(rin.DemandDraws.Rows[d], rin.OutcomeDraws.Rows[d])
			sim.Fit(&run, dr)
			for i := range h {
				t := j.Origin + i
				q := forward.Predictive(run.Queries[t], dr.Demand.Sigma(), rng) * sc.QueriesScale
				y := forward.Predictive(run.Outcome[t], dr.Outcome.Sigma(), rng) * sc.OutcomeScale
				pred[g][0][i][d], pred[g][1][i][d] = q, y
				pred[G][0][i][d] += q
				pred[G][1][i][d] += y
			}
		}
	}
	national := cutSeries(sw.in.Series, cut)
	for g := range G + 1 {
		region, actual := "", [2][]float64{national.Queries, national.Outcome}
		if g < G {
			region = ps.Regions[g]
			actual = [2][]float64{ds.Regions[g].Queries, ds.Regions[g].Outcome}
		}
		for k := range 2 {
			recs = append(recs, withRegion(forecastRecords(j, f.panels[k].Name, sw.in.Series.Weeks, actual[k], pred[g][k], h), region)...)
		}
	}
	return recs, nil
}

// forecastRecords scores the predictive draws p[i] of weeks origin+i of
// one stage's series actual (raw units) against the truth and the
// seasonal rule, as holdoutJob does (no refit without media).
func forecastRecords(j Job, stage string, weeks []time.Time, actual []float64, p [][]float64, h int) []Record {
	var recs []Record
	point, rel := seasonalBaseline(actual[:j.Origin], j.Origin, h)
	for i := range h {
		t := j.Origin + i
		y := actual[t]
		sort.Float64s(p[i])
		mean, _ := stat.MeanSD(p[i])
		base := make([]float64, len(rel))
		for e, r := range rel {
			base[e] = point[i] * (1 + r)
		}
		if len(base) == 0 {
			base = []float64{point[i]}
		}
		sort.Float64s(base)
		week := weeks[t].Format(data.DateLayout)
		add := func(s string, v float64) {
			recs = append(recs, Record{Job: j.Index, Kind: "forecast", Name: stage, Window: week, Stat: s, Value: v})
		}
		add("actual", y)
		add("mean", mean)
		add("q05", stat.Quantile(p[i], 0.05))
		add("q50", stat.Quantile(p[i], 0.5))
		add("q95", stat.Quantile(p[i], 0.95))
		add("crps", score.CRPSSorted(p[i], y))
		add("base", point[i])
		add("base_q05", stat.Quantile(base, 0.05))
		add("base_q95", stat.Quantile(base, 0.95))
		add("base_crps", score.CRPSSorted(base, y))
	}
	return recs
}

// panelStabilityJob refits the panel without one quarter (masked in every
// region), without one region, or with another seed, and records the
// effects over the whole data.
func (sw *Sweep) panelStabilityJob(ctx context.Context, j Job, ref *panelFitted) ([]Record, error) {
	p := sw.pan
	ds := p.ds
	var train []bool
	tests := sw.in.Lifts
	switch {
	case j.Quarter != "":
		i := slices.IndexFunc(sw.windows, func(w window.Window) bool { return w.Name == j.Quarter })
		q := sw.windows[i]
		train = make([]bool, len(ds.Weeks))
		for t := range train {
			train[t] = t < q.From || t > q.To
		}
		tests = sw.testsOutside(q.From, q.To)
	case j.Region != "":
		tests = sw.testsWithoutRegion(j.Region)
		kept := *ds
		kept.Regions = nil
		for _, r := range ds.Regions {
			if r.Name != j.Region {
				kept.Regions = append(kept.Regions, r)
			}
		}
		ds = &kept
	}
	ps, err := model.ScalePanel(ds, train)
	if err != nil {
		return nil, err
	}
	f, err := sw.fitPanelTests(ctx, ps, j.Seed, tests)
	if err != nil {
		return nil, err
	}
	res, err := mediation.SplitPanel(f.inputs(), sw.windows[:1])
	if err != nil {
		return nil, err
	}
	recs := panelFitRecords(j.Index, f)
	if j.Region == "" {
		eff, err := panelEffectRecords(j.Index, res, false, nil)
		return append(recs, eff...), err
	}
	// the regions kept, each against its own reference effects; their
	// sum against the reference's sum over the same regions
	only := &mediation.PanelResult{Regions: res.Regions, Total: &mediation.Result{}}
	eff, err := panelEffectRecords(j.Index, only, false, nil)
	if err != nil {
		return nil, err
	}
	recs = append(recs, eff...)
	whole, err := sw.referenceSplit(ref)
	if err != nil {
		return nil, err
	}
	var kept []mediation.RegionResult
	for _, r := range whole.Regions {
		if r.Region != j.Region {
			kept = append(kept, r)
		}
	}
	refKept, err := mediation.SumRegions(kept)
	if err != nil {
		return nil, err
	}
	refMean := map[string][2]float64{}
	for _, e := range keyEffects(refKept.Total, false) {
		m, s := stat.MeanSD(e.Draws)
		refMean[truthKey("", e)] = [2]float64{m, s}
	}
	for _, e := range keyEffects(res.Total, false) {
		recs = append(recs, effectRecords(j.Index, e, nil)...)
		m, _ := stat.MeanSD(e.Draws)
		shift := math.NaN()
		if r, ok := refMean[truthKey("", e)]; ok && r[1] > 0 {
			shift = math.Abs(m-r[0]) / r[1]
		}
		recs = append(recs, Record{Job: j.Index, Kind: "effect", Name: e.Channel, Path: e.Path, Window: e.Window, Stat: "shift_sd", Value: shift})
	}
	return recs, nil
}

// panelPlaceboJob refits the panel with channel j.Channel's spend moved
// circularly by j.Shift weeks in every region and keeps that channel's
// effect summed over the regions.
func (sw *Sweep) panelPlaceboJob(ctx context.Context, j Job) ([]Record, error) {
	ds := sw.pan.ds
	moved := *ds
	moved.Regions = make([]data.Region, len(ds.Regions))
	for g, r := range ds.Regions {
		var err error
		if r.Series, err = shiftedSeries(r.Series, ds.Spec, j.Channel, j.Shift); err != nil {
			return nil, err
		}
		moved.Regions[g] = r
	}
	ps, err := model.ScalePanel(&moved, nil)
	if err != nil {
		return nil, err
	}
	f, err := sw.fitPanelTests(ctx, ps, j.Seed, nil)
	if err != nil {
		return nil, err
	}
	res, err := mediation.SplitPanel(f.inputs(), sw.windows[:1])
	if err != nil {
		return nil, err
	}
	return append(panelFitRecords(j.Index, f), placeboRecord(j.Index, res.Total, j.Channel)), nil
}

// panelID fingerprints a panel's data: every region's name and series,
// and the roles.
func panelID(ds *data.Dataset) string {
	var f fingerprint
	for _, r := range ds.Regions {
		f.str(r.Name)
		f.str(seriesID(r.Series, ds.Spec))
	}
	return f.sum()
}
