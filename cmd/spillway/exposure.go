package main

import (
	"strings"

	"spillway/funnel/data"
)

// exposureFlags turns the --exposure SPEND=COLUMN flags into mappings; a
// flag not of that form is a usage error naming it. Given, they replace the
// spec file's mappings.
func exposureFlags(flags []string) ([]data.Exposure, error) {
	var out []data.Exposure
	for _, f := range flags {
		spend, col, ok := strings.Cut(f, "=")
		spend, col = strings.TrimSpace(spend), strings.TrimSpace(col)
		if !ok || spend == "" || col == "" {
			return nil, usagef("--exposure %q: expected SPEND=COLUMN, an upper-funnel spend column and its exposure column, like video_spend=video_impressions", f)
		}
		out = append(out, data.Exposure{Spend: spend, Column: col})
	}
	return out, nil
}

// breakFlags puts the --exposure-break COLUMN=YYYY-MM-DD flags on the
// mappings (COLUMN is the spend or the exposure column of one) and returns
// them; the flags override a break of the spec file. A flag of another
// form, on a channel without exposure, or a second break of one channel is
// a usage error naming the flag; Spec.Validate checks the date's form and
// data.Read that it is a week of the data.
func breakFlags(ms []data.Exposure, flags []string) ([]data.Exposure, error) {
	if len(flags) == 0 {
		return ms, nil
	}
	ms = append([]data.Exposure(nil), ms...)
	set := map[int]bool{}
	for _, f := range flags {
		col, date, ok := strings.Cut(f, "=")
		col, date = strings.TrimSpace(col), strings.TrimSpace(date)
		if !ok || col == "" || date == "" {
			return nil, usagef("--exposure-break %q: expected COLUMN=YYYY-MM-DD, a channel with an exposure column and the first week of its new measurement", f)
		}
		i := -1
		for k, m := range ms {
			if m.Spend == col || m.Column == col {
				i = k
			}
		}
		switch {
		case i < 0:
			return nil, usagef("--exposure-break %q: %s has no exposure column; a measurement break is in a channel's exposure (give --exposure SPEND=COLUMN first)", f, col)
		case set[i]:
			return nil, usagef("--exposure-break %q: channel %s already has a break; one break per channel is supported", f, ms[i].Spend)
		}
		set[i] = true
		ms[i].Break = date
	}
	return ms, nil
}
