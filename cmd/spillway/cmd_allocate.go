package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"

	"spillway/funnel/allocate"
	"spillway/funnel/fitfolder"
	"spillway/funnel/pipeline"
	"spillway/plots"
)

// allocateOptions are the flags of spillway allocate (and of the plan step
// of run).
type allocateOptions struct {
	fit, out string
	force    bool
	plan     planFlags
}

// planFlags are the flags that shape a plan.
type planFlags struct {
	weeks    int
	budget   float64
	limits   string
	lock     []string
	pattern  string
	given    string
	cautious float64
}

func (o *allocateOptions) addFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.fit, "fit", "", "the fit `FOLDER` written by 'spillway fit' or 'spillway run'")
	fs.StringVar(&o.out, "out", "", "a new output `FOLDER` for the plan (written atomically; must not exist unless --force); default: the fit folder itself, replacing its plan")
	fs.BoolVar(&o.force, "force", false, "replace the output folder if it exists")
	o.plan.addFlags(fs)
}

func (p *planFlags) addFlags(fs *pflag.FlagSet) {
	fs.IntVar(&p.weeks, "weeks", allocate.DefaultWeeks, "the plan covers the `N` weeks after the data's last week")
	fs.Float64Var(&p.budget, "budget", 0, "the plan's total `AMOUNT` over every channel and week (default: the current plan's total)")
	fs.StringVar(&p.limits, "limits", "", "a CSV `FILE` with the columns channel,min,max: amounts over the plan's weeks; empty max for none, min = max locks")
	fs.StringSliceVar(&p.lock, "lock", nil, "spend `COLUMNS` held at their current amount")
	fs.StringVar(&p.pattern, "pattern", "last", "each channel's weekly `PATTERN`: last (its last N weeks), even, or a window of the data (2025Q3, FROM:TO)")
	fs.StringVar(&p.given, "plan", "", "evaluate the plan in this CSV `FILE` (columns channel,amount; channels left out keep their current amount) instead of optimising")
	fs.Float64Var(&p.cautious, "cautious", 0, "maximise the `P`-quantile of the gain over the current plan (e.g. 0.1) instead of the posterior mean")
}

// validate checks the flags that need no data.
func (p *planFlags) validate() error {
	switch {
	case p.weeks < 1 || p.weeks > 520:
		return usagef("--weeks %d: expected 1 to 520 weeks", p.weeks)
	case p.budget < 0 || math.IsNaN(p.budget) || math.IsInf(p.budget, 0):
		return usagef("--budget %v: expected a positive amount", p.budget)
	case p.cautious != 0 && !(p.cautious > 0 && p.cautious <= 0.5):
		return usagef("--cautious %v: expected a probability in (0, 0.5], such as 0.1", p.cautious)
	case p.given != "" && (p.budget != 0 || p.limits != "" || len(p.lock) > 0 || p.cautious != 0):
		return usagef("--plan evaluates the plan it is given; --budget, --limits, --lock and --cautious shape an optimised plan")
	}
	return nil
}

// settings returns the plan's settings, with the limits file read (its
// problems are bad data at FILE:LINE:COLUMN).
func (p *planFlags) settings() (allocate.Settings, *allocate.File, error) {
	s := allocate.Settings{Weeks: p.weeks, Budget: p.budget, Lock: p.lock, Quantile: p.cautious}
	if p.pattern != "last" {
		s.Pattern = p.pattern
	}
	var f *allocate.File
	if p.limits != "" {
		var err error
		if s.Limits, f, err = allocate.ReadLimits(p.limits); err != nil {
			return s, nil, badData(err)
		}
	}
	return s, f, nil
}

// newAllocateCommand builds spillway allocate.
func newAllocateCommand() *command {
	var opts allocateOptions
	fs := newFlagSet("allocate")
	opts.addFlags(fs)
	return &command{
		name:  "allocate",
		usage: "allocate --fit FOLDER [--out FOLDER] [--weeks N] [--budget AMOUNT] [--limits FILE] [--lock COLUMNS] [--pattern PATTERN] [--plan FILE] [--cautious P]",
		short: "plan the budget of the weeks after the data, with limits and uncertainty",
		long: `Allocate plans each channel's spend over the N weeks after the data's last
week. A channel's weekly spend follows its pattern (by default its own spend
in the data's last N weeks) scaled by one factor; the current plan is every
channel at its pattern's own amount, and the default budget is its total.
Limits (--limits) hold channels within a minimum and a maximum; a channel
with min = max, or named by --lock, keeps its amount.

The plan maximises, over the posterior draws, the incremental outcome: the
outcome over the plan's weeks and the 52 weeks after them, minus the same
with no spend in the plan's weeks (carryover from the data's weeks kept),
through every path: upper-funnel channels via branded search and directly,
paid search through its own controlled effect only, never its apparent
return (which counts demand the upper funnel created). --cautious P
maximises a lower quantile of the gain over the current plan instead.
--plan FILE evaluates a plan you bring instead of optimising.

It writes into the output folder (by default the fit folder itself, where the
report then shows the plan):
  plan.csv         channel,current,planned,min,max,locked,at_limit, the
                   channel's incremental outcome (mean, q05, q95) at its
                   current and planned amounts, its marginal return at the
                   plan (outcome per unit of currency, mean, q05, q95)
  plan_weekly.csv  week,channel,spend for the plan's weeks
  plan.json        totals, the gain over the current plan with its 90%
                   interval, the probability that the plan beats the
                   current one (draws paired), marginal returns, the
                   first-order check of the optimum
  plan.png         current against planned spend, the gain, marginal returns
and prints the plan.

A plan rests on the model's assumptions (no unmeasured confounding of
queries and outcome, the shapes of adstock and saturation, spend beyond the
data's range extrapolated); confirm large moves with a controlled
experiment before making them.

EXAMPLE
  spillway allocate --fit fit1 --out plan1 --limits limits.csv --lock audio_spend
  spillway allocate --fit fit1 --out whatif --plan move20.csv

` + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			if err := noArgs(args); err != nil {
				return err
			}
			if opts.fit == "" {
				return usagef("no fit folder: name it with --fit FOLDER")
			}
			return runAllocate(ctx, &opts, stdout, stderr)
		},
	}
}

// runAllocate plans from a fit folder into a new output folder, or into
// the fit folder itself.
func runAllocate(ctx context.Context, o *allocateOptions, stdout, stderr io.Writer) error {
	if err := o.plan.validate(); err != nil {
		return err
	}
	var od *outDir
	if o.out != "" {
		var err error
		if od, err = newOutDir(o.out, o.force, o.fit, o.plan.limits, o.plan.given); err != nil {
			return err
		}
		defer od.Abort()
		dropNote(stderr, od)
	}
	ff, err := readFitFolder(o.fit)
	if err != nil {
		return err
	}
	if ff.panel != nil {
		return usagef("--fit %s: a region panel's budget plan is not made yet; plan on a fit of the regions' sum (fit --national)", o.fit)
	}
	cmd := allocateCommand(o)
	files, err := planFiles(ctx, ff, &o.plan, cmd, stdout, stderr)
	if err != nil {
		return err
	}
	if od == nil {
		if err := ctx.Err(); err != nil {
			return err
		}
		if err := updateInPlace(o.fit, files); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "plan written to %s\n", o.fit)
		return nil
	}
	for name, b := range files {
		if err := od.WriteFile(name, b); err != nil {
			return err
		}
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	if err := od.Commit(); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "plan written to %s\n", od.Final())
	return nil
}

// planFiles makes the plan of a fit and renders its files (plan.csv,
// plan_weekly.csv, plan.json, plan.png), printing the plan on stdout.
func planFiles(ctx context.Context, ff *fitFolder, pf *planFlags, command string, stdout, stderr io.Writer) (map[string][]byte, error) {
	s, limits, err := pf.settings()
	if err != nil {
		return nil, err
	}
	in := allocate.FromSplit(pipeline.Pair(ff.scaled, ff.stages, ff.fits))
	p, err := allocate.New(in, s)
	if err != nil {
		return nil, planError(err, limits, nil)
	}
	var r *allocate.Result
	if pf.given != "" {
		rows, file, err := allocate.ReadAmounts(pf.given)
		if err != nil {
			return nil, badData(err)
		}
		amounts, err := p.Given(rows)
		if err != nil {
			return nil, planError(err, nil, file)
		}
		if r, err = p.Evaluate(amounts); err != nil {
			return nil, planError(err, nil, file)
		}
	} else {
		if r, err = p.Optimise(); err != nil {
			return nil, err
		}
		fmt.Fprintf(stderr, "spillway allocate: optimised in %.1f s (%d starts, %.0f evaluations of the plan on every draw)\n",
			r.Stats.Seconds, r.Stats.Starts, r.Stats.Evaluations)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	plan := p.Tables(r, allocate.PlanSettings{Pattern: s.Pattern, Command: command})
	files, err := plan.Files()
	if err != nil {
		return nil, err
	}
	fig, err := plots.Plan(plan, ff.Run.Spec.Outcome)
	if err != nil {
		return nil, err
	}
	if files[fitfolder.PlanChart], err = fig.PNG(); err != nil {
		return nil, err
	}
	printPlan(stdout, plan, ff.Run.Spec.Outcome)
	return files, nil
}

// planError turns a problem with the limits, the locks, the budget or a
// given plan into an error pointing at the file row or the flag at fault
// (exit status 2).
func planError(err error, limits, given *allocate.File) error {
	var se *allocate.SettingError
	if errors.As(err, &se) {
		flag := map[string]string{"weeks": "--weeks", "pattern": "--pattern", "quantile": "--cautious"}[se.Setting]
		return usagef("%s: %v", flag, se)
	}
	var le *allocate.LimitError
	if !errors.As(err, &le) {
		return err
	}
	for _, f := range []*allocate.File{limits, given} {
		if located := f.Locate(err); located != err {
			return badData(located)
		}
	}
	switch le.Field {
	case "budget":
		return usagef("--budget: %v", le)
	case "lock":
		return usagef("--lock: %v", le)
	}
	return usagef("--budget, --limits or --lock: %v", le)
}

// allocateCommand spells out the command that reproduces a plan.
func allocateCommand(o *allocateOptions) string {
	parts := []string{"spillway", "allocate", "--fit", shellQuote(o.fit)}
	if o.out != "" {
		parts = append(parts, "--out", shellQuote(o.out))
	}
	return strings.Join(append(parts, o.plan.args()...), " ")
}

// args are the plan flags that differ from their defaults.
func (p *planFlags) args() []string {
	var parts []string
	add := func(flag, v string) { parts = append(parts, "--"+flag, shellQuote(v)) }
	if p.weeks != allocate.DefaultWeeks {
		add("weeks", strconv.Itoa(p.weeks))
	}
	if p.budget != 0 {
		add("budget", strconv.FormatFloat(p.budget, 'f', -1, 64))
	}
	if p.limits != "" {
		add("limits", p.limits)
	}
	if len(p.lock) > 0 {
		add("lock", strings.Join(p.lock, ","))
	}
	if p.pattern != "last" {
		add("pattern", p.pattern)
	}
	if p.given != "" {
		add("plan", p.given)
	}
	if p.cautious != 0 {
		add("cautious", strconv.FormatFloat(p.cautious, 'g', -1, 64))
	}
	return parts
}

// printPlan prints the plan's table, its gain and the cautions.
func printPlan(w io.Writer, p *fitfolder.Plan, outcome string) {
	s := p.Summary
	what := "optimised plan (posterior mean of the incremental " + outcome + ")"
	switch {
	case s.Given:
		what = "the plan given"
	case s.Objective != "mean":
		what = "cautious plan (" + s.Objective + ")"
	}
	fmt.Fprintf(w, "%s: %d weeks from %s, the outcome counted over them and %d weeks after; %d draws\n\n",
		what, s.Weeks, s.FirstWeek, s.AfterWeeks, s.Draws)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "channel\tcurrent\tplanned\tchange\tlimits\tincremental %s (planned, 90%%)\tmarginal return (90%%)\t\n", outcome)
	for _, c := range p.Channels {
		lim := fmt.Sprintf("%s..%s", short(c.Min), short(c.Max))
		if c.Locked {
			lim = "locked"
		}
		if c.AtLimit != "" {
			lim += " (at " + c.AtLimit + ")"
		}
		fmt.Fprintf(tw, "%s\t%.0f\t%.0f\t%s\t%s\t%.0f [%.0f, %.0f]\t%.3g [%.3g, %.3g]\t\n", c.Channel, c.Current, c.Planned,
			change(c.Current, c.Planned), lim, c.IncrementalPlanned.Mean, c.IncrementalPlanned.Q05, c.IncrementalPlanned.Q95,
			c.Marginal.Mean, c.Marginal.Q05, c.Marginal.Q95)
	}
	fmt.Fprintf(tw, "total\t%.0f\t%.0f\t%s\t\t%.0f [%.0f, %.0f]\t\t\n", s.CurrentTotal, s.PlannedTotal, change(s.CurrentTotal, s.PlannedTotal),
		s.IncrementalPlanned.Mean, s.IncrementalPlanned.Q05, s.IncrementalPlanned.Q95)
	tw.Flush()
	fmt.Fprintf(w, "\ngain over the current plan: %.0f %s (90%% interval %.0f to %.0f); probability that the plan beats the current one: %.1f%%\n",
		s.Gain.Mean, outcome, s.Gain.Q05, s.Gain.Q95, 100*s.PBeatsCurrent)
	if k := s.Check; k != nil {
		if k.OK {
			fmt.Fprintf(w, "optimum checked: the marginal returns of channels inside their limits agree within %.1g (%.3g %s per unit), those at a limit point the right way\n",
				k.Spread, k.Lambda, outcome)
		} else {
			fmt.Fprintf(w, "WARNING: the optimum's check failed: %s\n", strings.Join(k.Failures, "; "))
		}
	}
	for _, warn := range s.Warnings {
		fmt.Fprintf(w, "note: %s\n", warn)
	}
	fmt.Fprintln(w, "caution: a plan rests on the model's assumptions; confirm large moves with a controlled experiment before making them")
}

// short formats an amount for the limits column: 1.2M, 350k, none.
func short(v float64) string {
	switch {
	case math.IsInf(v, 1):
		return "none"
	case v >= 1e6:
		return strconv.FormatFloat(v/1e6, 'g', 3, 64) + "M"
	case v >= 1e3:
		return strconv.FormatFloat(v/1e3, 'g', 3, 64) + "k"
	}
	return strconv.FormatFloat(v, 'g', 3, 64)
}

// change is the relative change from a to b, "+12%".
func change(a, b float64) string {
	if a == 0 {
		if b == 0 {
			return "0%"
		}
		return "new"
	}
	return fmt.Sprintf("%+.0f%%", 100*(b/a-1))
}
