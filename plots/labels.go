package plots

import (
	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
)

// Labels are the names a review shows: the user's display names from
// spec.json (--label, --outcome-name, --currency) where given, else names
// made from the column names (Channel, Plain).
type Labels struct {
	spec data.Spec
	l    fitfolder.Labels
}

// LabelsOf returns the display names of the fit f.
func LabelsOf(f *fitfolder.Fit) Labels { return Labels{f.Run.Spec, f.Run.Labels} }

// Channel returns the display name of a spend column: its label, or
// Channel(col).
func (l Labels) Channel(col string) string {
	if n, ok := l.l.Channels[col]; ok && n != "" {
		return n
	}
	return Channel(col)
}

// Channels returns the display names of cols.
func (l Labels) Channels(cols []string) []string {
	out := make([]string, len(cols))
	for i, c := range cols {
		out[i] = l.Channel(c)
	}
	return out
}

// Labelled reports whether the user named the column col.
func (l Labels) Labelled(col string) bool { return l.l.Channels[col] != "" }

// Outcome returns the outcome's display name: --outcome-name, or the
// outcome column in plain words ("conversions").
func (l Labels) Outcome() string {
	if l.l.Outcome != "" {
		return l.l.Outcome
	}
	return Plain(l.spec.Outcome)
}

// Currency returns the currency of spend, empty when none was given.
func (l Labels) Currency() string { return l.l.Currency }

// Spend formats an amount of spend, with the currency when there is one:
// "EUR 30,000" or "30,000".
func (l Labels) Spend(v float64) string {
	if l.l.Currency == "" {
		return Number(v)
	}
	return l.l.Currency + " " + Number(v)
}

// SpendUnit names a unit of spend for axis labels and column headings:
// "EUR" or "spend".
func (l Labels) SpendUnit() string {
	if l.l.Currency == "" {
		return "spend"
	}
	return l.l.Currency
}

// PaidSearch names paid-search columns for sentences: "paid search" for
// one unlabelled column called search, the label of one labelled column,
// else "paid search (brand, generic)".
func (l Labels) PaidSearch(cols []string) string {
	names := l.Channels(cols)
	if len(cols) == 1 && l.Labelled(cols[0]) {
		return names[0]
	}
	if len(names) == 1 && (names[0] == "search" || names[0] == "paid search") {
		return "paid search"
	}
	return "paid search (" + List(names) + ")"
}
