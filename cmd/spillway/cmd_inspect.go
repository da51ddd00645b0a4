package main

import (
	"context"
	"fmt"
	"io"

	"spillway/funnel/data"
)

// newInspectCommand builds spillway inspect.
func newInspectCommand() *command {
	var opts roleFlags
	fs := newFlagSet("inspect")
	opts.addFlags(fs)
	return &command{
		name:  "inspect",
		usage: "inspect --data FILE --date COLUMN --upper COLUMNS --search COLUMNS --queries COLUMN --outcome COLUMN [flags]",
		short: "check and summarise a data file",
		long: `Inspect checks a data file the way every other command does and summarises it:
the weeks and regions it covers, each column's minimum, median, maximum and
weeks at zero, total spend and each channel's share of it, and the correlation
between spend columns. Bad input stops with a message naming the file, line
and column and what was expected. Warnings (not errors) go to standard error:
nearly collinear spend columns, channels with few weeks of spend, and
outliers, with their weeks. With regions the summary is of the national
series (spend, queries and outcome summed; controls averaged, weighted by
population when given).

EXAMPLE
  spillway inspect --data sales.csv --date week --upper video,audio \
    --search search --queries brand_queries --outcome orders --controls price

` + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			return runInspect(ctx, &opts, args, stdout, stderr)
		},
	}
}

// runInspect prints the summary of the data to stdout and its warnings to
// stderr.
func runInspect(_ context.Context, opts *roleFlags, args []string, stdout, stderr io.Writer) error {
	if err := noArgs(args); err != nil {
		return err
	}
	d, err := opts.load()
	if err != nil {
		return err
	}
	for _, w := range d.Warnings {
		fmt.Fprintf(stderr, "spillway inspect: warning: %s\n", w.Message)
	}
	return data.Summarize(d).WriteText(stdout)
}
