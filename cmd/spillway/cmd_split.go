package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strings"

	"github.com/spf13/pflag"

	"spillway/funnel/fitfolder"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
	"spillway/funnel/window"
	"spillway/mediation"
)

// splitOptions are the flags of spillway split.
type splitOptions struct {
	fit, window string
	negligible  float64
}

func (o *splitOptions) addFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.fit, "fit", "", "the fit `FOLDER` written by 'spillway fit'")
	fs.StringVar(&o.window, "window", "", "the `WINDOW` for the table: all, a quarter (2024Q3) or FROM:TO (2024-01-01:2024-03-31); "+
		"default: the last full quarter, as for chart and report")
	addNegligibleFlag(fs, &o.negligible)
}

// addNegligibleFlag adds --negligible, the fraction under which an effect
// counts as negligible.
func addNegligibleFlag(fs *pflag.FlagSet, f *float64) {
	fs.Float64Var(f, "negligible", mediation.DefaultNegligible, "the `FRACTION` under which a path counts as negligible: a via-search or direct path under this share of the channel's total, a total under this share of the outcome")
}

func checkNegligible(f float64) error {
	if !(f > 0 && f < 1) {
		return usagef("--negligible %g: expected a fraction between 0 and 1", f)
	}
	return nil
}

// newSplitCommand builds spillway split.
func newSplitCommand() *command {
	var opts splitOptions
	fs := newFlagSet("split")
	opts.addFlags(fs)
	return &command{
		name:  "split",
		usage: "split --fit FOLDER [--window WINDOW]",
		short: "split each channel's effect into direct and via search",
		long: `Split reads a fit folder and, for every posterior draw, sets each upper-funnel
channel's spend to zero in a window (carryover into later weeks included) to
find its effect through branded search (via_search) and directly (direct).
It writes into the fit folder:
  effects.csv       channel,path,window,mean,q05,q50,q95,per_unit_spend,
                    prior_q05,prior_q95,contraction,p_negligible
                    (window all and every calendar quarter; also WINDOW):
                    the prior's 90% interval of the same effect, how much
                    narrower the posterior's is (contraction), and the
                    probability that the effect is negligible (--negligible)
  effect_draws.csv  the same effects per draw, for paired comparisons
  borrowed.csv      paid search: controlled, apparent, naive, borrowed_share
  weekly.csv        weekly via-search and direct contributions
  sensitivity.csv   the via-search effect if the stages' errors correlate
                    with rho = -0.9 .. 0.9; breakeven.csv gives the rho
                    at which it reaches zero
  fitted.csv        actual against fitted, both stages, 90% predictive band
  curves.csv        response curves per upper channel
  returns.csv       return on spend and cost per incremental outcome per
                    channel and window, and the marginal return at the
                    current weekly spend, with 90% intervals
  priors_implied.csv each upper channel's return as stated in the priors
                    file (if it was), under the priors alone (a prior
                    predictive check) and under the posterior
For a region panel the files above hold the sum over regions (added draw
by draw), and it also writes
  effects_by_region.csv, borrowed_by_region.csv  each region's effects
  region_differences.csv  each region's share via search and return on
                    spend against the pooled ones, per posterior draw
and prints the table for WINDOW.

EXAMPLE
  spillway split --fit fit1 --window 2025Q2

` + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			if err := noArgs(args); err != nil {
				return err
			}
			if opts.fit == "" {
				return usagef("no fit folder: name it with --fit FOLDER")
			}
			if err := checkNegligible(opts.negligible); err != nil {
				return err
			}
			return runSplit(ctx, opts.fit, opts.window, opts.negligible, stdout, true)
		},
	}
}

// runSplit computes the effects of a fit folder and adds the split's files
// to it atomically; say reports the folder on stdout.
func runSplit(ctx context.Context, dir, windowName string, negligible float64, stdout io.Writer, say bool) error {
	ff, err := readFitFolder(dir)
	if err != nil {
		return err
	}
	s, err := splitFit(ctx, ff, windowName, negligible)
	if err != nil {
		return err
	}
	files, err := s.Files()
	if err != nil {
		return err
	}
	v, err := fitfolder.ReadVerdict(dir)
	if err != nil {
		return badData(err)
	}
	files["verdict.txt"] = []byte(s.withNotes(v).Text())
	if ctx.Err() != nil {
		return ctx.Err()
	}
	if err := updateInPlace(dir, files); err != nil {
		return err
	}
	if err := s.print(stdout); err != nil {
		return err
	}
	if say {
		fmt.Fprintf(stdout, "split written to %s\n", dir)
	}
	return nil
}

// splitResult is the effect split of a fit: the fit folder's tables, and
// what the table printed for the window asked needs.
type splitResult struct {
	fitfolder.Split
	res   *mediation.Result
	sens  []mediation.Sensitivity
	asked window.Window
	unit  string
	// notes are the effects the data do not carry (mediation.SupportNotes)
	notes []string
	upper []string // the upper channels, for the regions' lines
	// stated are the stated returns the data disagree with
	// (mediation.ImpliedNotes)
	stated []string
}

// splitFit computes the effects of ff for every quarter, the whole period
// and the window named; an empty name means the review's default window,
// the last quarter the data cover in full (all when there is none), the
// one chart and report choose by default.
func splitFit(ctx context.Context, ff *fitFolder, windowName string, negligible float64) (*splitResult, error) {
	wins := window.Quarters(ff.scaled.Weeks)
	if windowName == "" {
		windowName = "all"
		if q, ok := window.LastFullQuarter(ff.scaled.Weeks); ok {
			windowName = q.Name
		}
	}
	asked, err := window.Resolve(windowName, ff.scaled.Weeks)
	if err != nil {
		return nil, usagef("--window: %v", strings.TrimPrefix(err.Error(), "window "))
	}
	found := false
	for _, w := range wins {
		found = found || w.Name == asked.Name
	}
	if !found {
		wins = append(wins, asked)
	}
	if ff.panel != nil {
		return splitPanel(ctx, ff, wins, asked)
	}
	// a stated return's window, for the prior predictive check
	for _, r := range ff.stages[1].Returns {
		if !slices.ContainsFunc(wins, func(w window.Window) bool { return w.Name == r.Window.Name }) {
			wins = append(wins, r.Window)
		}
	}
	in := pipeline.Pair(ff.scaled, ff.stages, ff.fits)
	res, err := mediation.Split(in, wins)
	if err != nil {
		return nil, err
	}
	// the same effects under the priors: how much the data moved each one
	var sup map[mediation.Key]mediation.Support
	var notes []string
	var prior *mediation.Result
	priorIn, err := mediation.PriorInputs(in, mediation.PriorDraws, ff.Run.Seed)
	switch {
	case errors.Is(err, model.ErrImproper):
		notes = append(notes, fmt.Sprintf("no comparison with the prior: %v", err))
	case err != nil:
		return nil, err
	default:
		prior, err = mediation.Split(priorIn, wins)
		if err != nil {
			return nil, fmt.Errorf("the effects under the priors: %w", err)
		}
		sup = mediation.Supports(res, prior, ff.scaled, wins, negligible)
		notes = mediation.SupportNotes(res, sup, "all", negligible)
	}
	if ctx.Err() != nil {
		return nil, ctx.Err()
	}
	sens, err := mediation.Sensitivities(in, mediation.RhoGrid())
	if err != nil {
		return nil, err
	}
	fitted, err := mediation.Fitted(in, ff.Run.Seed)
	if err != nil {
		return nil, err
	}
	curves, err := mediation.Curves(in, 41)
	if err != nil {
		return nil, err
	}
	returns, err := mediation.Returns(in, res)
	if err != nil {
		return nil, err
	}
	implied := mediation.ImpliedTable(in, res, prior)
	return &splitResult{
		Split: fitfolder.Split{
			Effects:     mediation.EffectsTable(res, sup),
			EffectDraws: mediation.EffectDrawsTable(res),
			Borrowed:    mediation.BorrowedTable(res),
			Weekly:      mediation.WeeklyTable(res, ff.scaled.Weeks, ff.scaled.UpperNames),
			Sensitivity: mediation.SensitivityTable(sens),
			Breakeven:   mediation.BreakevenTable(sens),
			Fitted:      fitted,
			Curves:      curves,
			Returns:     returns,
			Implied:     implied,
		},
		res: res, sens: sens, asked: asked, unit: ff.Run.Spec.Outcome, notes: notes, upper: ff.Run.Spec.Upper,
		stated: mediation.ImpliedNotes(implied),
	}, nil
}

// splitPanel is splitFit for a region panel: every region's effects by
// counterfactual simulation on its own data and draws, summed over regions
// draw by draw (mediation.SplitPanelTables, which keeps only the draws the
// region tables still need). effects.csv, borrowed.csv and the other national files hold
// the sum over regions (the prior comparison of effects.csv is left out:
// the panel's prior draws are not made yet); effects_by_region.csv,
// borrowed_by_region.csv and region_differences.csv each region.
func splitPanel(ctx context.Context, ff *fitFolder, wins []window.Window, asked window.Window) (*splitResult, error) {
	in := ff.panel.Inputs()
	pt, err := mediation.SplitPanelTables(in, wins)
	if err != nil {
		return nil, err
	}
	if ctx.Err() != nil {
		return nil, ctx.Err()
	}
	sens, err := mediation.SensitivitiesPanel(in, mediation.RhoGrid())
	if err != nil {
		return nil, err
	}
	fitted, err := mediation.FittedPanel(in, ff.Run.Seed)
	if err != nil {
		return nil, err
	}
	curves, err := mediation.CurvesPanel(in, 41)
	if err != nil {
		return nil, err
	}
	returns, err := mediation.ReturnsPanel(in, pt.Total)
	if err != nil {
		return nil, err
	}
	if ctx.Err() != nil {
		return nil, ctx.Err()
	}
	res := pt.Total
	return &splitResult{
		Split: fitfolder.Split{
			Effects:           mediation.EffectsTable(res, nil),
			EffectDraws:       mediation.EffectDrawsTable(res),
			Borrowed:          mediation.BorrowedTable(res),
			Weekly:            mediation.WeeklyTable(res, ff.scaled.Weeks, ff.scaled.UpperNames),
			Sensitivity:       mediation.SensitivityTable(sens),
			Breakeven:         mediation.BreakevenTable(sens),
			Fitted:            fitted,
			Curves:            curves,
			Returns:           returns,
			RegionEffects:     pt.Effects,
			RegionBorrowed:    pt.Borrowed,
			RegionDifferences: pt.Differences,
		},
		res: res, sens: sens, asked: asked, unit: ff.Run.Spec.Outcome, upper: ff.Run.Spec.Upper,
		notes: []string{"no comparison with the prior: the region panel's effects under its priors are not computed yet"},
	}, nil
}

// print prints the split table for the window asked and where the
// via-search effects would reach zero.
func (s *splitResult) print(stdout io.Writer) error {
	if err := mediation.Table(stdout, s.res, s.asked.Name, s.unit); err != nil {
		return err
	}
	fmt.Fprintln(stdout)
	for _, s := range s.sens {
		if math.IsNaN(s.Zero) {
			fmt.Fprintf(stdout, "%s: the via-search effect stays on one side of zero for every error correlation rho in (-1, 1)\n", s.Channel)
			continue
		}
		fmt.Fprintf(stdout, "%s: the via-search effect reaches zero if the errors of the demand and outcome stages correlate at rho = %.2f\n", s.Channel, s.Zero)
	}
	if len(s.notes) > 0 {
		fmt.Fprintln(stdout)
		fmt.Fprintln(stdout, "What the data cannot tell (whole period):")
		for _, n := range s.notes {
			fmt.Fprintf(stdout, "  %s\n", n)
		}
	}
	printRegions(stdout, &s.Split, s.upper)
	if len(s.stated) > 0 {
		fmt.Fprintln(stdout)
		fmt.Fprintln(stdout, "Stated returns the data disagree with:")
		for _, n := range s.stated {
			fmt.Fprintf(stdout, "  %s\n", n)
		}
	}
	return nil
}

// withNotes returns the fit's verdict with the split's notes as its
// "effect" lines, replacing those of an earlier split.
func (s *splitResult) withNotes(v fitfolder.Verdict) fitfolder.Verdict {
	out := fitfolder.Verdict{Trustworthy: v.Trustworthy}
	for _, r := range v.Reasons {
		if r.Stage != "effect" {
			out.Reasons = append(out.Reasons, r)
		}
	}
	for _, n := range s.notes {
		out.Reasons = append(out.Reasons, fitfolder.Reason{Stage: "effect", Text: "note: " + n})
	}
	return out
}
