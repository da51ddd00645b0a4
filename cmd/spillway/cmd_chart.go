package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"

	"github.com/spf13/pflag"

	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/plots"
)

// reviewOptions are the flags chart and report share.
type reviewOptions struct {
	fit    string // the fit folder
	window string // the review window; empty means the last full quarter
	out    string // where to write; empty means inside the fit folder
	force  bool   // replace existing output
}

func (o *reviewOptions) addFlags(fs *pflag.FlagSet, outHelp string) {
	fs.StringVar(&o.fit, "fit", "", "the fit `FOLDER` written by 'spillway fit' and 'spillway split'")
	fs.StringVar(&o.window, "window", "", "the review `WINDOW`: all, a quarter (2025Q2) or FROM:TO (2025-04-01:2025-06-30); "+
		"default: the last full quarter in the data")
	fs.StringVar(&o.out, "out", "", outHelp)
	fs.BoolVar(&o.force, "force", false, "replace output that already exists")
}

// loadReview checks the options and reads the fit folder and the window.
// A missing or unreadable folder or an unknown window is a usage error; a
// broken file in the folder is bad data (both exit 2).
func (o *reviewOptions) loadReview(args []string) (*fitfolder.Fit, window.Window, error) {
	if err := noArgs(args); err != nil {
		return nil, window.Window{}, err
	}
	if o.fit == "" {
		return nil, window.Window{}, usagef("no fit folder: name it with --fit FOLDER")
	}
	if st, err := os.Stat(o.fit); err != nil || !st.IsDir() {
		return nil, window.Window{}, usagef("fit folder %s does not exist or is not a folder", o.fit)
	}
	f, err := fitfolder.Load(o.fit)
	if err != nil {
		return nil, window.Window{}, badData(err)
	}
	w, err := f.Window(o.window)
	if err != nil {
		return nil, window.Window{}, usagef("--window: %v", err)
	}
	return f, w, nil
}

// windowNote tells on stderr which window a review uses when none was asked.
func (o *reviewOptions) windowNote(stderr io.Writer, cmd string, w window.Window) {
	if o.window == "" {
		fmt.Fprintf(stderr, "spillway %s: window %s (the last full quarter; choose another with --window)\n", cmd, w.Name)
	}
}

// reviewOutputExists reports whether path exists.
func reviewOutputExists(path string) bool {
	_, err := os.Lstat(path)
	return !errors.Is(err, fs.ErrNotExist)
}

// newChartCommand builds spillway chart.
func newChartCommand() *command {
	var opts reviewOptions
	fs := newFlagSet("chart")
	opts.addFlags(fs, "the `FOLDER` for the PNGs (default FIT/charts)")
	return &command{
		name:  "chart",
		usage: "chart --fit FOLDER [--window WINDOW] [flags]",
		short: "draw the review charts as PNGs",
		long: `Chart reads a fit folder (after 'spillway split') and draws the charts of a
review as 1600x900 PNGs, sized for a slide, into FIT/charts (or --out):
  split.png        direct and via-search effect of each upper-funnel channel,
                   stacked, with 90% intervals, for the window and the whole
                   period
  borrowed.png     paid search: apparent against controlled incremental, the
                   share borrowed from the upper funnel, the refit without
                   queries as a cross-check
  curves.png       response curves (weekly outcome against weekly spend)
  weekly.png       weekly via-search and direct contributions
  fit.png          actual against fitted, both stages, 90% predictive band
  sensitivity.png  the via-search effect against the error correlation rho
  diagnostics.png  R-hat and effective sample size of every parameter
Each title states the finding; each caption names the data window and the
interval level. The colours stay distinct for protanopia, deuteranopia and
tritanopia. The window is one of effects.csv's: all, a quarter or a FROM:TO
range; by default the last quarter the data cover in full. Existing charts
are replaced only with --force; the PNGs are written all or none. The paths
written are printed, one a line.

EXAMPLE
  spillway chart --fit fit1 --window 2025Q2

` + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			return runChart(ctx, &opts, args, stdout, stderr)
		},
	}
}

// runChart renders every chart and writes them at once.
func runChart(ctx context.Context, o *reviewOptions, args []string, stdout, stderr io.Writer) error {
	f, w, err := o.loadReview(args)
	if err != nil {
		return err
	}
	out := o.out
	if out == "" {
		out = filepath.Join(o.fit, "charts")
	}
	out = filepath.Clean(out)
	parent, base := filepath.Dir(out), filepath.Base(out)
	if st, err := os.Stat(parent); err != nil || !st.IsDir() {
		return usagef("cannot write charts into %s: folder %s does not exist", out, parent)
	}
	if st, err := os.Stat(out); err == nil && !st.IsDir() {
		return usagef("cannot write charts into %s: it is a file", out)
	}
	if !o.force {
		for _, n := range plots.NamesFor(f) {
			if p := filepath.Join(out, n+".png"); reviewOutputExists(p) {
				return usagef("%s already exists; use --force to replace the charts", p)
			}
		}
	}
	o.windowNote(stderr, "chart", w)
	pngs, err := plots.Render(f, w.Name)
	if err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	files := make(map[string][]byte, len(pngs))
	for _, n := range plots.NamesFor(f) {
		files[base+"/"+n+".png"] = pngs[n]
	}
	if err := updateInPlace(parent, files); err != nil {
		return err
	}
	for _, n := range plots.NamesFor(f) {
		fmt.Fprintln(stdout, filepath.Join(out, n+".png"))
	}
	return nil
}
