package fitfolder

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"spillway/funnel/data"
)

// TestDriftFilesRoundTrip writes drift.csv, drift_change.csv and lifts.csv
// and reads them back; then spoils one cell of each and checks the error
// names the file, the line and the column.
func TestDriftFilesRoundTrip(t *testing.T) {
	run := Run{Spec: data.Spec{Upper: []string{"video"}, Search: []string{"search"}}}
	day := time.Date(2024, 1, 1, 0, 0, 0, 0, time.UTC)
	drift := []Drift{{"video", "via_search", day, 1.1, 0.9, 1.3}, {"search", "controlled", day, 0.95, 0.7, 1.2}}
	change := []DriftChange{{"video", "direct", "2023Q1", "2025Q4", 1.4, 1.1, 1.8, 0.93, 0, "2025Q3", "2023Q1", 1.3, 0.85}}
	lifts := []Lift{
		{"", "video", "outcome", day, day.AddDate(0, 0, 21), 800, 150, 780, 600, 950, 770, 120, 0.21, false, 0.15, 0.88, "agrees"},
		{"", "video", "outcome", day, day.AddDate(0, 0, 21), 9000, 300, 2100, 1800, 2500, 800, 200, math.Inf(1), true, 22, 1e-12, "contradicts"},
	}
	dir := t.TempDir()
	write := func(name string, b []byte, err error) string {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	b, err := DriftFile(drift)
	pd := write(DriftFileName, b, err)
	b, err = DriftChangeFile(change)
	pc := write(DriftChangeFileName, b, err)
	b, err = LiftsFile(lifts)
	pl := write(LiftsFileName, b, err)

	gd, err := readDrift(pd, run)
	if err != nil || len(gd) != 2 || gd[1] != drift[1] || !gd[0].Week.Equal(day) {
		t.Errorf("drift.csv: %v, %+v", err, gd)
	}
	gc, err := readDriftChange(pc, run)
	if err != nil || len(gc) != 1 || gc[0] != change[0] {
		t.Errorf("drift_change.csv: %v, %+v", err, gc)
	}
	gl, err := readLifts(pl, run)
	if err != nil || len(gl) != 2 || gl[0].Estimate != 800 || !gl[1].Refit || gl[1].Verdict != "contradicts" || gl[0].ParetoK != 0.21 {
		t.Errorf("lifts.csv: %v, %+v", err, gl)
	}

	// a region panel's file: the region column first, empty for a
	// national test; a national fit's file has none and reads with empty
	// regions (above)
	if b, _ := os.ReadFile(pl); strings.HasPrefix(string(b), "region,") {
		t.Errorf("a national fit's lifts.csv has a region column: %q", b[:40])
	}
	panel := append([]Lift(nil), lifts...)
	panel[0].Region = "North"
	b, err = PanelLiftsFile(panel)
	pp := write("panel-"+LiftsFileName, b, err)
	if !strings.HasPrefix(string(b), "region,channel,metric,start,end,") || !strings.Contains(string(b), "\nNorth,video,") || !strings.Contains(string(b), "\n,video,") {
		t.Errorf("a region panel's lifts.csv:\n%s", b)
	}
	gp, err := readLifts(pp, run)
	if err != nil || len(gp) != 2 || gp[0].Region != "North" || gp[1].Region != "" || gp[0].Estimate != 800 || gp[1].Verdict != "contradicts" {
		t.Errorf("a region panel's lifts.csv: %v, %+v", err, gp)
	}
	for i := range gl {
		if gl[i].Region != "" {
			t.Errorf("a national fit's test %d read with region %q", i, gl[i].Region)
		}
	}

	spoil := []struct {
		path, from, to, column string
	}{
		{pd, "video,via_search", "radio,via_search", "channel"},
		{pd, "search,controlled", "search,direct", "path"},
		{pc, ",0.93,", ",1.93,", "p_up_10pct"},
		{pl, ",contradicts", ",maybe", "verdict"},
		{pl, ",refit,", ",guess,", "left_out_by"},
		{pp, ",contradicts", ",maybe", "verdict"},
	}
	for _, s := range spoil {
		b, _ := os.ReadFile(s.path)
		bad := strings.Replace(string(b), s.from, s.to, 1)
		p := filepath.Join(t.TempDir(), filepath.Base(s.path))
		if err := os.WriteFile(p, []byte(bad), 0o644); err != nil {
			t.Fatal(err)
		}
		var err error
		switch strings.TrimPrefix(filepath.Base(p), "panel-") {
		case DriftFileName:
			_, err = readDrift(p, run)
		case DriftChangeFileName:
			_, err = readDriftChange(p, run)
		default:
			_, err = readLifts(p, run)
		}
		var fe *Error
		if !errors.As(err, &fe) || fe.File != p || fe.Line < 2 || fe.Column != s.column {
			t.Errorf("%s with %q: error %v, want line >= 2, column %s", filepath.Base(p), s.to, err, s.column)
		}
	}
}
