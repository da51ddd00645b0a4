package main

import (
	"strconv"
	"strings"

	"spillway/funnel/data"
)

// exposureFlags turns the --exposure (or --reach, named by flag)
// SPEND=COLUMN flags into mappings; a flag not of that form is a usage
// error naming it. Given, they replace the spec file's mappings.
func exposureFlags(flags []string, flag string) ([]data.Exposure, error) {
	var out []data.Exposure
	for _, f := range flags {
		spend, col, ok := strings.Cut(f, "=")
		spend, col = strings.TrimSpace(spend), strings.TrimSpace(col)
		if !ok || spend == "" || col == "" {
			return nil, usagef("%s %q: expected SPEND=COLUMN, an upper-funnel spend column and its %s column, like video_spend=video_%s", flag, f, flag[2:], map[string]string{"--exposure": "impressions", "--reach": "reach"}[flag])
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
	return measureFlags(ms, flags, "--exposure-break", "COLUMN=YYYY-MM-DD, a channel with an exposure column and the first week of its new measurement", "break",
		func(m *data.Exposure, v string) error { m.Break = v; return nil })
}

// errorFlags puts the --exposure-error COLUMN=SD flags on the mappings as
// breakFlags does; SD must be a number (Spec.Validate checks its range).
func errorFlags(ms []data.Exposure, flags []string) ([]data.Exposure, error) {
	return measureFlags(ms, flags, "--exposure-error", "COLUMN=SD, a channel with an exposure column and the sd of its log error, like video_spend=0.15", "error size",
		func(m *data.Exposure, v string) error {
			sd, err := strconv.ParseFloat(v, 64)
			if err != nil {
				return err
			}
			m.Error = sd
			return nil
		})
}

// frequencyFlags puts the --frequency SPEND=COLUMN flags on the mappings
// given with --reach (reach) and checks that each of those has one.
func frequencyFlags(ms []data.Exposure, flags []string, reach []data.Exposure) ([]data.Exposure, error) {
	isReach := map[string]bool{}
	for _, m := range reach {
		isReach[m.Spend] = true
	}
	for _, f := range flags {
		col, _, _ := strings.Cut(f, "=")
		if col = strings.TrimSpace(col); col != "" && !isReach[col] {
			for _, m := range ms {
				if (m.Spend == col || m.Column == col) && !isReach[m.Spend] {
					return nil, usagef("--frequency %q: the exposure of %s is given with --exposure; a frequency goes with a reach column (--reach %s=COLUMN)", f, m.Spend, m.Spend)
				}
			}
		}
	}
	ms, err := measureFlags(ms, flags, "--frequency", "SPEND=COLUMN, a channel given with --reach and its average frequency column", "frequency",
		func(m *data.Exposure, v string) error { m.Frequency = v; return nil })
	if err != nil {
		return nil, err
	}
	for _, m := range ms {
		if isReach[m.Spend] && m.Frequency == "" {
			return nil, usagef("--reach %s=%s: no --frequency %s=COLUMN; a reach goes with its average frequency", m.Spend, m.Column, m.Spend)
		}
	}
	return ms, nil
}

// measureFlags applies flags of the form COLUMN=VALUE, named flag, to the
// mapping of COLUMN (its spend or exposure column) with set; want says
// what the flag expects and what its value is.
func measureFlags(ms []data.Exposure, flags []string, flag, want, what string, set func(*data.Exposure, string) error) ([]data.Exposure, error) {
	if len(flags) == 0 {
		return ms, nil
	}
	ms = append([]data.Exposure(nil), ms...)
	done := map[int]bool{}
	for _, f := range flags {
		col, v, ok := strings.Cut(f, "=")
		col, v = strings.TrimSpace(col), strings.TrimSpace(v)
		if !ok || col == "" || v == "" {
			return nil, usagef("%s %q: expected %s", flag, f, want)
		}
		i := -1
		for k, m := range ms {
			if m.Spend == col || m.Column == col {
				i = k
			}
		}
		switch {
		case i < 0:
			return nil, usagef("%s %q: %s has no exposure column; a measurement %s is in a channel's exposure (give --exposure SPEND=COLUMN first)", flag, f, col, what)
		case done[i]:
			return nil, usagef("%s %q: channel %s already has one; one %s per channel is supported", flag, f, ms[i].Spend, what)
		}
		done[i] = true
		if err := set(&ms[i], v); err != nil {
			return nil, usagef("%s %q: expected %s", flag, f, want)
		}
	}
	return ms, nil
}
