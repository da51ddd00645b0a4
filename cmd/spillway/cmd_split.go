package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"strings"

	"github.com/spf13/pflag"

	"spillway/funnel/fitfolder"
	"spillway/funnel/pipeline"
	"spillway/funnel/window"
	"spillway/mediation"
)

// splitOptions are the flags of spillway split.
type splitOptions struct {
	fit, window string
}

func (o *splitOptions) addFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.fit, "fit", "", "the fit `FOLDER` written by 'spillway fit'")
	fs.StringVar(&o.window, "window", "all", "the `WINDOW` for the table: all, a quarter (2024Q3) or FROM:TO (2024-01-01:2024-03-31)")
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
  effects.csv       channel,path,window,mean,q05,q50,q95,per_unit_spend
                    (window all and every calendar quarter; also WINDOW)
  effect_draws.csv  the same effects per draw, for paired comparisons
  borrowed.csv      paid search: controlled, apparent, naive, borrowed_share
  weekly.csv        weekly via-search and direct contributions
  sensitivity.csv   the via-search effect if the stages' errors correlate
                    with rho = -0.9 .. 0.9; breakeven.csv gives the rho
                    at which it reaches zero
  fitted.csv        actual against fitted, both stages, 90% predictive band
  curves.csv        response curves per upper channel
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
			return runSplit(ctx, opts.fit, opts.window, stdout, true)
		},
	}
}

// runSplit computes the effects of a fit folder and adds the split's files
// to it atomically; say reports the folder on stdout.
func runSplit(ctx context.Context, dir, windowName string, stdout io.Writer, say bool) error {
	ff, err := readFitFolder(dir)
	if err != nil {
		return err
	}
	s, err := splitFit(ctx, ff, windowName)
	if err != nil {
		return err
	}
	files, err := s.Files()
	if err != nil {
		return err
	}
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
}

// splitFit computes the effects of ff for every quarter, the whole period
// and the window named.
func splitFit(ctx context.Context, ff *fitFolder, windowName string) (*splitResult, error) {
	wins := window.Quarters(ff.scaled.Weeks)
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
	in := pipeline.Pair(ff.scaled, ff.stages, ff.fits)
	res, err := mediation.Split(in, wins)
	if err != nil {
		return nil, err
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
	return &splitResult{
		Split: fitfolder.Split{
			Effects:     mediation.EffectsTable(res),
			EffectDraws: mediation.EffectDrawsTable(res),
			Borrowed:    mediation.BorrowedTable(res),
			Weekly:      mediation.WeeklyTable(res, ff.scaled.Weeks, ff.scaled.UpperNames),
			Sensitivity: mediation.SensitivityTable(sens),
			Breakeven:   mediation.BreakevenTable(sens),
			Fitted:      fitted,
			Curves:      curves,
		},
		res: res, sens: sens, asked: asked, unit: ff.Run.Spec.Outcome,
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
	return nil
}
