package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"

	htmlreport "spillway/plots/report"
)

// newReportCommand builds spillway report.
func newReportCommand() *command {
	var opts reviewOptions
	fs := newFlagSet("report")
	opts.addFlags(fs, "the HTML `FILE` to write (default FIT/report.html)")
	return &command{
		name:  "report",
		usage: "report --fit FOLDER [--window WINDOW] [flags]",
		short: "write the quarterly-review HTML report",
		long: `Report reads a fit folder (after 'spillway split') and writes the review as one
self-contained HTML page, FIT/report.html (or --out): the charts are embedded,
it loads nothing from the network, and it prints on A4. It holds the trust
verdict (at the top when the fit failed its checks), the job in one sentence,
the headline findings in plain words, the window's split beside the previous
quarter and the same quarter a year earlier (changes and whether their 90%
intervals exclude zero, from paired posterior draws), the tables of effects
and borrowed demand, the causal assumptions with the sensitivity result, the
cautions, a summary of the data and the command that reruns the fit. The
window is one of effects.csv's: all, a quarter or a FROM:TO range; by default
the last quarter the data cover in full. If FIT/validation holds the output of
'spillway validate --fit FIT --out FIT/validation', the report adds a
validation section. An existing report is replaced only with --force. The
path written is printed.

EXAMPLE
  spillway report --fit fit1 --window 2025Q2

` + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			return runReport(ctx, &opts, args, stdout, stderr)
		},
	}
}

// runReport renders the report in memory and writes it at once.
func runReport(ctx context.Context, o *reviewOptions, args []string, stdout, stderr io.Writer) error {
	f, w, err := o.loadReview(args)
	if err != nil {
		return err
	}
	out := o.out
	if out == "" {
		out = filepath.Join(o.fit, "report.html")
	}
	out = filepath.Clean(out)
	parent := filepath.Dir(out)
	if st, err := os.Stat(parent); err != nil || !st.IsDir() {
		return usagef("cannot write %s: folder %s does not exist", out, parent)
	}
	if st, err := os.Stat(out); err == nil && st.IsDir() {
		return usagef("cannot write %s: it is a folder", out)
	}
	if !o.force && reviewOutputExists(out) {
		return usagef("%s already exists; use --force to replace it", out)
	}
	o.windowNote(stderr, "report", w)
	var buf bytes.Buffer
	if err := htmlreport.Write(&buf, f, w.Name, nil); err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	if err := updateInPlace(parent, map[string][]byte{filepath.Base(out): buf.Bytes()}); err != nil {
		return err
	}
	fmt.Fprintln(stdout, out)
	return nil
}
