package validate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"sort"
	"sync"
	"time"

	"spillway/funnel/data"
	"spillway/funnel/forward"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
	"spillway/funnel/stat"
	"spillway/funnel/validate/score"
	"spillway/funnel/window"
	"spillway/mediation"
)

// Record is one raw number of one job, kept at full precision so that
// aggregation gives the same result whether the jobs ran in one process or
// in shards.
type Record struct {
	// Job is the job's index.
	Job int
	// Kind is "effect" (an effect's posterior summary, and its truth in
	// recovery), "param" (a simulation-based calibration rank), "forecast"
	// (one forecast week) or "fit" (a stage's convergence diagnostics).
	Kind string
	// Name is the channel (effect), parameter (param) or stage (forecast,
	// fit).
	Name string
	// Path is the effect's path (via_search, direct, total,
	// mediated_share, borrowed_share); empty otherwise.
	Path string
	// Window is the effect's window ("all", "2024Q3") or the forecast
	// week (YYYY-MM-DD); empty otherwise.
	Window string
	// Stat names the number (mean, sd, q05, ..., truth, rank, width,
	// actual, crps, ...).
	Stat  string
	Value float64
	// Region is the region of a region panel's per-region number; empty
	// for a national sweep's numbers and a panel's sums over regions.
	Region string
}

// effectStats are the summary numbers kept per effect and job.
var effectStats = []string{"mean", "sd", "q05", "q25", "q50", "q75", "q90", "q95"}

// Progress reports one finished job.
type Progress struct {
	// Done jobs of Total in this run (shard), Job the one just finished,
	// Seconds its wall time. The reference fit, when a shard fits it,
	// is reported first with Done 0; Total counts the other jobs.
	Done, Total int
	Job         Job
	Seconds     float64
}

// Run executes the jobs of shard (the zero Shard: all of them) and returns
// their records, sorted by job. Jobs run on a pool of GOMAXPROCS workers,
// each fit running its chains in parallel; every job's numbers depend only
// on its seed, so the records are the same whatever the number of cores or
// shards. progress, if not nil, is called after each job (never
// concurrently). Cancelling ctx stops the sweep and returns ctx.Err().
func (sw *Sweep) Run(ctx context.Context, shard Shard, progress func(Progress)) (*Results, error) {
	if shard.N > 1 && (shard.I < 1 || shard.I > shard.N) {
		panic("validate: bad shard")
	}
	var mine []Job
	for _, j := range sw.jobs {
		if shard.owns(j.Index) {
			mine = append(mine, j)
		}
	}
	man := sw.manifest
	man.Shard = shard.String()
	man.Ran = []int{}
	for _, j := range mine {
		man.Ran = append(man.Ran, j.Index)
	}
	var ref *fitted
	var pref *panelFitted // the reference of a panel sweep
	needRef := false
	for _, j := range mine {
		if j.Check == Reference || j.Check == Stability || (j.Check == Recovery && sw.gen.fromPosterior) {
			needRef = true
		}
	}
	var refRecs []Record
	if needRef {
		// every shard that needs the reference fits it (deterministically)
		// before its jobs start; the shard owning job 0 also keeps its
		// records
		t0 := time.Now()
		var err error
		if sw.pan != nil {
			if pref, err = sw.panelReference(ctx); err != nil {
				return nil, err
			}
			man.Reference = fitID(pref.fits[0], pref.fits[1])
		} else {
			if ref, err = sw.reference(ctx); err != nil {
				return nil, err
			}
			man.Reference = fitID(ref.fits[0], ref.fits[1])
		}
		if len(mine) > 0 && mine[0].Check == Reference {
			if sw.pan != nil {
				refRecs, err = sw.runPanelJob(ctx, mine[0], pref)
			} else {
				refRecs, err = sw.referenceJob(mine[0], ref)
			}
			if err != nil {
				return nil, err
			}
			mine = mine[1:]
		}
		if progress != nil && sw.in.Reference == nil {
			progress(Progress{Done: 0, Total: len(mine), Job: sw.jobs[0], Seconds: time.Since(t0).Seconds()})
		}
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	out := make([][]Record, len(mine))
	errs := make([]error, len(mine))
	next := make(chan int)
	var mu sync.Mutex
	done := 0
	var wg sync.WaitGroup
	for range max(1, min(runtime.GOMAXPROCS(0), len(mine))) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range next {
				t0 := time.Now()
				var recs []Record
				var err error
				if sw.pan != nil {
					recs, err = sw.runPanelJob(ctx, mine[k], pref)
				} else {
					recs, err = sw.runJob(ctx, mine[k], ref)
				}
				if err != nil {
					errs[k] = fmt.Errorf("validate: %s (job %d): %w", mine[k].Label, mine[k].Index, err)
					cancel()
					continue
				}
				out[k] = recs
				if progress != nil {
					mu.Lock()
					done++
					progress(Progress{Done: done, Total: len(mine), Job: mine[k], Seconds: time.Since(t0).Seconds()})
					mu.Unlock()
				}
			}
		}()
	}
	for k := range mine {
		if ctx.Err() != nil {
			break
		}
		next <- k
	}
	close(next)
	wg.Wait()
	var first error
	for _, e := range errs {
		if e != nil && !errors.Is(e, context.Canceled) {
			return nil, e
		}
		if e != nil && first == nil {
			first = e
		}
	}
	if first == nil && ctx.Err() != nil {
		first = ctx.Err()
	}
	if first != nil {
		return nil, first
	}
	res := &Results{Manifest: man, Records: refRecs}
	for _, r := range out {
		res.Records = append(res.Records, r...)
	}
	return res, nil
}

// fitted is a fit of both stages.
type fitted struct {
	sc   *model.Scaled
	st   [2]*model.Stage
	fits [2]*mcmc.Fit
}

func (f *fitted) inputs() *mediation.Inputs {
	return &mediation.Inputs{Data: f.sc, Demand: f.st[0], Outcome: f.st[1],
		DemandDraws: mediation.FromFit(f.fits[0]), OutcomeDraws: mediation.FromFit(f.fits[1])}
}

// fit fits the demand and outcome stages with the sweep's settings, the
// demand stage with seed and the outcome stage with seed+1.
func (sw *Sweep) fit(ctx context.Context, sc *model.Scaled, seed uint64) (*fitted, error) {
	f := &fitted{sc: sc}
	var err error
	if f.st[0], err = model.Demand(sc, sw.in.Options); err != nil {
		return nil, err
	}
	if f.st[1], err = model.Outcome(sc, sw.in.Options); err != nil {
		return nil, err
	}
	for k, st := range f.st {
		tg, err := st.Target()
		if err != nil {
			return nil, fmt.Errorf("%s stage: %w", st.Name, err)
		}
		set := mcmc.Settings{Chains: sw.set.Chains, Warmup: sw.set.Warmup, Draws: sw.set.Draws, Seed: seed + uint64(k),
			TargetAccept: pipeline.StageAccept(st)}
		if f.fits[k], err = mcmc.Run(ctx, tg, &set); err != nil {
			return nil, fmt.Errorf("%s stage: %w", st.Name, err)
		}
	}
	return f, nil
}

// reference returns the given reference fit, or fits one to the whole
// data with the sweep's seed.
func (sw *Sweep) reference(ctx context.Context) (*fitted, error) {
	if r := sw.in.Reference; r != nil {
		return &fitted{sc: sw.base, st: sw.stages, fits: [2]*mcmc.Fit{r.Demand, r.Outcome}}, nil
	}
	f, err := sw.fitTests(ctx, sw.base, sw.set.Seed, sw.in.Lifts)
	if err != nil {
		return nil, fmt.Errorf("validate: reference fit: %w", err)
	}
	return f, nil
}

// runJob computes one job's records.
func (sw *Sweep) runJob(ctx context.Context, j Job, ref *fitted) ([]Record, error) {
	switch j.Check {
	case Reference:
		return sw.referenceJob(j, ref)
	case Recovery:
		return sw.recoveryJob(ctx, j, ref)
	case Holdout:
		return sw.holdoutJob(ctx, j)
	case Stability:
		return sw.stabilityJob(ctx, j, ref)
	case Placebo:
		return sw.placeboJob(ctx, j)
	}
	panic("validate: unknown check " + j.Check)
}

func (sw *Sweep) referenceJob(j Job, ref *fitted) ([]Record, error) {
	res, err := mediation.Split(ref.inputs(), sw.windows[:1])
	if err != nil {
		return nil, err
	}
	recs := fitRecords(j.Index, ref)
	for _, e := range keyEffects(res, false) {
		recs = append(recs, effectRecords(j.Index, e, nil)...)
	}
	if sw.set.has(Placebo) {
		for _, col := range append(append([]string(nil), sw.in.Spec.Upper...), sw.in.Spec.Search...) {
			recs = append(recs, placeboRecord(j.Index, res, col))
		}
	}
	return recs, nil
}

// placeboRecord is the posterior mean of the effect the placebo check
// compares for channel col: an upper-funnel channel's total effect, paid
// search's controlled effect, over the whole data.
func placeboRecord(job int, res *mediation.Result, col string) Record {
	v := math.NaN()
	for _, e := range append(append([]mediation.Effect(nil), res.Effects...), res.Borrowed...) {
		if e.Channel == col && e.Window == "all" && (e.Path == "total" || e.Path == "controlled") {
			v, _ = stat.MeanSD(e.Draws)
		}
	}
	return Record{Job: job, Kind: "placebo", Name: col, Stat: "estimate", Value: v}
}

// placeboJob refits the data with channel j.Channel's spend moved
// circularly by j.Shift weeks and keeps that channel's effect.
func (sw *Sweep) placeboJob(ctx context.Context, j Job) ([]Record, error) {
	moved, err := shiftedSeries(sw.in.Series, sw.in.Spec, j.Channel, j.Shift)
	if err != nil {
		return nil, err
	}
	f, err := sw.fitTests(ctx, model.Scale(moved, sw.in.Spec), j.Seed, nil)
	if err != nil {
		return nil, err
	}
	res, err := mediation.Split(f.inputs(), sw.windows[:1])
	if err != nil {
		return nil, err
	}
	return append(fitRecords(j.Index, f), placeboRecord(j.Index, res, j.Channel)), nil
}

func (sw *Sweep) recoveryJob(ctx context.Context, j Job, ref *fitted) ([]Record, error) {
	rng := rand.New(rand.NewPCG(j.Seed, 1))
	var in *mediation.Inputs
	if ref != nil {
		in = ref.inputs()
	}
	v1, v2, err := sw.gen.draw(j.Replicate, rng, in)
	if err != nil {
		return nil, err
	}
	rep, err := sw.simulate(sw.gen, v1, v2, rng)
	if err != nil {
		return nil, err
	}
	tests, err := sw.simulatedTests(rep, rng)
	if err != nil {
		return nil, err
	}
	f, err := sw.fitTests(ctx, rep.sc, j.Seed, tests)
	if err != nil {
		return nil, err
	}
	res, err := mediation.Split(f.inputs(), sw.windows)
	if err != nil {
		return nil, err
	}
	truth := map[string]float64{}
	for _, e := range append(append([]mediation.Effect(nil), rep.effects.Effects...), rep.effects.Borrowed...) {
		truth[e.Channel+"\x00"+e.Path+"\x00"+e.Window] = e.Draws[0]
	}
	recs := fitRecords(j.Index, f)
	for _, e := range keyEffects(res, true) {
		tv, ok := truth[e.Channel+"\x00"+e.Path+"\x00"+e.Window]
		if !ok {
			return nil, fmt.Errorf("validate: no true value for %s %s %s", e.Channel, e.Path, e.Window)
		}
		recs = append(recs, effectRecords(j.Index, e, &tv)...)
	}
	// simulation-based calibration ranks of the key parameters
	for k, st := range f.st {
		u := rep.u1
		if k == 1 {
			u = rep.u2
		}
		l := st.Layout()
		for i, name := range st.Names() {
			if !l.IsCoefficient(i) {
				continue
			}
			chains := f.fits[k].Column(name)
			var pooled []float64
			for _, c := range chains {
				pooled = append(pooled, c...)
			}
			ess := mcmc.ESSBulk(chains)
			if math.IsNaN(ess) {
				ess = 1
			}
			rank, width := score.ThinnedRank(pooled, ess, u[i])
			recs = append(recs,
				Record{Job: j.Index, Kind: "param", Name: name, Stat: "truth", Value: u[i]},
				Record{Job: j.Index, Kind: "param", Name: name, Stat: "rank", Value: float64(rank)},
				Record{Job: j.Index, Kind: "param", Name: name, Stat: "width", Value: float64(width)})
		}
	}
	return recs, nil
}

// keyEffects returns the effects the checks compare: every path of each
// upper channel over the whole data (and, with quarters, the via-search,
// direct and total effects of every quarter), and each paid-search
// channel's borrowed-demand share.
func keyEffects(res *mediation.Result, quarters bool) []mediation.Effect {
	var out []mediation.Effect
	for _, e := range res.Effects {
		if e.Window == "all" || (quarters && e.Path != "mediated_share") {
			out = append(out, e)
		}
	}
	for _, e := range res.Borrowed {
		// the share is a ratio of coefficients, the same in every window
		if e.Path == "borrowed_share" && e.Window == "all" {
			out = append(out, e)
		}
	}
	return out
}

// effectRecords summarises one effect's draws, with its truth when given.
func effectRecords(job int, e mediation.Effect, truth *float64) []Record {
	s := append([]float64(nil), e.Draws...)
	sort.Float64s(s)
	mean, sd := stat.MeanSD(s)
	vals := []float64{mean, sd, stat.Quantile(s, 0.05), stat.Quantile(s, 0.25), stat.Quantile(s, 0.5),
		stat.Quantile(s, 0.75), stat.Quantile(s, 0.9), stat.Quantile(s, 0.95)}
	recs := make([]Record, 0, len(vals)+1)
	if truth != nil {
		recs = append(recs, Record{Job: job, Kind: "effect", Name: e.Channel, Path: e.Path, Window: e.Window, Stat: "truth", Value: *truth})
	}
	for i, v := range vals {
		recs = append(recs, Record{Job: job, Kind: "effect", Name: e.Channel, Path: e.Path, Window: e.Window, Stat: effectStats[i], Value: v})
	}
	return recs
}

// fitRecords keeps each stage's worst convergence numbers; NaN where they
// cannot be computed (mcmc.Worst).
func fitRecords(job int, f *fitted) []Record {
	var recs []Record
	for k, fit := range f.fits {
		recs = append(recs, stageRecords(job, f.st[k].Name, fit)...)
	}
	return recs
}

// stageRecords are one stage's worst convergence numbers.
func stageRecords(job int, name string, fit *mcmc.Fit) []Record {
	rh, eb, et := mcmc.Worst(mcmc.Summarize(fit))
	div := 0
	for _, c := range fit.Chains {
		div += c.Stats.Divergences
	}
	return []Record{
		{Job: job, Kind: "fit", Name: name, Stat: "rhat_max", Value: rh},
		{Job: job, Kind: "fit", Name: name, Stat: "ess_bulk_min", Value: eb},
		{Job: job, Kind: "fit", Name: name, Stat: "ess_tail_min", Value: et},
		{Job: job, Kind: "fit", Name: name, Stat: "divergences", Value: float64(div)}}
}

// holdoutJob fits the weeks before the origin (the series cut after the
// forecast weeks, so the forecast weeks are masked out of the likelihood
// but their spend still feeds the adstock) and forecasts the horizon from
// the posterior predictive: demand m + sigma_q e, outcome n (with the
// actual queries) + sigma_y e, in raw units.
func (sw *Sweep) holdoutJob(ctx context.Context, j Job) ([]Record, error) {
	h := sw.set.Horizon
	cut := j.Origin + h
	s := cutSeries(sw.in.Series, cut)
	train := make([]bool, cut)
	for t := range j.Origin {
		train[t] = true
	}
	sc := model.ScaleTrain(s, sw.in.Spec, train)
	f, err := sw.fitTests(ctx, sc, j.Seed, sw.testsBefore(j.Origin))
	if err != nil {
		return nil, err
	}
	recs := fitRecords(j.Index, f)
	rng := rand.New(rand.NewPCG(j.Seed, 2))
	d1, d2 := mediation.FromFit(f.fits[0]), mediation.FromFit(f.fits[1])
	nd := len(d1.Rows)
	pred := [2][][]float64{}
	for k := range pred {
		pred[k] = make([][]float64, h)
		for i := range pred[k] {
			pred[k][i] = make([]float64, nd)
		}
	}
	sim, err := forward.New(sc, f.st[0], f.st[1])
	if err != nil {
		return nil, err
	}
	var run forward.Run
	for d := 0; d < nd; d++ {
		dr := sim.Draw(d1.Rows[d], d2.Rows[d])
		sim.Fit(&run, dr) // the forecast weeks' spend and queries are data
		for i := 0; i < h; i++ {
			t := j.Origin + i
			pred[0][i][d] = forward.Predictive(run.Queries[t], dr.Demand.Sigma(), rng) * sc.QueriesScale
			pred[1][i][d] = forward.Predictive(run.Outcome[t], dr.Outcome.Sigma(), rng) * sc.OutcomeScale
		}
	}
	bare, err := sw.fitBare(ctx, f, j.Seed)
	if err != nil {
		return nil, err
	}
	recs = append(recs, fitRecords(j.Index, bare)...)
	bpred := bare.forecast(j.Origin, h, rand.New(rand.NewPCG(j.Seed, 3)))
	for k, actual := range [][]float64{s.Queries, s.Outcome} {
		name := f.st[k].Name
		point, rel := seasonalBaseline(actual[:j.Origin], j.Origin, h)
		for i := 0; i < h; i++ {
			t := j.Origin + i
			week := s.Weeks[t].Format(data.DateLayout)
			y := actual[t]
			p := pred[k][i]
			sort.Float64s(p)
			mean, _ := stat.MeanSD(p)
			base := make([]float64, len(rel))
			for e, r := range rel {
				base[e] = point[i] * (1 + r)
			}
			if len(base) == 0 {
				base = []float64{point[i]}
			}
			sort.Float64s(base)
			add := func(stat string, v float64) {
				recs = append(recs, Record{Job: j.Index, Kind: "forecast", Name: name, Window: week, Stat: stat, Value: v})
			}
			add("actual", y)
			add("mean", mean)
			add("q05", stat.Quantile(p, 0.05))
			add("q50", stat.Quantile(p, 0.5))
			add("q95", stat.Quantile(p, 0.95))
			add("crps", score.CRPSSorted(p, y))
			add("base", point[i])
			add("base_q05", stat.Quantile(base, 0.05))
			add("base_q95", stat.Quantile(base, 0.95))
			add("base_crps", score.CRPSSorted(base, y))
			b := bpred[k][i]
			sort.Float64s(b)
			bmean, _ := stat.MeanSD(b)
			add("bare_mean", bmean)
			add("bare_q05", stat.Quantile(b, 0.05))
			add("bare_q95", stat.Quantile(b, 0.95))
			add("bare_crps", score.CRPSSorted(b, y))
		}
	}
	return recs, nil
}

// fitBare fits f's stages again without any media term (no upper-funnel
// or paid-search channel; the outcome stage keeps its query term, so it
// asks whether the media terms add anything once the queries are known,
// and the demand stage whether spend explains the queries at all), on the
// same weeks, seeds seed+2 and seed+3. The stages' names get the suffix
// "_no_media".
func (sw *Sweep) fitBare(ctx context.Context, f *fitted, seed uint64) (*fitted, error) {
	b := &fitted{sc: f.sc}
	for k, st := range f.st {
		bs := *st
		bs.Name = st.Name + "_no_media"
		bs.Channels = nil
		b.st[k] = &bs
		tg, err := bs.Target()
		if err != nil {
			return nil, fmt.Errorf("%s stage: %w", bs.Name, err)
		}
		set := mcmc.Settings{Chains: sw.set.Chains, Warmup: sw.set.Warmup, Draws: sw.set.Draws, Seed: seed + 2 + uint64(k),
			TargetAccept: pipeline.DefaultTargetAccept}
		if b.fits[k], err = mcmc.Run(ctx, tg, &set); err != nil {
			return nil, fmt.Errorf("%s stage: %w", bs.Name, err)
		}
	}
	return b, nil
}

// forecast returns each stage's posterior predictive draws, in raw units,
// of the h weeks from origin, stage by stage ([stage][week][draw]): the
// linear predictor at each draw (the outcome stage with the actual
// queries) plus sigma times a standard normal from rng.
func (f *fitted) forecast(origin, h int, rng *rand.Rand) [2][][]float64 {
	var out [2][][]float64
	scale := [2]float64{f.sc.QueriesScale, f.sc.OutcomeScale}
	for k, st := range f.st {
		l := st.Layout()
		out[k] = make([][]float64, h)
		rows := mediation.FromFit(f.fits[k]).Rows
		for i := range out[k] {
			out[k][i] = make([]float64, len(rows))
		}
		var m []float64
		for d, v := range rows {
			m = st.Predict(m, v)
			sigma := l.View(v).Sigma()
			for i := 0; i < h; i++ {
				out[k][i][d] = forward.Predictive(m[origin+i], sigma, rng) * scale[k]
			}
		}
	}
	return out
}

// seasonalBaseline forecasts weeks origin..origin+h-1 from the training
// weeks x (len origin >= BaselineLag+LevelWeeks): the same week a year
// earlier times the recent level, level(o) = mean(x[o-8:o]) /
// mean(x[o-60:o-52]). Its predictive spread comes from the relative errors
// y/forecast - 1 of the same rule backtested inside the training weeks
// (every earlier origin o' with o'+h <= origin, at horizons 1..h); rel is
// empty when the training weeks are too few for any backtest.
func seasonalBaseline(x []float64, origin, h int) (point, rel []float64) {
	level := func(o int) float64 {
		var a, b float64
		for t := o - LevelWeeks; t < o; t++ {
			a += x[t]
			b += x[t-BaselineLag]
		}
		if b == 0 {
			return 1
		}
		return a / b
	}
	point = make([]float64, h)
	L := level(origin)
	for i := range point {
		point[i] = x[origin+i-BaselineLag] * L
	}
	for o := BaselineLag + LevelWeeks; o+h <= origin; o++ {
		L := level(o)
		for i := 0; i < h; i++ {
			t := o + i
			if f := x[t-BaselineLag] * L; f != 0 {
				rel = append(rel, x[t]/f-1)
			}
		}
	}
	return point, rel
}

// cutSeries returns the first n weeks of s (sharing the backing arrays).
func cutSeries(s data.Series, n int) data.Series {
	cut := func(cols [][]float64) [][]float64 {
		if cols == nil {
			return nil
		}
		out := make([][]float64, len(cols))
		for i, c := range cols {
			if c != nil { // an exposure of a channel without one
				out[i] = c[:n]
			}
		}
		return out
	}
	return data.Series{Weeks: s.Weeks[:n], Upper: cut(s.Upper), Search: cut(s.Search),
		Queries: s.Queries[:n], Outcome: s.Outcome[:n], Controls: cut(s.Controls),
		Exposure: cut(s.Exposure), Frequency: cut(s.Frequency)}
}

// stabilityJob refits without one quarter (masked out of the likelihood)
// or with another seed, and keeps the effects over the whole data.
func (sw *Sweep) stabilityJob(ctx context.Context, j Job, ref *fitted) ([]Record, error) {
	sc, tests := sw.base, sw.in.Lifts
	if j.Quarter != "" {
		i := slices.IndexFunc(sw.windows, func(w window.Window) bool { return w.Name == j.Quarter })
		q := sw.windows[i]
		train := make([]bool, sc.T)
		for t := range train {
			train[t] = t < q.From || t > q.To
		}
		sc = model.ScaleTrain(sw.in.Series, sw.in.Spec, train)
		tests = sw.testsOutside(q.From, q.To)
	}
	f, err := sw.fitTests(ctx, sc, j.Seed, tests)
	if err != nil {
		return nil, err
	}
	res, err := mediation.Split(f.inputs(), sw.windows[:1])
	if err != nil {
		return nil, err
	}
	recs := fitRecords(j.Index, f)
	for _, e := range keyEffects(res, false) {
		recs = append(recs, effectRecords(j.Index, e, nil)...)
	}
	return recs, nil
}
