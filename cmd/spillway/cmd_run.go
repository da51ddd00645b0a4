package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"path/filepath"
	"strings"

	"github.com/spf13/pflag"

	"spillway/funnel/allocate"
	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/plots"
	htmlreport "spillway/plots/report"
)

// runOptions are the flags of spillway run.
type runOptions struct {
	roles      roleFlags
	sampling   samplingFlags
	window     string
	negligible float64
	allocate   bool
}

func (o *runOptions) addFlags(fs *pflag.FlagSet) {
	o.roles.addFlags(fs)
	o.sampling.addFlags(fs)
	fs.StringVar(&o.window, "window", "", "the review `WINDOW` for the table, charts and report: all, a quarter (2025Q2) or FROM:TO; default: the last full quarter")
	addNegligibleFlag(fs, &o.negligible)
	fs.BoolVar(&o.allocate, "allocate", false, "also plan the budget of the 13 weeks after the data (spillway allocate with its defaults) into the folder and the report")
}

// newRunCommand builds spillway run.
func newRunCommand() *command {
	var opts runOptions
	fs := newFlagSet("run")
	opts.addFlags(fs)
	return &command{
		name:  "run",
		usage: "run [--data FILE (roles)] --out FOLDER [flags]",
		short: "the whole job: check, fit, split, charts, report (the demo without --data)",
		long: `Run does the whole job: checks the data, fits the three stages, splits each
upper-funnel channel's effect into direct and via search, measures paid
search's borrowed demand and the sensitivity to the causal assumption, draws
the charts and writes the review report, all into FOLDER (written atomically:
an interrupted run leaves nothing behind). It prints where the report is.
Without --data (and the other role flags) it runs the built-in demo:
Quillmere Bikes, an invented brand, 156 weeks of video, audio and paid search.
The steps are also commands of their own: fit, split, chart and report. With
--allocate it also plans the budget of the weeks after the data (see
'spillway help allocate'; a plan rests on the model's assumptions: confirm
large moves with a controlled experiment).

With --chain I/N it samples only chain I of N (see 'spillway help fit')
and writes that shard folder alone, no charts or report; 'spillway run
--merge FOLDER... --out FOLDER' puts the chains together and writes the
whole folder, charts and report included, as one run would (the review
options --window, --negligible and --allocate are the shards').

EXAMPLE
  spillway run --out demo-out
  spillway run --data sales.csv --date week --upper video,audio --search search \
    --queries brand_queries --outcome orders --controls price --out q3-review
  spillway run --merge chains/chain* --out q3-review   # after run --chain I/N jobs

` + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			return runAll(ctx, &opts, args, stdout, stderr)
		},
	}
}

// runAll fits, splits, draws and reports into one temporary folder and
// commits it at the end; without data roles it runs the demo. The charts
// and the report are drawn from the fit and split in memory; the files are
// written for the user.
func runAll(ctx context.Context, o *runOptions, args []string, stdout, stderr io.Writer) error {
	if o.sampling.shard.merge {
		return mergeFit(ctx, "run", &o.sampling, args, stdout, stderr)
	}
	if err := noArgs(args); err != nil {
		return err
	}
	if err := checkNegligible(o.negligible); err != nil {
		return err
	}
	if o.window != "" {
		if _, err := window.Parse(o.window); err != nil {
			return usagef("--window: %v", strings.TrimPrefix(err.Error(), "window "))
		}
	}
	demo := ""
	if !o.roles.given() {
		demo = "demo"
		fmt.Fprintln(stderr, "spillway run: no --data given: running the built-in demo (Quillmere Bikes, 156 weeks)")
	}
	// the review window: its form checked now, its weeks against the data
	// once loaded, both before any sampling
	checkWindow := func(ds *data.Dataset) error {
		if o.window == "" {
			return nil
		}
		if _, err := window.Resolve(o.window, ds.Weeks); err != nil {
			return usagef("--window: %v", strings.TrimPrefix(err.Error(), "window "))
		}
		return nil
	}
	// a region panel's budget plan is not made yet: say so before any
	// sampling
	checkAllocate := func(ds *data.Dataset) error {
		if o.allocate && isPanel(fitfolder.Run{National: o.sampling.national}, ds) {
			return usagef("--allocate: a region panel's budget plan is not made yet; leave out --allocate, or add --national to fit and plan the regions' sum")
		}
		return nil
	}
	review := &fitfolder.Review{Window: o.window, Negligible: o.negligible, Allocate: o.allocate}
	od, err := runFit(ctx, &o.roles, &o.sampling, demo, review, stdout, stderr, checkWindow, checkAllocate)
	if err != nil {
		return err
	}
	defer od.Abort()
	if od.chain != "" {
		if err := od.Commit(); err != nil {
			return err
		}
		printShardWritten(stdout, od, "run")
		return nil
	}
	return finishRun(ctx, od, review, stdout, stderr)
}

// finishRun is what run does after the fit, in the same output folder:
// the split, the budget plan with --allocate, the charts and the report; it
// commits the folder.
func finishRun(ctx context.Context, od *fitRun, o *fitfolder.Review, stdout, stderr io.Writer) error {
	// the review window of the table, the charts and the report: checked
	// against the data before the fit (checkWindow)
	fmt.Fprintln(stdout)
	s, err := splitFit(ctx, od.fit, o.Window, o.Negligible)
	if err != nil {
		return err
	}
	files, err := s.Files()
	if err != nil {
		return err
	}
	od.fit.Verdict = s.withNotes(od.fit.Verdict)
	files["verdict.txt"] = []byte(od.fit.Verdict.Text())
	if err := ctx.Err(); err != nil {
		return err
	}
	for name, b := range files {
		if err := od.WriteFile(name, b); err != nil {
			return err
		}
	}
	if err := s.print(stdout); err != nil {
		return err
	}
	f := od.fit.Fit
	f.Split = s.Split
	if err := f.ReadDrift(od.Path()); err != nil {
		return err
	}
	f.Dir = od.Final()
	if o.Allocate {
		fmt.Fprintln(stdout)
		pf := planFlags{weeks: allocate.DefaultWeeks, pattern: "last"}
		files, err := planFiles(ctx, od.fit, &pf, "spillway allocate --fit "+shellQuote(od.Final()), stdout, stderr)
		if err != nil {
			return err
		}
		for name, b := range files {
			if err := od.WriteFile(name, b); err != nil {
				return err
			}
		}
		if f.Plan, err = fitfolder.ReadPlan(od.Path()); err != nil {
			return err
		}
	}
	w, err := f.Window(s.asked.Name)
	if err != nil {
		return usagef("--window: %v", err)
	}
	pngs, err := plots.Render(f, w.Name)
	if err != nil {
		return err
	}
	for _, n := range plots.NamesOf(f) {
		if err := od.WriteFile("charts/"+n+".png", pngs[n]); err != nil {
			return err
		}
	}
	var buf bytes.Buffer
	if err := htmlreport.Write(&buf, f, w.Name, pngs); err != nil {
		return err
	}
	if err := od.WriteFile("report.html", buf.Bytes()); err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	if err := od.Commit(); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "\nreview window %s; charts in %s\nreport: %s\n", w.Name, filepath.Join(od.Final(), "charts"), filepath.Join(od.Final(), "report.html"))
	return nil
}
