package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"math"

	"github.com/spf13/pflag"

	"spillway/funnel/pipeline"
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
func runSplit(ctx context.Context, dir, window string, stdout io.Writer, say bool) error {
	ff, err := readFitFolder(dir)
	if err != nil {
		return err
	}
	wins := mediation.Quarters(ff.scaled.Weeks)
	asked, err := mediation.ParseWindow(window, ff.scaled.Weeks)
	if err != nil {
		return usagef("--window %v", err)
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
		return err
	}
	if ctx.Err() != nil {
		return ctx.Err()
	}
	sens, err := mediation.Sensitivities(in, mediation.RhoGrid())
	if err != nil {
		return err
	}
	files := map[string][]byte{}
	render := func(name string, f func(w io.Writer) error) error {
		var b bytes.Buffer
		if err := f(&b); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		files[name] = b.Bytes()
		return nil
	}
	for _, r := range []struct {
		name string
		f    func(io.Writer) error
	}{
		{"effects.csv", func(w io.Writer) error { return mediation.WriteEffects(w, res) }},
		{"effect_draws.csv", func(w io.Writer) error { return mediation.WriteEffectDraws(w, res) }},
		{"borrowed.csv", func(w io.Writer) error { return mediation.WriteBorrowed(w, res) }},
		{"weekly.csv", func(w io.Writer) error {
			return mediation.WriteWeekly(w, res, ff.scaled.Weeks, ff.scaled.UpperNames)
		}},
		{"sensitivity.csv", func(w io.Writer) error { return mediation.WriteSensitivity(w, sens) }},
		{"breakeven.csv", func(w io.Writer) error { return mediation.WriteBreakeven(w, sens) }},
		{"fitted.csv", func(w io.Writer) error { return mediation.WriteFitted(w, in, ff.spec.Seed) }},
		{"curves.csv", func(w io.Writer) error { return mediation.WriteCurves(w, in, 41) }},
	} {
		if err := render(r.name, r.f); err != nil {
			return err
		}
	}
	if ctx.Err() != nil {
		return ctx.Err()
	}
	if err := updateInPlace(dir, files); err != nil {
		return err
	}
	if err := mediation.Table(stdout, res, asked.Name, ff.spec.Spec.Outcome); err != nil {
		return err
	}
	fmt.Fprintln(stdout)
	for _, s := range sens {
		if math.IsNaN(s.Zero) {
			fmt.Fprintf(stdout, "%s: the via-search effect stays on one side of zero for every error correlation rho in (-1, 1)\n", s.Channel)
			continue
		}
		fmt.Fprintf(stdout, "%s: the via-search effect reaches zero if the errors of the demand and outcome stages correlate at rho = %.2f\n", s.Channel, s.Zero)
	}
	if say {
		fmt.Fprintf(stdout, "split written to %s\n", dir)
	}
	return nil
}
