package report

import (
	"fmt"
	"math"
	"time"

	"spillway/funnel/fitfolder"
	"spillway/plots"
)

// driftView is the report's section on effectiveness over time: for every
// drifting coefficient, whether it changed from the first full quarter to
// the last and by how much, and each lift test beside the model.
type driftView struct {
	Intro   string
	Changes []driftRow
	Lifts   []liftRow
	Notes   []string
}

type driftRow struct {
	Channel, Path           string
	Ratio, Interval, Up, Dn string
	Peak, Trough, Verdict   string
}

type liftRow struct {
	Channel, Metric, Weeks string
	Test, Model, Rest      string
	P, Verdict, LeftOut    string
}

// PanelDriftNote is the drift section's caution on a region panel, whose
// multiplier every region shares.
const PanelDriftNote = "On this region panel the multiplier is the same in every region (each region keeps its own average effectiveness): a change in one region alone is spread over all of them."

var driftPathLabels = map[string]string{"via_search": "via branded search", "direct": "direct", "controlled": "own effect"}

// driftSection builds the section from drift_change.csv and lifts.csv; nil
// when the fit has neither drifting coefficients nor lift tests.
func driftSection(f *fitfolder.Fit) *driftView {
	if len(f.Drift) == 0 && len(f.Lifts) == 0 {
		return nil
	}
	lab := plots.LabelsOf(f)
	v := &driftView{}
	clear := 0
	for _, c := range f.DriftChange {
		verdict := "no clear change"
		switch {
		case c.Up >= 0.9:
			verdict, clear = "rose", clear+1
		case c.Down >= 0.9:
			verdict, clear = "fell", clear+1
		}
		v.Changes = append(v.Changes, driftRow{Channel: lab.Channel(c.Channel), Path: driftPathLabels[c.Path],
			Ratio:    fmt.Sprintf("%.2f×", c.Mean),
			Interval: fmt.Sprintf("%.2f× to %.2f×", c.Q05, c.Q95),
			Up:       plots.Percent(c.Up), Dn: plots.Percent(c.Down),
			Peak:    fmt.Sprintf("%s (%.2f×)", c.Peak, c.PeakMean),
			Trough:  fmt.Sprintf("%s (%.2f×)", c.Trough, c.TroughMean),
			Verdict: verdict})
	}
	if len(f.DriftChange) > 0 {
		c := f.DriftChange[0]
		v.Intro = fmt.Sprintf("Each drifting coefficient is the channel's average effectiveness times a multiplier that moves smoothly by week (1 is the average over the data). "+
			"The table compares the mean multiplier of the last full quarter (%s) with the first (%s), draw by draw: a change is called clear when its posterior probability of exceeding 10%% in one direction is at least 90%%. %d of %d changed clearly.",
			c.Last, c.First, clear, len(f.DriftChange))
	} else if len(f.Drift) > 0 {
		v.Intro = "The data hold fewer than two full quarters, so no change in effectiveness is compared."
	}
	if len(f.Drift) > 0 && f.HasRegions() {
		v.Intro += " " + PanelDriftNote
	}
	contradicted := 0
	for _, l := range f.Lifts {
		left := "reweighting the fit's draws"
		if l.Refit {
			left = "a refit without it"
		}
		rest := "–"
		if !math.IsNaN(l.RestMean) {
			rest = fmt.Sprintf("%s (sd %s)", plots.Number(l.RestMean), plots.Number(l.RestSD))
		}
		if l.Verdict == "contradicts" {
			contradicted++
		}
		metric := l.Metric
		switch {
		case l.Region != "":
			metric += " in " + l.Region
		case f.HasRegions():
			metric += ", all regions"
		}
		v.Lifts = append(v.Lifts, liftRow{Channel: lab.Channel(l.Channel), Metric: metric,
			Weeks: l.Start.Format(time.DateOnly) + " to " + l.End.Format(time.DateOnly),
			Test:  fmt.Sprintf("%s ± %s", plots.Number(l.Estimate), plots.Number(1.645*l.SE)),
			Model: fmt.Sprintf("%s [%s, %s]", plots.Number(l.Mean), plots.Number(l.Q05), plots.Number(l.Q95)),
			Rest:  rest, P: fmt.Sprintf("%.2g", l.P), Verdict: l.Verdict, LeftOut: left})
	}
	if len(f.Lifts) > 0 {
		v.Notes = append(v.Notes, "Each lift test is fitted as data. Its check leaves it out (by reweighting the fit's draws, or by a refit without it when the reweighting is unreliable) and asks how surprising its estimate is under what the rest of the data predict: p below 0.01 contradicts the data; a test the rest of the data cannot pin down is unchecked.")
		if contradicted > 0 {
			v.Notes = append(v.Notes, fmt.Sprintf("%d lift test(s) contradict the rest of the data. The fit still includes them: before relying on the channels they measured, find out why (a different window, region or definition of the outcome, or an experiment that went wrong).", contradicted))
		}
	}
	v.Notes = append(v.Notes, "A multiplier that moves can also absorb a change the model does not name (a competitor, a price, a new product); read a change in effectiveness beside what happened in the business at that time.")
	return v
}
