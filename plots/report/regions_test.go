package report_test

import (
	"bytes"
	"path/filepath"
	"strings"
	"testing"

	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
	"spillway/funnel/fitfolder/fitfoldertest"
	"spillway/plots"
	"spillway/plots/report"
)

// TestReportRegions checks the Regions section of a panel's report: it
// names the region that differs clearly from the pooled share (the
// fixture's second region sends far more of video's effect through
// search), with the numbers of region_differences.csv, says that this
// difference is larger than its uncertainty and that the others are not,
// puts it among the headline findings, embeds the regions chart, and keeps
// the table short with 40 regions.
func TestReportRegions(t *testing.T) {
	for _, n := range []int{6, 40} {
		dir := filepath.Join(t.TempDir(), "fit")
		pn, err := fitfoldertest.WritePanel(dir, fitfoldertest.PanelOptions{Options: fitfoldertest.Options{Draws: 200}, Regions: n})
		if err != nil {
			t.Fatal(err)
		}
		f, err := fitfolder.Load(dir)
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := report.Write(&buf, f, "all", nil); err != nil {
			t.Fatal(err)
		}
		page := parse(t, buf.Bytes())
		if page.byID("chart-regions") == nil {
			t.Errorf("%d regions: no regions chart", n)
		}
		tab := page.byID("regions")
		if tab == nil {
			t.Fatalf("%d regions: no Regions table", n)
		}
		odd := pn.Regions[1]
		d, ok := f.RegionDifferenceOf(odd, "video_spend", fitfolder.MeasureMediatedShare, "all")
		if !ok || d.PBeyond < plots.ClearProbability {
			t.Fatalf("%d regions: the fixture's %s does not differ clearly: %+v", n, odd, d)
		}
		var found bool
		rows := tab.all("tr")[1:]
		for _, tr := range rows {
			if tr.attr["data-region"] != odd || tr.attr["data-measure"] != fitfolder.MeasureMediatedShare || !strings.HasPrefix(tr.fullText(), "video") {
				continue
			}
			found = true
			text := tr.fullText()
			for _, want := range []string{plots.Percent(d.RegionMean), plots.Percent(d.PooledMean), plots.Points(d.Mean),
				plots.Percent(d.PBeyond), "yes: differs by more than 10 pts"} {
				if !strings.Contains(text, want) {
					t.Errorf("%d regions: %s's row %q lacks %q", n, odd, text, want)
				}
			}
		}
		if !found {
			t.Errorf("%d regions: the table has no video share row for %s", n, odd)
		}
		// every row that is not clear says so; the table stays short:
		// per channel and measure three regions and the clear ones
		clear := 0
		for _, d := range f.RegionDifferences {
			if d.Window == "all" && d.PBeyond >= plots.ClearProbability {
				clear++
			}
		}
		if len(rows) > 2*2*3+clear {
			t.Errorf("%d regions: %d rows, want at most %d", n, len(rows), 2*2*3+clear)
		}
		for _, tr := range rows {
			text := tr.fullText()
			if yes := strings.Contains(text, "yes: "); yes != (tr.all("td")[7].attr["class"] == "clear") {
				t.Errorf("%d regions: row %q: verdict and emphasis disagree", n, text)
			}
		}
		findings := page.byID("regions-findings").fullText()
		if !strings.Contains(findings, odd) || !strings.Contains(findings, "probability at least 90%") {
			t.Errorf("%d regions: findings %q do not name %s as clearly different", n, findings, odd)
		}
		if h := page.byID("findings").fullText(); !strings.Contains(h, "differs clearly from the pooled one in") || !strings.Contains(h, odd) {
			t.Errorf("%d regions: headline findings %q do not mention %s", n, h, odd)
		}
		if c := page.byID("cautions").fullText(); !strings.Contains(c, "regional lift test") {
			t.Errorf("%d regions: cautions %q lack the regional caution", n, c)
		}
		// lift tests on a panel: the table names a test's region, or says
		// a national test covers all regions
		w := f.Data.Weeks
		f.Lifts = []fitfolder.Lift{
			{Region: odd, Channel: "video_spend", Metric: "outcome", Start: w[10], End: w[13], Estimate: 300, SE: 50, Mean: 310, Q05: 250, Q95: 370, RestMean: 320, RestSD: 60, ParetoK: 0.2, P: 0.8, Verdict: "agrees"},
			{Channel: "audio_spend", Metric: "queries", Start: w[20], End: w[23], Estimate: 900, SE: 200, Mean: 950, Q05: 700, Q95: 1200, RestMean: 1000, RestSD: 250, ParetoK: 0.3, P: 0.7, Verdict: "agrees"},
		}
		buf.Reset()
		if err := report.Write(&buf, f, "all", nil); err != nil {
			t.Fatal(err)
		}
		lifts := parse(t, buf.Bytes()).byID("lifts")
		if lifts == nil {
			t.Fatalf("%d regions: no lift-test table", n)
		}
		lr := lifts.all("tr")[1:]
		if len(lr) != 2 || !strings.Contains(lr[0].fullText(), "outcome in "+odd) || !strings.Contains(lr[1].fullText(), "queries, all regions") {
			t.Errorf("%d regions: lift-test rows %q, %q do not name the region, or all regions", n, lr[0].fullText(), lr[len(lr)-1].fullText())
		}
	}
}

// TestReportNationalHasNoRegions: a national fit's report has no Regions
// section.
func TestReportNationalHasNoRegions(t *testing.T) {
	x := load(t, false)
	page := parse(t, write(t, x, ""))
	if page.byID("regions") != nil || page.byID("chart-regions") != nil {
		t.Error("a national report has a Regions section or chart")
	}
}

// TestReportSmallCounts: the data's small-counts warning (data.KindCounts)
// stands under the verdict, and the other data warnings do not (they are
// printed when the data are read). The fixture's own data have neither.
func TestReportSmallCounts(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "fit")
	if _, err := fitfoldertest.WritePanel(dir, fitfoldertest.PanelOptions{Options: fitfoldertest.Options{Draws: 200}, Regions: 6}); err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range f.Data.Warnings {
		if w.Kind == data.KindCounts || w.Kind == data.KindOutlier {
			t.Fatalf("the fixture already warns: %s", w)
		}
	}
	counts := `"conversions" averages fewer than 20 a week in 4 of 6 regions (least: "r3", 7.5); sum them`
	f.Data.Warnings = append(f.Data.Warnings, data.Warning{Kind: data.KindOutlier, Column: "conversions", Message: "an outlier here"},
		data.Warning{Kind: data.KindCounts, Column: "conversions", Message: counts})
	var buf bytes.Buffer
	if err := report.Write(&buf, f, "all", nil); err != nil {
		t.Fatal(err)
	}
	notes := parse(t, buf.Bytes()).byID("support")
	if notes == nil {
		t.Fatal("no notes under the verdict")
	}
	text := notes.fullText()
	if !strings.Contains(text, "Data: "+counts+".") {
		t.Errorf("notes %q lack the small-counts warning", text)
	}
	if strings.Contains(text, "an outlier here") {
		t.Errorf("notes %q show an outlier warning", text)
	}
}
