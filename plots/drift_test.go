package plots_test

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"spillway/funnel/fitfolder"
	"spillway/plots"
	"spillway/plots/report"
)

// withDrift returns a copy of the fixture's fit with drift.csv,
// drift_change.csv and lifts.csv as a drift fit would have them: the first
// upper-funnel channel's via-search multiplier rising from 0.8 to 1.2, its
// direct one flat at 1, and two outcome lift tests of it over weeks 20-23,
// one equal to the model's lift there and one three times it.
func withDrift(t *testing.T) *fitfolder.Fit {
	_, f0 := load(t, false)
	f := *f0
	ch := f.Run.Spec.Upper[0]
	weeks := f.Data.Weeks
	f.Drift = nil
	for i, w := range weeks {
		m := 0.8 + 0.4*float64(i)/float64(len(weeks)-1)
		f.Drift = append(f.Drift, fitfolder.Drift{Channel: ch, Path: "via_search", Week: w, Mean: m, Q05: m - 0.1, Q95: m + 0.1})
	}
	for _, w := range weeks {
		f.Drift = append(f.Drift, fitfolder.Drift{Channel: ch, Path: "direct", Week: w, Mean: 1, Q05: 0.9, Q95: 1.1})
	}
	f.DriftChange = []fitfolder.DriftChange{{Channel: ch, Path: "via_search", First: "2023Q1", Last: "2025Q4", Mean: 1.4, Q05: 1.2, Q95: 1.6, Up: 0.97,
		Peak: "2025Q4", Trough: "2023Q1", PeakMean: 1.19, TroughMean: 0.81}}
	f.Lifts = []fitfolder.Lift{
		{Channel: ch, Metric: "outcome", Start: weeks[20], End: weeks[23], Estimate: 500, SE: 50, Mean: 500, Q05: 450, Q95: 550, RestMean: 490, RestSD: 60, ParetoK: 0.2, Z: 0.1, P: 0.9, Verdict: "agrees"},
		{Channel: ch, Metric: "outcome", Start: weeks[20], End: weeks[23], Estimate: 1500, SE: 50, Mean: 600, Q05: 550, Q95: 650, RestMean: 500, RestSD: 60, ParetoK: math.NaN(), Refit: true, Z: 13, P: 1e-9, Verdict: "contradicts"},
	}
	return &f
}

// TestDriftChart checks what the effectiveness chart draws: each path's
// multiplier band, and each lift test on both panels of its channel at the
// multiplier it implies (the model's mean multiplier over the test's weeks
// times estimate / model mean), with its verdict.
func TestDriftChart(t *testing.T) {
	f := withDrift(t)
	if got := plots.NamesOf(f); got[len(got)-1] != plots.DriftName {
		t.Fatalf("NamesOf a drift fit: %v", got)
	}
	fig := build(t, f, "", plots.DriftName)
	ch := f.Run.Spec.Upper[0]
	s := find(t, fig, ch, "via_search")
	if len(s.Y) != len(f.Data.Weeks) || math.Abs(s.Y[0]-0.8) > 1e-12 || math.Abs(s.Hi[len(s.Hi)-1]-1.3) > 1e-12 {
		t.Errorf("via-search multiplier series: %d points, first %v, last upper %v", len(s.Y), s.Y[0], s.Hi[len(s.Hi)-1])
	}
	// the model's mean via-search multiplier over weeks 20..23
	n := float64(len(f.Data.Weeks) - 1)
	m := 0.8 + 0.4*(20+21+22+23)/4/n
	day := f.Lifts[0].Start.Format("2006-01-02")
	agree := find(t, fig, ch, "via_search/lift "+day)
	if math.Abs(agree.Y[0]-m) > 1e-9 || agree.Labels[0] != "agrees" {
		t.Errorf("agreeing test drawn at %v (%s), want %v", agree.Y[0], agree.Labels[0], m)
	}
	direct := find(t, fig, ch, "direct/lift "+day)
	if math.Abs(direct.Y[0]-1) > 1e-9 {
		t.Errorf("agreeing test on the direct panel at %v, want 1", direct.Y[0])
	}
	found := false
	for _, x := range fig.Series {
		if x.Panel == ch && x.Name == "via_search/lift "+day && x.Labels[0] == "contradicts" {
			found = true
			if want := m * 1500 / 600; math.Abs(x.Y[0]-want) > 1e-9 || math.Abs(x.Hi[0]-m*(1500+1.645*50)/600) > 1e-9 {
				t.Errorf("contradicting test drawn at %v [.., %v], want %v", x.Y[0], x.Hi[0], want)
			}
		}
	}
	if !found {
		t.Error("the contradicting test is not drawn")
	}
	// a test in one region of a panel measured that region's coefficient,
	// not the shared multiplier: not drawn
	regional := f.Lifts[0]
	regional.Region, regional.Start, regional.End = "R02", f.Data.Weeks[30], f.Data.Weeks[33]
	f.Lifts = append(f.Lifts, regional)
	rday := regional.Start.Format("2006-01-02")
	for _, x := range build(t, f, "", plots.DriftName).Series {
		if strings.HasSuffix(x.Name, "/lift "+rday) {
			t.Errorf("the test in region R02 is drawn as %s", x.Name)
		}
	}
	f.Lifts = f.Lifts[:len(f.Lifts)-1]
	if !strings.Contains(fig.Title, "rose 40%") || !strings.Contains(fig.Title, "+20% to +60%") {
		t.Errorf("title %q", fig.Title)
	}
	if _, err := fig.PNG(); err != nil {
		t.Fatal(err)
	}
}

// TestDriftReport checks the report's section on effectiveness over time.
func TestDriftReport(t *testing.T) {
	f := withDrift(t)
	var b bytes.Buffer
	if err := report.Write(&b, f, "", nil); err != nil {
		t.Fatal(err)
	}
	h := b.String()
	for _, want := range []string{"Effectiveness over time and lift tests", `id="drift"`, "1.40×", "1.20× to 1.60×", "97%", "rose",
		`id="lifts"`, "1,500 ± 82", "contradicts", "a refit without it", "1 lift test(s) contradict"} {
		if !strings.Contains(h, want) {
			t.Errorf("report lacks %q", want)
		}
	}
}
