package lifts

import (
	"errors"
	"math"
	"strings"
	"testing"

	"spillway/funnel/data"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
)

// panelData returns a 4-region, 60-week panel whose last region (R04)
// never runs audio.
func panelData(t *testing.T) *data.Dataset {
	t.Helper()
	res, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: 4, Weeks: 60, Seed: 3, Dark: 1})
	if err != nil {
		t.Fatal(err)
	}
	return res.Data
}

// TestReadPanel checks a regional and a national row on a panel and their
// terms: a region's test in its own scaled units with weight 1 there, a
// national test in units of the sum of the regions' means, each region
// weighted by its mean over that sum.
func TestReadPanel(t *testing.T) {
	ds := panelData(t)
	w := func(i int) string { return ds.Weeks[i].Format("2006-01-02") }
	file := "channel,start,end,estimate,se,metric,region\n" +
		"video_spend," + w(10) + "," + w(15) + ",300,40,,R02\n" +
		"audio_spend," + w(20) + "," + w(27) + ",5000,900,queries,\n"
	tests, err := ReadPanel(strings.NewReader(file), "lifts.csv", ds)
	if err != nil {
		t.Fatal(err)
	}
	if len(tests) != 2 || tests[0].Region != "R02" || tests[1].Region != "" || tests[0].From != 10 || tests[1].To != 27 {
		t.Fatalf("tests %+v", tests)
	}
	ps, err := model.ScalePanel(ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	r := tests[0].PanelTerm(ps, 0, 1)
	s := ps.Scaled[1].OutcomeScale
	if r.Estimate != 300/s || r.SE != 40/s || r.Weights[1] != 1 || r.Weights[0] != 0 || r.Weights[2] != 0 || r.Weights[3] != 0 || tests[0].PanelUnit(ps) != s {
		t.Errorf("regional term %+v (region scale %v)", r, s)
	}
	n := tests[1].PanelTerm(ps, 0, 1)
	u := 0.0
	for _, sc := range ps.Scaled {
		u += sc.QueriesScale
	}
	if math.Abs(tests[1].PanelUnit(ps)-u) > 1e-9*u || math.Abs(n.Estimate-5000/u) > 1e-15 || math.Abs(n.SE-900/u) > 1e-15 {
		t.Errorf("national term %+v, unit %v, want %v", n, tests[1].PanelUnit(ps), u)
	}
	sum := 0.0
	for g, wg := range n.Weights {
		sum += wg
		if want := ps.Scaled[g].QueriesScale / u; math.Abs(wg-want) > 1e-15 {
			t.Errorf("region %d's weight %v, want %v", g, wg, want)
		}
	}
	if math.Abs(sum-1) > 1e-12 {
		t.Errorf("the national test's weights sum to %v, want 1", sum)
	}
}

// TestReadPanelErrors checks the rows a panel refuses, each located at
// FILE:LINE:COLUMN: an unknown region, a region without the channel's
// spend in the window (R04 never runs audio), and a region on the same
// data fitted as their national sum.
func TestReadPanelErrors(t *testing.T) {
	ds := panelData(t)
	w := func(i int) string { return ds.Weeks[i].Format("2006-01-02") }
	const head = "channel,start,end,estimate,se,region\n"
	row := func(ch, region string) string {
		return head + ch + "," + w(10) + "," + w(15) + ",300,40," + region + "\n"
	}
	for _, c := range []struct {
		file, want string
		panel      bool
	}{
		{row("video_spend", "R09"), `lifts.csv:2:6: column "region": unknown region "R09"; expected one of the data's regions R01, R02, R03, R04`, true},
		{row("audio_spend", "R04"), `lifts.csv:2:6: column "region": audio_spend has no spend in region R04 from`, true},
		{row("video_spend", "R02"), `lifts.csv:2:6: column "region": a lift test in one region needs the region panel, but the regions are fitted as their national sum`, false},
		{row("radio_spend", "R02"), `lifts.csv:2:1: column "channel": unknown channel "radio_spend"`, true},
	} {
		read := Read
		if c.panel {
			read = ReadPanel
		}
		_, err := read(strings.NewReader(c.file), "lifts.csv", ds)
		var de *data.DataError
		if err == nil || !errors.As(err, &de) || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("file %q:\n got %v\nwant %s...", c.file, err, c.want)
		}
	}
	if _, err := ReadPanel(strings.NewReader(row("audio_spend", "")), "lifts.csv", ds); err != nil {
		t.Errorf("a national test of audio, which three regions run: %v", err)
	}
}
