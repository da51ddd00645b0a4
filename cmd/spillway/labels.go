package main

import (
	"maps"
	"slices"
	"strings"

	"github.com/spf13/pflag"

	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
)

// labelFlags are the display names a review uses instead of column names:
// --label COLUMN=NAME (repeatable), --outcome-name and --currency. They are
// recorded in spec.json, so chart and report read them back.
type labelFlags struct {
	labels   []string
	outcome  string
	currency string
}

func (l *labelFlags) addFlags(fs *pflag.FlagSet) {
	fs.StringArrayVar(&l.labels, "label", nil, "a display name for a spend column on the charts and in the report, `COLUMN=NAME` "+
		`(repeat the flag: --label video_spend="Online video")`)
	fs.StringVar(&l.outcome, "outcome-name", "", "the outcome's `NAME` on the charts and in the report, e.g. orders (default: the column name)")
	fs.StringVar(&l.currency, "currency", "", "the currency of spend, e.g. EUR, shown on spend axes and in the report's tables (default: none)")
}

// resolve checks the flags against the data's roles: every labelled column
// is a spend column, no column is labelled twice, no name is empty.
func (l *labelFlags) resolve(spec data.Spec) (fitfolder.Labels, error) {
	out := fitfolder.Labels{Outcome: strings.TrimSpace(l.outcome), Currency: strings.TrimSpace(l.currency)}
	media := spec.Media()
	for _, kv := range l.labels {
		col, name, ok := strings.Cut(kv, "=")
		col, name = strings.TrimSpace(col), strings.TrimSpace(name)
		switch {
		case !ok || col == "" || name == "":
			return fitfolder.Labels{}, usagef("--label %q: expected COLUMN=NAME, e.g. --label video_spend=\"Online video\"", kv)
		case !slices.Contains(media, col):
			return fitfolder.Labels{}, usagef("--label %s: %s is not a spend column (spend columns: %s)", kv, col, strings.Join(media, ", "))
		}
		if out.Channels == nil {
			out.Channels = map[string]string{}
		}
		if _, dup := out.Channels[col]; dup {
			return fitfolder.Labels{}, usagef("--label: %s is labelled twice", col)
		}
		out.Channels[col] = name
	}
	if len(out.Outcome) > 60 || len(out.Currency) > 12 {
		return fitfolder.Labels{}, usagef("--outcome-name (at most 60 characters) or --currency (at most 12) is too long")
	}
	return out, nil
}

// labelArgs are the label flags that give back l, in a fixed order, for the
// rerun command.
func labelArgs(l fitfolder.Labels) []string {
	var args []string
	for _, col := range slices.Sorted(maps.Keys(l.Channels)) {
		args = append(args, "--label", col+"="+l.Channels[col])
	}
	if l.Outcome != "" {
		args = append(args, "--outcome-name", l.Outcome)
	}
	if l.Currency != "" {
		args = append(args, "--currency", l.Currency)
	}
	return args
}
