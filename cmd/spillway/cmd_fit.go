package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strings"

	"github.com/spf13/pflag"
	"golang.org/x/term"

	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
	"spillway/funnel/lifts"
	"spillway/funnel/mcmc"
	"spillway/funnel/mcmc/progress"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
)

// samplingFlags are the options of every command that fits the model.
type samplingFlags struct {
	out                   string
	force                 bool
	seed                  uint64
	chains, warmup, draws int
	priors                string
	linear                []string
	drift                 []string
	driftShape            string
	baseline              string
	lifts                 string
	quiet                 bool
	targetAccept          float64
	labels                labelFlags // fit and run only
	national              bool       // fit and run only
	shard                 shardFlags // fit and run only
}

func (s *samplingFlags) addFlags(fs *pflag.FlagSet) {
	s.addFlagsWith(fs, samplingDefaults{mcmc.DefaultChains, mcmc.DefaultWarmup, mcmc.DefaultDraws,
		"random seed; the same data, flags and seed give the same draws", "chains", "iterations per chain"})
	fs.Float64Var(&s.targetAccept, "target-accept", 0, "the acceptance rate the step size adapts to during warm-up (default 0.9; 0.95 for a national fit with --drift; 0.99 for a region panel's outcome and naive stages, whose warm-up adapts at 0.9 until its last window); raise it (0.95; on a panel, where it applies to every stage, 0.995) if the verdict reports divergent transitions")
	fs.StringVar(&s.lifts, "lifts", "", "a CSV `FILE` of lift tests fitted as data: channel,start,end,estimate,se[,metric,region]")
	s.labels.addFlags(fs)
	fs.BoolVar(&s.national, "national", false, "fit regional data (--region) as their national sum, one series, as national data are fitted")
	s.shard.addFlags(fs)
}

// samplingDefaults are the defaults and help words that differ between the
// commands that fit (fit, run) and the one that refits many times (validate).
type samplingDefaults struct {
	chains, warmup, draws int
	seedHelp              string
	chainsWhat, iterWhat  string // "chains" / "chains per refit"; "iterations per chain" / "... of each refit"
}

func (s *samplingFlags) addFlagsWith(fs *pflag.FlagSet, d samplingDefaults) {
	fs.StringVar(&s.out, "out", "", "the output `FOLDER` (written atomically; must not exist unless --force)")
	fs.BoolVar(&s.force, "force", false, "replace the output folder if it exists and spillway wrote it (never one holding an input or files spillway did not write)")
	fs.Uint64Var(&s.seed, "seed", 1, d.seedHelp)
	fs.IntVar(&s.chains, "chains", d.chains, "number of "+d.chainsWhat+", run in parallel")
	fs.IntVar(&s.warmup, "warmup", d.warmup, "warm-up "+d.iterWhat)
	fs.IntVar(&s.draws, "draws", d.draws, "kept draws per chain"+strings.TrimPrefix(d.iterWhat, "iterations per chain"))
	fs.StringVar(&s.priors, "priors", "", "a CSV `FILE` of prior overrides: parameter,family,p1,p2; with the columns window,per also priors on returns, e.g. return[video_spend],lognormal90,0.5,3,2025Q3,1000")
	fs.StringSliceVar(&s.linear, "linear", nil, "spend `COLUMNS` whose effect is linear (no adstock, no saturation)")
	fs.StringSliceVar(&s.drift, "drift", nil, "spend `COLUMNS` (or all) whose effectiveness drifts smoothly over time, on every path they have")
	fs.StringVar(&s.driftShape, "drift-shape", "", "with --drift: smooth (the default) or jumps (smooth, plus sudden changes at about monthly candidate weeks)")
	fs.StringVar(&s.baseline, "baseline", "", "the baseline: line (a trend line plus seasons, the default) or smooth (a smooth function of time in place of the line)")
	fs.BoolVar(&s.quiet, "quiet", false, "no progress on standard error")
}

func (s *samplingFlags) validate() error {
	switch {
	case s.chains < 1:
		return usagef("--chains must be at least 1")
	case s.chains > 64:
		return usagef("--chains %d is more than 64", s.chains)
	case s.warmup < 20:
		return usagef("--warmup must be at least 20 (the step size and mass matrix adapt during warm-up)")
	case s.draws < 10:
		return usagef("--draws must be at least 10")
	case s.targetAccept != 0 && !(s.targetAccept >= 0.5 && s.targetAccept < 1):
		return usagef("--target-accept %g: expected a rate from 0.5 to below 1", s.targetAccept)
	}
	return nil
}

// modelOptions turns --linear and --priors into model options, checked
// against the data before any sampling: an unknown --linear column is a
// usage error, a bad priors file bad data.
func modelOptions(sc *model.Scaled, s *samplingFlags) (model.Options, error) {
	o, err := pipeline.Choices{Linear: s.linear, Priors: s.priors, Drift: s.drift, DriftShape: s.driftShape, Baseline: s.baseline}.Options(sc)
	var le *pipeline.LinearError
	var ce *pipeline.ChoiceError
	switch {
	case errors.As(err, &le):
		return o, usagef("--linear %v", err)
	case errors.As(err, &ce):
		return o, usagef("--%s %v", ce.Flag, err)
	case err != nil:
		return o, badData(err)
	}
	return o, nil
}

// fitOptions are the flags of spillway fit.
type fitOptions struct {
	roles    roleFlags
	sampling samplingFlags
}

func (o *fitOptions) addFlags(fs *pflag.FlagSet) {
	o.roles.addFlags(fs)
	o.sampling.addFlags(fs)
}

// newFitCommand builds spillway fit.
func newFitCommand() *command {
	var opts fitOptions
	fs := newFlagSet("fit")
	opts.addFlags(fs)
	return &command{
		name:  "fit",
		usage: "fit --data FILE (roles) --out FOLDER [flags]",
		short: "fit the demand, outcome and naive stages",
		long: `Fit checks the data and fits the model's three stages one after another, each
with several chains in parallel (No-U-Turn Sampler): demand (branded queries on
upper-funnel spend), outcome (the outcome on queries, paid search and the
upper funnel directly) and naive (the outcome stage without queries, a
cross-check for paid search). It writes FOLDER/spec.json, FOLDER/data.csv, and
for each stage FOLDER/STAGE/draws.csv, summary.csv and stats.json, and
FOLDER/verdict.txt: whether the fit deserves trust (R-hat <= 1.01, bulk and
tail ESS >= 400, no divergent transitions, E-BFMI >= 0.3) and why not, and
whether the data support the media effects at all: the outcome stage must
predict left-out weeks better than the same stage without any media term
(PSIS-LOO); if it does not, the fit is not trustworthy. 'spillway split'
adds which effects the data cannot tell from zero or from the prior.
With --region COL and more than one region, the stages are region panels:
each region scaled by its own means, with its own intercept and query and
media coefficients pooled towards the regions' typical values (their
spreads, tau_..., are learned and printed); trend, seasons, controls,
transforms and noise are shared. --national fits the regions' national sum
instead, as one series (recorded in spec.json); return priors and
measured exposure need it for now. --drift on a panel drifts every
region's coefficient by the same multiplier, and --baseline smooth puts
one smooth function of time, shared by the regions, in place of their
shared trend line. On a panel a
lift test may name a region (the column region): it removed the channel's
spend in that region alone and measured that region's metric; a test
without one removed it in every region and measured the sum.

With --drift, the named channels' effectiveness may change over time: each
coefficient is multiplied by a smooth function of the week whose logarithm
averages 0 over the data, its smoothness learned (the cross-check refit
without the query term does not drift); FOLDER/drift.csv holds each weekly
multiplier with its 90% interval and FOLDER/drift_change.csv the last full
quarter's against the first's. An upper-funnel channel's two paths (its
lift of the queries and its direct effect) are taken to drift together,
as a new creative or its wearing out moves both: that ties the two
stages, so they are fitted as one. --drift-shape jumps lets the drift
also jump, at candidate weeks about a month apart, for a sudden change
such as a creative refresh, which a smooth drift spreads over months; the
two paths then tend to jump in the same week. --baseline smooth puts a
smooth function of time in place of the trend line. --lifts FILE adds lift tests as data
(channel,start,end,estimate,se and optionally metric, outcome or queries):
removing the channel's spend from start to end (week start dates) lowered
the metric summed over those weeks by estimate; an outcome test ties the
two stages, which are then fitted as one. FOLDER/lifts.csv puts each test
beside the model's posterior and checks it against the rest of the data
(the test left out by reweighting the draws, or by a refit without it when
that is unreliable); a line on standard output names any test the rest of
the data contradict.

A --priors file with the header parameter,family,p1,p2,window,per also takes
priors on returns: return[COL] (incremental outcome per PER of spend in
WINDOW) or incremental[COL], optionally _via_search or _direct, family
lognormal90 (p1, p2 the 5% and 95% quantiles) or lognormal (mean, sd). The
stated return becomes the prior of the channel's coefficients given the
other parameters, the two stages are fitted as one, and 'spillway split'
writes priors_implied.csv: each return as stated, under the priors and
under the posterior.

With --chain I/N it samples only chain I of N of every stage (bit for bit
chain I of a run of N chains with the same seed) into FOLDER, a shard
folder: that chain's draws, the data and what the merge checks, nothing a
reader could take for a fit. Run one job per chain on a batch engine, then
'spillway fit --merge FOLDER... --out FOLDER' checks that the shards are
the chains of one fit, each once, and writes the fit folder one run of N
chains writes, byte for byte but for recorded times.

EXAMPLE
  spillway fit --data sales.csv --date week --upper video,audio --search search \
    --queries brand_queries --outcome orders --controls price --out fit1
  spillway fit --data sales.csv ... --chain 2/4 --out chains/chain2   # one job per chain
  spillway fit --merge chains/chain* --out fit1

` + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			return runFitCommand(ctx, &opts, args, stdout, stderr)
		},
	}
}

// runFitCommand fits the data and commits the fit folder.
func runFitCommand(ctx context.Context, o *fitOptions, args []string, stdout, stderr io.Writer) error {
	if o.sampling.shard.merge {
		return mergeFit(ctx, "fit", &o.sampling, args, stdout, stderr)
	}
	if err := noArgs(args); err != nil {
		return err
	}
	od, err := runFit(ctx, &o.roles, &o.sampling, "", nil, stdout, stderr)
	if err != nil {
		return err
	}
	defer od.Abort()
	if err := od.Commit(); err != nil {
		return err
	}
	if od.chain != "" {
		printShardWritten(stdout, od, "fit")
		return nil
	}
	fmt.Fprintf(stdout, "fit written to %s\n", od.Final())
	return nil
}

// fitRun is a fit written into a temporary output folder, which the caller
// commits (after adding more, as run does) or aborts, and the fit in memory.
type fitRun struct {
	*outDir
	fit *fitFolder
	// chain is "I/N" when the folder is one chain's shard folder.
	chain string
}

// runFit fits and writes the fit folder into a temporary output folder.
// With demo set, the data are that built-in scenario and roles are ignored.
// Each of checks is run on the loaded data before any sampling (run checks
// its --window there), so that a mistake costs no fit. With --chain it
// samples that chain alone and writes the shard folder instead (fitRun's
// chain set, fit nil); review is what run records in it.
func runFit(ctx context.Context, roles *roleFlags, opts *samplingFlags, demo string, review *fitfolder.Review, stdout, stderr io.Writer, checks ...func(*data.Dataset) error) (_ *fitRun, err error) {
	if err := opts.validate(); err != nil {
		return nil, err
	}
	only, err := opts.shard.chains(opts)
	if err != nil {
		return nil, err
	}
	out, err := newOutDir(opts.out, opts.force, append(roles.inputs(), opts.priors)...)
	if err != nil {
		return nil, err
	}
	dropNote(stderr, out)
	defer func() {
		if err != nil {
			out.Abort()
		}
	}()
	od := out
	p, err := planFit(roles, opts, demo, stderr, checks...)
	if err != nil {
		return nil, err
	}
	p.set.Only = only
	hook := progressHook(ctx, opts, len(only), stderr)
	if p.panel != nil {
		pf, err := pipeline.FitPanelLifts(ctx, p.panel, p.o, p.tests, p.set, hook)
		if err != nil {
			return nil, err
		}
		if only != nil {
			return writeShard(od, p, pf.Fits[:], pf.Wall[:], review, stdout)
		}
		ff, err := finishPanelFit(ctx, od, p, pf, hook, stdout, stderr)
		if err != nil {
			return nil, err
		}
		return &fitRun{outDir: od, fit: ff}, nil
	}
	fitted, err := pipeline.FitLifts(ctx, p.sc, p.o, p.tests, p.set, hook)
	if err != nil {
		return nil, err
	}
	base, bf, err := pipeline.FitBaseline(ctx, p.sc, p.o, p.set)
	if err != nil {
		return nil, err
	}
	if only != nil {
		return writeShard(od, p, append(fitted.Fits[:], bf), append(fitted.Wall[:], 0), review, stdout)
	}
	ff, err := finishFit(ctx, od, p, fitted, base, bf, hook, stdout, stderr)
	if err != nil {
		return nil, err
	}
	return &fitRun{outDir: od, fit: ff}, nil
}

// fitPlan is a fit ready to sample, or whose chains are sampled: the
// checked data, the model options and lift tests, what spec.json records
// and the sampler's settings.
type fitPlan struct {
	run        fitfolder.Run
	ds         *data.Dataset
	sc         *model.Scaled
	o          model.Options
	priorBytes []byte
	liftBytes  []byte
	tests      []lifts.Test
	set        mcmc.Settings
	// panel is the data scaled region by region when they are fitted as
	// a region panel (more than one region, no --national); sc is then its
	// first region's, for the names and weeks every region shares.
	panel *model.PanelScaled
}

// planFit loads and checks the data and the options of a fit.
func planFit(roles *roleFlags, opts *samplingFlags, demo string, stderr io.Writer, checks ...func(*data.Dataset) error) (*fitPlan, error) {
	var ds *data.Dataset
	var err error
	if demo != "" {
		if ds, err = demoData(demo); err != nil {
			return nil, err
		}
	} else if ds, err = roles.load(); err != nil {
		return nil, err
	}
	for _, check := range checks {
		if err := check(ds); err != nil {
			return nil, err
		}
	}
	if opts.national && ds.Spec.Region == "" {
		return nil, usagef("--national fits the national sum of regional data, but the data have no region column; name it with --region, or leave out --national")
	}
	for _, w := range ds.Warnings {
		fmt.Fprintf(stderr, "spillway: warning: %s\n", w.Message)
	}
	labels, err := opts.labels.resolve(ds.Spec)
	if err != nil {
		return nil, err
	}
	p := &fitPlan{ds: ds}
	if len(ds.Regions) > 1 && !opts.national {
		if err := panelChoices(opts, ds.Spec); err != nil {
			return nil, err
		}
		if p.panel, err = model.ScalePanel(ds, nil); err != nil {
			return nil, badData(fmt.Errorf("%s: %w", ds.File, err))
		}
		p.sc = p.panel.Scaled[0]
		fmt.Fprintf(stderr, "spillway: note: %d regions are fitted as a region panel (each region's own intercept and media coefficients, pooled towards the regions' typical values); --national fits their national sum instead\n", len(ds.Regions))
	} else {
		if len(ds.Regions) > 1 {
			fmt.Fprintf(stderr, "spillway: note: %d regions are fitted as their national sum (--national)\n", len(ds.Regions))
		}
		p.sc = model.Scale(ds.National(), ds.Spec)
	}
	if p.o, err = modelOptions(p.sc, opts); err != nil {
		return nil, err
	}
	if p.panel != nil && len(p.o.Returns) > 0 {
		return nil, usagef("--priors %s: priors on returns are not part of the region panel yet; leave out the return rows, or add --national to fit the regions' sum", opts.priors)
	}
	if opts.priors != "" {
		if p.priorBytes, err = os.ReadFile(opts.priors); err != nil {
			return nil, badData(err)
		}
	}
	if opts.lifts != "" {
		load := lifts.Load
		if p.panel != nil {
			load = lifts.LoadPanel
		}
		if p.tests, err = load(opts.lifts, ds); err != nil {
			return nil, badData(err)
		}
		if p.liftBytes, err = os.ReadFile(opts.lifts); err != nil {
			return nil, badData(err)
		}
	}
	p.run = fitfolder.Run{Spec: ds.Spec, Demo: demo, Seed: opts.seed, Chains: opts.chains, Warmup: opts.warmup, Draws: opts.draws, Accept: opts.targetAccept,
		Linear: opts.linear, Priors: opts.priors, Drift: opts.drift, DriftShape: p.o.DriftShape, Baseline: p.o.Baseline, Lifts: opts.lifts, DataFile: "data.csv", Version: spillwayVersion(), Labels: labels, National: opts.national}
	p.run.Command = rerunCommand(rerunVerb(&p.run), &p.run, opts.out)
	p.set = mcmc.Settings{Chains: opts.chains, Warmup: opts.warmup, Draws: opts.draws, Seed: opts.seed, TargetAccept: opts.targetAccept}
	return p, nil
}

// panelChoices refuses the options the region panel does not have yet,
// before any data are scaled: each names --national, which has them. An
// exposure column is a panel's channel input like spend; its measurement
// break, error and frequency are terms of the national model only.
func panelChoices(opts *samplingFlags, spec data.Spec) error {
	var flags []string
	for _, e := range spec.Exposure {
		if e.Break != "" {
			flags = append(flags, "--exposure-break")
		}
		if e.Error > 0 {
			flags = append(flags, "--exposure-error")
		}
		if e.Frequency != "" {
			flags = append(flags, "--frequency")
		}
	}
	slices.Sort(flags)
	flags = slices.Compact(flags)
	if len(flags) > 0 {
		return usagef("%s: not part of the region panel yet; add --national to fit the regions' national sum with %s", strings.Join(flags, ", "), strings.Join(flags, ", "))
	}
	return nil
}

// rerunVerb is the command spec.json's command line names: run for the
// built-in demo (which only run has), fit otherwise.
func rerunVerb(r *fitfolder.Run) string {
	if r.Demo != "" {
		return "run"
	}
	return "fit"
}

// finishFit writes the fit folder of a fit whose chains are all sampled
// (fitted, and the support check's baseline stage base with its fit bf)
// into od, prints the summary and returns the fit with its model.
func finishFit(ctx context.Context, od *outDir, p *fitPlan, fitted *pipeline.Fitted, base *model.Stage, bf *mcmc.Fit, hook pipeline.StageHook, stdout, stderr io.Writer) (*fitFolder, error) {
	f, reps := newFit(p.run, p.ds, p.priorBytes, fitted.Fits, fitted.Wall)
	sup := pipeline.CompareSupport(fitted, base, bf)
	addSupport(&f.Verdict, sup)
	files, err := f.FitFiles()
	if err != nil {
		return nil, err
	}
	liftChecks, err := driftFiles(ctx, files, fitted, p.liftBytes, hook)
	if err != nil {
		return nil, err
	}
	for name, b := range files {
		if err := od.WriteFile(name, b); err != nil {
			return nil, err
		}
	}
	printFitSummary(stdout, reps, fitted.Fits, fitted.Wall, nil, sup)
	printLiftChecks(stdout, liftChecks)
	if !f.Verdict.Trustworthy {
		fmt.Fprintf(stderr, "spillway: WARNING: the fit is NOT TRUSTWORTHY; see %s/verdict.txt\n", od.Final())
	}
	return &fitFolder{Fit: f, scaled: p.sc, stages: fitted.Stages, fits: fitted.Fits, options: p.o}, nil
}

// finishPanelFit writes the fit folder of a region panel whose chains are
// all sampled into od, prints the summary with the regions' spreads and
// returns the fit with its model. The support check (PSIS-LOO against the
// stage without media terms) is the national model's; the verdict says it
// was not made. With lift tests it writes lifts.csv, each checked against
// the rest of the data (a refit without it shows its progress on hook).
func finishPanelFit(ctx context.Context, od *outDir, p *fitPlan, pf *pipeline.PanelFitted, hook pipeline.StageHook, stdout, stderr io.Writer) (*fitFolder, error) {
	f, reps := newFit(p.run, p.ds, p.priorBytes, pf.Fits, pf.Wall)
	f.Verdict.Reasons = append(f.Verdict.Reasons, fitfolder.Reason{Stage: "support", Text: "note: " + panelSupportNote})
	files, err := f.FitFiles()
	if err != nil {
		return nil, err
	}
	if err := driftTables(files, pf.Drifts(), pf.DriftChanges); err != nil {
		return nil, err
	}
	var liftChecks []pipeline.LiftCheck
	if len(pf.Tests) > 0 {
		if liftChecks, err = pf.CheckLifts(ctx, hook); err != nil {
			return nil, err
		}
		if err := liftFiles(files, liftChecks, p.liftBytes, true); err != nil {
			return nil, err
		}
	}
	for name, b := range files {
		if err := od.WriteFile(name, b); err != nil {
			return nil, err
		}
	}
	printFitSummary(stdout, reps, pf.Fits, pf.Wall, &pf.Panels, nil)
	printLiftChecks(stdout, liftChecks)
	if !f.Verdict.Trustworthy {
		fmt.Fprintf(stderr, "spillway: WARNING: the fit is NOT TRUSTWORTHY; see %s/verdict.txt\n", od.Final())
	}
	return &fitFolder{Fit: f, scaled: p.sc, panel: pf, options: p.o}, nil
}

// panelSupportNote says why a region panel's verdict has no support check.
const panelSupportNote = "the check that the media terms predict left-out weeks better than a model without them is made for national fits only; fit with --national for it"

// printSpreads prints, for each stage of a region panel, how much the
// regions' intercepts and coefficients spread (posterior mean and 90%
// interval of each tau), read from the stage's summary through the panel's
// layout.
func printSpreads(w io.Writer, reps []stageReport, panels [3]*model.Panel) {
	for k, r := range reps {
		l := panels[k].Layout()
		if l.TauMu() < 0 {
			continue
		}
		pos := []int{l.TauMu()}
		for _, c := range l.Coefs() {
			pos = append(pos, c.Tau)
		}
		var parts []string
		for _, i := range pos {
			s := r.summary[i]
			parts = append(parts, fmt.Sprintf("%s %.3g [%.3g, %.3g]", s.Parameter, s.Mean, s.Q05, s.Q95))
		}
		fmt.Fprintf(w, "%-8s region spread (posterior mean [90%% interval]): %s\n", r.name, strings.Join(parts, "; "))
	}
}

// progressHook returns the per-stage progress display: a bar when stderr
// is a terminal, a plain line every few seconds otherwise, none with --quiet.
// A stage stopped by ctx (Ctrl-C) ends its display with "interrupted".
func progressHook(ctx context.Context, opts *samplingFlags, only int, stderr io.Writer) pipeline.StageHook {
	if opts.quiet {
		return nil
	}
	chains := opts.chains
	if only > 0 {
		chains = only // the chains of a shard
	}
	tty := false
	if f, ok := stderr.(*os.File); ok {
		tty = term.IsTerminal(int(f.Fd()))
	}
	return func(stage string) (mcmc.Recorder, func()) {
		p := progress.New(progress.Options{Writer: stderr, Terminal: tty, Label: stage, Chains: chains, Iterations: opts.warmup + opts.draws})
		return p, func() {
			if ctx.Err() != nil {
				_ = p.Interrupt()
				return
			}
			_ = p.Finish()
		}
	}
}

// printFitSummary prints one line per stage, for a region panel (panels
// set) each stage's spreads, and the verdict; sup is nil for a region
// panel, which has no support check.
func printFitSummary(w io.Writer, reps []stageReport, fits [3]*mcmc.Fit, wall [3]float64, panels *[3]*model.Panel, sup *pipeline.Support) {
	for k, r := range reps {
		maxR, minB, minT := mcmc.Worst(r.summary)
		div, leap := 0, 0.0
		for _, c := range fits[k].Chains {
			div += c.Stats.Divergences
			leap += c.Stats.MeanLeapfrogs / float64(len(fits[k].Chains))
		}
		fmt.Fprintf(w, "%-8s %d chains x %d draws in %.1f s: max R-hat %s, min bulk ESS %s, min tail ESS %s, %d divergences, %.0f leapfrog steps per draw\n",
			r.name, len(fits[k].Chains), fits[k].NumDraws()/len(fits[k].Chains), wall[k], diagText(maxR, "%.3f"), diagText(minB, "%.0f"), diagText(minT, "%.0f"), div, leap)
	}
	if panels != nil {
		printSpreads(w, reps, *panels)
	}
	ok := true
	for _, r := range reps {
		ok = ok && r.verdict.Trustworthy
	}
	if sup == nil {
		if ok {
			fmt.Fprintln(w, "verdict: trustworthy (R-hat <= 1.01, ESS >= 400, no divergences, E-BFMI >= 0.3 in every stage)")
		} else {
			fmt.Fprintln(w, "verdict: NOT TRUSTWORTHY; do not use these numbers before fixing:")
			for _, r := range reps {
				for _, why := range r.verdict.Reasons {
					fmt.Fprintf(w, "  %s: %s\n", r.name, why)
				}
			}
		}
		fmt.Fprintf(w, "support: note: %s\n", panelSupportNote)
		return
	}
	if ok && sup.Supported() {
		fmt.Fprintln(w, "verdict: trustworthy (R-hat <= 1.01, ESS >= 400, no divergences, E-BFMI >= 0.3 in every stage)")
		fmt.Fprintf(w, "support: %s\n", sup.Text())
		if n := sup.Note(); n != "" {
			fmt.Fprintf(w, "support: note: %s\n", n)
		}
		return
	}
	fmt.Fprintln(w, "verdict: NOT TRUSTWORTHY; do not use these numbers before fixing:")
	for _, r := range reps {
		for _, why := range r.verdict.Reasons {
			fmt.Fprintf(w, "  %s: %s\n", r.name, why)
		}
	}
	if sup.Supported() {
		fmt.Fprintf(w, "support: %s\n", sup.Text())
	} else {
		fmt.Fprintf(w, "  support: %s\n", sup.Text())
	}
	if n := sup.Note(); n != "" {
		fmt.Fprintf(w, "support: note: %s\n", n)
	}
}

// addSupport adds the support check to the fit's verdict: media effects
// the data do not support make the fit not trustworthy, whatever the
// sampler's diagnostics say.
func addSupport(v *fitfolder.Verdict, sup *pipeline.Support) {
	if sup.Supported() {
		v.Reasons = append(v.Reasons, fitfolder.Reason{Stage: "support", Text: "note: " + sup.Text()})
	} else {
		v.Trustworthy = false
		v.Reasons = append(v.Reasons, fitfolder.Reason{Stage: "support", Text: sup.Text()})
	}
	if n := sup.Note(); n != "" {
		v.Reasons = append(v.Reasons, fitfolder.Reason{Stage: "support", Text: "note: " + n})
	}
}

// diagText formats a convergence diagnostic, or "not computable" for NaN.
func diagText(v float64, format string) string {
	if math.IsNaN(v) {
		return "not computable"
	}
	return fmt.Sprintf(format, v)
}
