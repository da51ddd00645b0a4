package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/pflag"
	"golang.org/x/term"

	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
	"spillway/funnel/lifts"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/funnel/validate"
	"spillway/plots/validation"
)

// validateOptions are the flags of spillway validate.
type validateOptions struct {
	roles      roleFlags
	sampling   samplingFlags
	fitDir     string
	truth      string
	checks     []string
	replicates int
	origins    int
	horizon    int
	leaveOut   []string
	seeds      int
	placebos   int
	shard      string
	merge      bool
	// region panels (issue 12)
	national    bool
	leaveRegion []string
}

func (o *validateOptions) addFlags(fs *pflag.FlagSet) {
	o.roles.addFlags(fs)
	fs.StringVar(&o.fitDir, "fit", "", "a fit `FOLDER` from 'spillway fit': validate its data, with its posterior as the reference")
	fs.StringVar(&o.truth, "truth", "", "a truth.json `FILE` from 'spillway simulate': recovery simulates from these true parameters")
	fs.StringSliceVar(&o.checks, "checks", []string{validate.Recovery, validate.Holdout, validate.Stability}, "`CHECKS` to run; placebo only on request")
	fs.IntVar(&o.replicates, "replicates", validate.DefaultReplicates, "simulated data sets refitted by the recovery check")
	fs.IntVar(&o.origins, "origins", validate.DefaultOrigins, "forecast origins of the holdout check")
	fs.IntVar(&o.horizon, "horizon", validate.DefaultHorizon, "weeks forecast from each origin (1 to 52)")
	fs.StringSliceVar(&o.leaveOut, "leave-out", nil, "`QUARTERS` the stability check leaves out one at a time, e.g. 2024Q2,2024Q3 (default every quarter)")
	fs.IntVar(&o.seeds, "seeds", validate.DefaultSeeds, "extra refits of the whole data with other seeds (stability); 0 for none")
	fs.IntVar(&o.placebos, "placebos", validate.DefaultPlacebos, "placebo refits per channel (placebo; at least 19 to reach p = 0.05)")
	fs.StringVar(&o.shard, "shard", "", "run only shard `I/N` of the sweep (jobs whose number is I-1 modulo N) into --out")
	fs.BoolVar(&o.merge, "merge", false, "merge the shard folders given as arguments into --out")
	o.sampling.addFlagsWith(fs, samplingDefaults{validate.DefaultChains, validate.DefaultWarmup, validate.DefaultDraws,
		"random seed of the sweep; every job's seed derives from it and the job's number", "chains per refit", "iterations per chain of each refit"})
	// region panels (issue 12)
	fs.BoolVar(&o.national, "national", false, "validate regional data (--region) as their national sum, one series, instead of the region model")
	fs.StringSliceVar(&o.leaveRegion, "leave-out-regions", nil, "`REGIONS` the stability check of a region panel leaves out one at a time (default every region)")
	fs.StringVar(&o.sampling.lifts, "lifts", "", "a CSV `FILE` of lift tests fitted as data in every refit (each fit takes the tests of the weeks it fits; recovery simulates them)")
}

// newValidateCommand builds spillway validate.
func newValidateCommand() *command {
	var opts validateOptions
	fs := newFlagSet("validate")
	opts.addFlags(fs)
	return &command{
		name:  "validate",
		usage: "validate [(roles) | --fit FOLDER] --out FOLDER [flags]",
		short: "check recovery of known truth, holdout accuracy, stability and placebo refits",
		long: `Validate checks whether the model deserves trust on a data set by refitting it
many times. With no data it validates the built-in demo.

  recovery   simulates --replicates data sets from the fitted posterior (or,
             with --truth, from given true parameters) with the data's own
             spend, controls and weeks, refits each and reports, per effect
             (via search, direct, total, mediated share, by quarter, and
             paid search's borrowed share), how often the 50% and 90%
             intervals cover the truth, the bias and the interval width,
             and simulation-based calibration ranks of gamma, alpha, delta
             and beta with a chi-square uniformity p-value.
  holdout    fits the weeks before each of --origins origins and forecasts
             the next --horizon weeks given the actual spend (and, for the
             outcome, the actual queries): MAPE, CRPS and 90% interval
             coverage, against a seasonal baseline (the same week a year
             earlier times the recent level) and against the same model
             without any spend term. "Beats" needs a difference whose 95%
             interval over the effective number of weeks excludes zero;
             coverage is judged against its binomial range.
  stability  refits leaving out each quarter in turn and with --seeds other
             seeds, and reports how far each effect moves in posterior sds
             of the reference fit; moves above 1 sd (or above what leaving
             out that many weeks explains by chance) are flagged.
  placebo    (only when asked for) refits --placebos times per channel with
             that channel's spend moved circularly in time by 13 weeks or
             more (flighting kept), and reports where the effect on the
             real spend (total; paid search: controlled) stands among the
             placebo effects: p = (1 + placebos at or above it) / (1 + N).
             Costs channels x N refits.

A claim is made only when the evidence carries it: "recovers truth" needs at
least 20 replicates, both coverages inside their binomial ranges and at
least 90% of the refits converged (R-hat <= 1.01, bulk and tail ESS >= 10%
of the draws, at most 0.1% of them divergent); coverage counts every
refit, and the unconverged ones are named. Otherwise the verdict says "no
claim" and why.

REGIONS
With --region COL the data are a panel of regions and every refit is the
region model (per-region intercepts and coefficients, pooled): recovery
simulates each region from a posterior draw of the reference panel fit,
holdout forecasts each region and their sum, stability also leaves out each
region in turn (--leave-out-regions). validation.csv judges the effects
summed over regions; validation_by_region.csv has the same metrics for every
region (region first). Every refit takes --drift (one multiplier shared by
the regions) and --lifts as a national sweep's do; a lift test may name a
region, and a refit leaving out a region drops that region's tests and the
national ones (they measured every region). The placebo check moves a
channel's spend by the same weeks in every region and judges the summed effect
only. --truth may name a regional simulation's truth.json: recovery then
simulates every region from its own true parameters. --fit may name a
region panel's fit, whose posterior is then the reference. --national
validates the national sum instead.

FOLDER gets validation.csv (check,effect,channel,metric,value),
validation.png, verdict.txt (also printed), jobs.csv (every job's raw numbers
at full precision) and manifest.json. The reference posterior is fitted with
the refit settings, or taken from a fit folder with --fit.

Each refit defaults to 4 chains x (500 warm-up + 1000 draws), lighter than
a fit and long enough to converge on the demo (2 chains x (500 + 500) left
most refits above R-hat 1.01, so no claim could be made). The default
sweep on the demo (156 weeks) is 38 refits plus the reference: 20
replicates, 4 origins, 12 quarters, 2 seeds. A refit costs about 30 CPU
seconds, so the sweep takes about 10 minutes on 2 free cores (longer on a
busy machine); time grows with the weeks, the refits and the draws. Refits run in parallel over the cores; the result does not depend on
their number.

SHARDS
A sweep is a fixed list of jobs, each with its own seed. --shard I/N runs the
jobs numbered I-1 modulo N into its own folder; --merge combines the folders
of all N shards into the same output, byte for byte, as one run:
  parallel spillway validate --data d.csv ... --shard {}/8 --out shard{} ::: $(seq 8)
  spillway validate --merge shard* --out validation

EXAMPLE
  spillway validate --data sales.csv --date week --upper video,audio --search search \
    --queries brand_queries --outcome orders --controls price --out val1

` + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			return runValidate(ctx, &opts, fs, args, stdout, stderr)
		},
	}
}

// runValidate runs a sweep, one shard of it, or a merge.
func runValidate(ctx context.Context, o *validateOptions, fs *pflag.FlagSet, args []string, stdout, stderr io.Writer) error {
	if o.merge {
		return runMerge(o, fs, args, stdout, stderr)
	}
	if err := noArgs(args); err != nil {
		return err
	}
	if err := o.sampling.validate(); err != nil {
		return err
	}
	set := validate.Settings{Checks: o.checks, Replicates: o.replicates, Origins: o.origins, Horizon: o.horizon,
		LeaveOut: o.leaveOut, Seeds: o.seeds, Chains: o.sampling.chains, Warmup: o.sampling.warmup,
		Draws: o.sampling.draws, Seed: o.sampling.seed, Placebos: o.placebos}
	switch {
	case o.replicates < 0 || o.origins < 0 || o.seeds < 0 || o.placebos < 0:
		return usagef("--replicates, --origins, --seeds and --placebos must not be negative")
	case o.horizon < 1 || o.horizon > validate.BaselineLag:
		return usagef("--horizon must be 1 to %d weeks", validate.BaselineLag)
	}
	if o.seeds == 0 {
		set.Seeds = validate.NoSeeds
	}
	// zero replicates or origins: leave that check out
	if o.replicates == 0 {
		set.Checks, set.Replicates = without(set.Checks, validate.Recovery), 1
	}
	if o.origins == 0 {
		set.Checks, set.Origins = without(set.Checks, validate.Holdout), 1
	}
	if len(set.Checks) == 0 {
		return usagef("no check left to run (--checks, --replicates 0, --origins 0)")
	}
	var shard validate.Shard
	if o.shard != "" {
		var err error
		if shard, err = validate.ParseShard(o.shard); err != nil {
			return usagef("--shard: %v", err)
		}
	}
	if o.fitDir != "" && (o.roles.given() || o.sampling.priors != "" || len(o.sampling.linear) > 0 || len(o.sampling.drift) > 0 || o.sampling.driftShape != "" || o.sampling.baseline != "" || o.sampling.lifts != "") {
		return usagef("--fit takes the data and model options from the fit folder; leave out the data roles, --priors, --linear, --drift, --drift-shape, --baseline and --lifts")
	}
	od, err := newOutDir(o.sampling.out, o.sampling.force, append(o.roles.inputs(), o.sampling.priors, o.truth, o.fitDir, o.sampling.lifts)...)
	if err != nil {
		return err
	}
	defer od.Abort()
	dropNote(stderr, od)

	in := validate.Input{Tool: "spillway " + spillwayVersion()}
	liftFile := o.sampling.lifts
	var ds *data.Dataset
	panelFit := false // --fit names a region panel's fit
	switch {
	case o.fitDir != "":
		ff, err := readFitFolder(o.fitDir)
		if err != nil {
			return err
		}
		ds = ff.Data.Dataset
		in.Options = ff.options
		fits := ff.fits
		if ff.panel != nil {
			if o.national {
				return usagef("--fit %s holds a region panel's fit, whose posterior is the region model's; leave out --national to validate the panel, or fit the national sum with --national first", o.fitDir)
			}
			panelFit, fits = true, ff.panel.Fits
		}
		in.Reference = &validate.Fits{Demand: fits[0], Outcome: fits[1]}
		if ff.Run.Lifts != "" {
			liftFile = filepath.Join(o.fitDir, fitfolder.LiftTestsFile)
		}
	case o.roles.given():
		if ds, err = o.roles.load(); err != nil {
			return err
		}
	default:
		if ds, err = demoData("demo"); err != nil {
			return err
		}
	}
	for _, w := range ds.Warnings {
		fmt.Fprintf(stderr, "spillway: warning: %s\n", w.Message)
	}
	// region panels (issue 12): regional data are validated with the
	// region model unless --national (or --fit names a national fit)
	if o.national && ds.Spec.Region == "" {
		return usagef("--national validates the national sum of regional data, but the data have no region column; name it with --region, or leave out --national")
	}
	panel := len(ds.Regions) > 1 && !o.national && (o.fitDir == "" || panelFit)
	if len(ds.Regions) > 1 && !panel {
		fmt.Fprintf(stderr, "spillway: note: %d regions are validated as their national sum\n", len(ds.Regions))
	}
	if panel {
		in.Panel = ds
		set.LeaveOutRegions = o.leaveRegion
	} else if len(o.leaveRegion) > 0 {
		return usagef("--leave-out-regions needs a region panel (--region without --national, or --fit naming a region panel's fit)")
	}
	in.Series, in.Spec = ds.National(), ds.Spec
	if liftFile != "" {
		load := lifts.Load
		if panel {
			load = lifts.LoadPanel // a row may name a region
		}
		if in.Lifts, err = load(liftFile, ds); err != nil {
			return err
		}
	}
	if o.fitDir == "" {
		if in.Options, err = modelOptions(model.Scale(ds.National(), ds.Spec), &o.sampling); err != nil {
			return err
		}
	}
	if o.truth != "" {
		if in.Truth, err = readTruth(o.truth); err != nil {
			return err
		}
		switch {
		case panel && in.Truth.Regions == nil:
			return usagef("--truth %s holds national true parameters; a region panel's recovery needs each region's (a truth.json of a regional simulation), or simulates from its reference fit without --truth (or add --national)", o.truth)
		case !panel && in.Truth.Regions != nil:
			return usagef("--truth %s holds each region's true parameters; validate the region panel (--region, without --national) or give national true parameters", o.truth)
		}
	}
	sw, err := validate.New(in, set)
	if err != nil {
		return usagef("%v", strings.TrimPrefix(err.Error(), "validate: "))
	}
	res, err := sw.Run(ctx, shard, jobProgress(o, stderr))
	if err != nil {
		return unprefixed{err}
	}
	if shard.N > 1 {
		files, err := validate.ShardFiles(res)
		if err != nil {
			return err
		}
		if err := writeAll(od, files); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "shard %s: %d of %d jobs written to %s; when every shard is done, combine them with\n  spillway validate --merge FOLDER... --out FOLDER\n",
			shard, len(res.Manifest.Ran), len(res.Manifest.Jobs), od.Final())
		return nil
	}
	return writeReport(od, res, stdout)
}

// runMerge combines shard folders.
func runMerge(o *validateOptions, fs *pflag.FlagSet, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		return usagef("--merge needs the shard folders as arguments")
	}
	var extra []string
	fs.VisitAll(func(f *pflag.Flag) {
		switch {
		case !f.Changed:
		case f.Name == "merge" || f.Name == "out" || f.Name == "force" || f.Name == "quiet":
		default:
			extra = append(extra, "--"+f.Name)
		}
	})
	if len(extra) > 0 {
		return usagef("--merge takes only shard folders, --out and --force; the shards already fix %s", strings.Join(extra, ", "))
	}
	od, err := newOutDir(o.sampling.out, o.sampling.force, args...)
	if err != nil {
		return err
	}
	defer od.Abort()
	dropNote(stderr, od)
	var parts []*validate.Results
	for _, dir := range args {
		r, err := readShard(dir)
		if err != nil {
			return err
		}
		parts = append(parts, r)
	}
	res, err := validate.Merge(parts, args)
	if err != nil {
		return badData(fmt.Errorf("%s", strings.TrimPrefix(err.Error(), "validate: ")))
	}
	return writeReport(od, res, stdout)
}

// readShard reads a shard folder's manifest.json and jobs.csv.
func readShard(dir string) (*validate.Results, error) {
	m, err := os.Open(filepath.Join(dir, validate.ManifestFile))
	if err != nil {
		return nil, badData(fmt.Errorf("%s is not a folder written by spillway validate: %w", dir, err))
	}
	defer m.Close()
	j, err := os.Open(filepath.Join(dir, validate.JobsFile))
	if err != nil {
		return nil, badData(fmt.Errorf("%s is incomplete: %w", dir, err))
	}
	defer j.Close()
	r, err := validate.ReadResults(m, j, dir)
	if err != nil {
		return nil, badData(err)
	}
	return r, nil
}

// writeReport renders and writes a complete sweep's folder and prints the
// verdict.
func writeReport(od *outDir, res *validate.Results, stdout io.Writer) error {
	files, rep, err := validate.Files(res)
	if err != nil {
		return err
	}
	if files[validate.ChartFile], err = validation.PNG(rep); err != nil {
		return err
	}
	if err := writeAll(od, files); err != nil {
		return err
	}
	fmt.Fprint(stdout, rep.Text())
	fmt.Fprintf(stdout, "validation written to %s\n", od.Final())
	return nil
}

func writeAll(od *outDir, files map[string][]byte) error {
	for name, b := range files {
		if err := od.WriteFile(name, b); err != nil {
			return err
		}
	}
	return od.Commit()
}

// readTruth reads the true parameters from a truth.json.
func readTruth(path string) (*validate.Truth, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, badData(err)
	}
	var t scenario.Truth
	dec := json.NewDecoder(bytes.NewReader(b))
	if err := dec.Decode(&t); err != nil {
		return nil, badData(fmt.Errorf("%s: %w", path, err))
	}
	if len(t.RegionTruth) > 0 {
		out := &validate.Truth{Regions: map[string]*validate.Truth{}}
		for _, r := range t.RegionTruth {
			if len(r.Demand) == 0 || len(r.Outcome) == 0 {
				return nil, badData(fmt.Errorf("%s: region %q has no demand and outcome parameters", path, r.Name))
			}
			out.Regions[r.Name] = &validate.Truth{Demand: r.Demand, Outcome: r.Outcome}
		}
		return out, nil
	}
	if len(t.Demand) == 0 || len(t.Outcome) == 0 {
		return nil, badData(fmt.Errorf("%s has no demand and outcome parameters; expected a truth.json from 'spillway simulate'", path))
	}
	return &validate.Truth{Demand: t.Demand, Outcome: t.Outcome}, nil
}

// unprefixed drops the package's "validate: " from an error's message
// (the command prints its own prefix) and keeps the error for errors.Is.
type unprefixed struct{ err error }

func (e unprefixed) Error() string { return strings.TrimPrefix(e.err.Error(), "validate: ") }
func (e unprefixed) Unwrap() error { return e.err }

func without(list []string, x string) []string {
	var out []string
	for _, v := range list {
		if v != x {
			out = append(out, v)
		}
	}
	return out
}

// jobProgress reports finished jobs on stderr: a bar on a terminal, a line
// per job otherwise, nothing with --quiet.
func jobProgress(o *validateOptions, stderr io.Writer) func(validate.Progress) {
	if o.sampling.quiet {
		return nil
	}
	tty := false
	if f, ok := stderr.(*os.File); ok {
		tty = term.IsTerminal(int(f.Fd()))
	}
	start := time.Now()
	var once sync.Once
	var bar *progressbar.ProgressBar
	return func(p validate.Progress) {
		if p.Done == 0 {
			fmt.Fprintf(stderr, "spillway validate: reference fit done in %.0f s; %d jobs to run\n", p.Seconds, p.Total)
			return
		}
		if tty {
			once.Do(func() {
				bar = progressbar.NewOptions(p.Total, progressbar.OptionSetWriter(stderr),
					progressbar.OptionSetDescription("validate"), progressbar.OptionSetWidth(30),
					progressbar.OptionShowCount(), progressbar.OptionSetPredictTime(true))
			})
			_ = bar.Set(p.Done)
			if p.Done == p.Total {
				_ = bar.Finish()
				fmt.Fprintln(stderr)
			}
			return
		}
		el := time.Since(start)
		left := time.Duration(float64(el) / float64(p.Done) * float64(p.Total-p.Done))
		fmt.Fprintf(stderr, "spillway validate: [%d/%d] %s %s done in %.0f s (elapsed %s, about %s left)\n",
			p.Done, p.Total, p.Job.Check, p.Job.Label, p.Seconds, el.Round(time.Second), left.Round(time.Second))
	}
}
