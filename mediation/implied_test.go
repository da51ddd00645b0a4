package mediation

import (
	"math"
	"strings"
	"testing"

	"spillway/funnel/fitfolder"
)

// TestImpliedNotes checks the note on a stated return the data disagree
// with: a posterior median outside the stated 90% range, above or below;
// none inside it, at its ends or without a statement.
func TestImpliedNotes(t *testing.T) {
	nan := math.NaN()
	row := func(q05, q50, q95, post float64) fitfolder.Implied {
		return fitfolder.Implied{Channel: "video_spend", Path: "total", Window: "2025Q3", Measure: fitfolder.ImpliedReturnOnSpend, Per: 1000,
			StatedQ05: q05, StatedQ50: q50, StatedQ95: q95, PostQ05: post / 2, PostQ50: post, PostQ95: 2 * post}
	}
	inc := row(8225, 17889, 38906, 52000)
	inc.Measure, inc.Per, inc.Path, inc.Channel = fitfolder.ImpliedIncremental, 1, "direct", "audio_spend"
	got := ImpliedNotes([]fitfolder.Implied{row(1, 1.22, 1.5, 4.99), row(2, 4, 8, 4.99), row(2, 4, 8, 8), row(2, 4, 8, 1.5),
		row(nan, nan, nan, 100), inc})
	want := []string{
		"video_spend's total return per 1000 of spend (2025Q3): the posterior median 4.99 lies above the stated 90% range 1 to 1.5",
		"video_spend's total return per 1000 of spend (2025Q3): the posterior median 1.5 lies below the stated 90% range 2 to 8",
		"audio_spend's direct incremental outcome (2025Q3): the posterior median 52000 lies above the stated 90% range 8225 to 38906",
	}
	if len(got) != len(want) {
		t.Fatalf("%d notes, want %d: %q", len(got), len(want), got)
	}
	for i := range want {
		if !strings.HasPrefix(got[i], want[i]) {
			t.Errorf("note %d: %q, want it to start %q", i, got[i], want[i])
		}
	}
}
