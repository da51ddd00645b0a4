package main

import (
	"bytes"
	"path/filepath"
	"strings"
	"testing"

	"spillway/funnel/fitfolder"
	"spillway/funnel/fitfolder/fitfoldertest"
	"spillway/plots"
)

// TestPrintRegions prints the regions' lines of a panel fixture: the
// region that differs clearly (the fixture's second, for video) with its
// numbers from region_differences.csv, and nothing for a national fit.
func TestPrintRegions(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "fit")
	pn, err := fitfoldertest.WritePanel(dir, fitfoldertest.PanelOptions{Options: fitfoldertest.Options{Draws: 100}})
	if err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	printRegions(&b, &f.Split, f.Run.Spec.Upper)
	out := b.String()
	odd := pn.Regions[1]
	d, _ := f.RegionDifferenceOf(odd, "video_spend", fitfolder.MeasureMediatedShare, "all")
	for _, want := range []string{"Regions (whole period", "video_spend: ", "of 6 regions differ by more than 10 pts with probability 90% or more",
		odd + " " + plots.Percent(d.RegionMean) + " against " + plots.Percent(d.PooledMean) + " pooled (" + plots.Points(d.Mean),
		"audio_spend: "} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	b.Reset()
	printRegions(&b, &fitfolder.Split{}, f.Run.Spec.Upper)
	if b.Len() != 0 {
		t.Errorf("a national split printed %q", b.String())
	}
}
