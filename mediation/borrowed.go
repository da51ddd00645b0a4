package mediation

import (
	"fmt"

	"spillway/funnel/fitfolder"
)

// NaiveCheck compares, per paid-search channel over the whole period, the
// apparent return (per draw, what the stage without queries would credit)
// with the separate refit without queries. They agree when each mean lies
// inside the other's 90% interval; for each channel where they do not, it
// returns a note saying so and which figure to use. rows are borrowed.csv
// rows; channels without a naive row are skipped.
func NaiveCheck(rows []fitfolder.Borrowed) []string {
	get := func(ch, m string) (fitfolder.Borrowed, bool) {
		for _, b := range rows {
			if b.Channel == ch && b.Measure == m && b.Window == "all" {
				return b, true
			}
		}
		return fitfolder.Borrowed{}, false
	}
	var notes []string
	for _, b := range rows {
		if b.Measure != "apparent" || b.Window != "all" {
			continue
		}
		n, ok := get(b.Channel, "naive")
		if !ok || Agree(b, n) {
			continue
		}
		notes = append(notes, fmt.Sprintf("note: for %s the apparent return (%.0f [%.0f, %.0f]) and the refit without queries (%.0f [%.0f, %.0f]) disagree. "+
			"Use the apparent return and its borrowed share: each posterior draw pairs paid search's controlled effect with the apparent effect of the same draw, "+
			"so the share is coherent; the refit estimates paid search's carryover and saturation anew without the query term and so answers a different question. "+
			"A gap this large says paid search's effect is poorly pinned down by these data.",
			b.Channel, b.Mean, b.Q05, b.Q95, n.Mean, n.Q05, n.Q95))
	}
	return notes
}

// Agree reports whether two summaries agree: each mean inside the other's
// 90% interval.
func Agree(a, b fitfolder.Borrowed) bool {
	return a.Mean >= b.Q05 && a.Mean <= b.Q95 && b.Mean >= a.Q05 && b.Mean <= a.Q95
}

// BorrowedShare is the share of paid search's apparent return that is
// demand borrowed from the upper funnel, for one posterior draw:
// (apparent − controlled) / apparent. On a draw where the stage without
// queries credits paid search with less than its controlled return (the
// queries moved against paid search), it is (apparent − controlled) /
// controlled instead: the part of the controlled return that stage misses,
// a negative share. The share so stays within [−1, 1] and is continuous
// where the two returns meet; divided by the apparent return alone it runs
// to −∞ as the apparent return nears zero, which the sign of the stage's
// coefficient allows (2 draws of 4000 on a user's data set), and one such
// draw decides the posterior mean. Both zero: nothing is borrowed, 0.
func BorrowedShare(apparent, controlled float64) float64 {
	d := max(apparent, controlled)
	if d <= 0 {
		return 0
	}
	return (apparent - controlled) / d
}
