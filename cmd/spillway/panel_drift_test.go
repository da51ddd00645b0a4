package main

import (
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"spillway/funnel/fitfolder"
	htmlreport "spillway/plots/report"
)

// TestPanelDrift fits a 3-region panel with video's effectiveness drifting
// and the same panel without drift (short chains: the plumbing, not the
// posterior), each folder split afterwards: drift.csv holds video's multiplier on its two paths for
// every week, once (the multiplier every region shares), each row's
// interval around its mean; drift_change.csv has a row per path; the
// fit folder reads back; and effects.csv's quarterly effects of video
// differ from the fit without drift (the split applies the multiplier); the
// report's drift section says the multiplier is the regions' common one.
func TestPanelDrift(t *testing.T) {
	if testing.Short() {
		t.Skip("two short panel fits; skipped with -short")
	}
	_, roles := panelData(t)
	dir := t.TempDir()
	fit := func(name string, extra ...string) *fitfolder.Fit {
		out := filepath.Join(dir, name)
		args := append(append(append([]string{"fit"}, roles...), "--chains", "2", "--out", out), append(panelSettings, extra...)...)
		code, stdout, errs := runCmd(t, args...)
		if code != 0 {
			t.Fatalf("fit %s: exit %d\n%s\n%s", name, code, stdout, errs)
		}
		if code, so, errs := runCmd(t, "split", "--fit", out); code != 0 {
			t.Fatalf("split %s: exit %d\n%s\n%s", name, code, so, errs)
		}
		f, err := fitfolder.Load(out)
		if err != nil {
			t.Fatal(err)
		}
		return f
	}
	drift := fit("drift", "--drift", "video_spend")
	plain := fit("plain")
	if len(plain.Drift) != 0 {
		t.Errorf("the fit without drift has %d drift rows", len(plain.Drift))
	}

	const weeks = 60
	if len(drift.Drift) != 2*weeks {
		t.Fatalf("drift.csv has %d rows, want %d (video on two paths, %d weeks)", len(drift.Drift), 2*weeks, weeks)
	}
	start := time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC)
	for i, d := range drift.Drift {
		path := []string{"via_search", "direct"}[i/weeks]
		if want := start.AddDate(0, 0, 7*(i%weeks)); d.Channel != "video_spend" || d.Path != path || !d.Week.Equal(want) {
			t.Fatalf("row %d: %s %s %s, want video_spend %s %s", i, d.Channel, d.Path, d.Week.Format(time.DateOnly), path, want.Format(time.DateOnly))
		}
		if !(d.Q05 > 0 && d.Q05 <= d.Mean && d.Mean <= d.Q95) || math.IsInf(d.Q95, 0) {
			t.Errorf("row %d (%s %s): mean %v outside its interval [%v, %v]", i, d.Path, d.Week.Format(time.DateOnly), d.Mean, d.Q05, d.Q95)
		}
	}
	if got := len(drift.DriftChange); got != 2 {
		t.Errorf("drift_change.csv has %d rows, want 2", got)
	}
	// the drift that can jump runs on a panel too: the same rows, its own
	// multipliers (the jump part's steps are more parameters of the shared
	// multiplier)
	jumps := fit("jumps", "--drift", "video_spend", "--drift-shape", "jumps")
	if len(jumps.Drift) != len(drift.Drift) {
		t.Fatalf("--drift-shape jumps: drift.csv has %d rows, want %d", len(jumps.Drift), len(drift.Drift))
	}
	same := 0
	for i, d := range jumps.Drift {
		if d.Channel != drift.Drift[i].Channel || d.Path != drift.Drift[i].Path || !d.Week.Equal(drift.Drift[i].Week) {
			t.Fatalf("--drift-shape jumps: row %d is %s %s %s, the smooth drift's %s %s", i, d.Channel, d.Path, d.Week.Format(time.DateOnly), drift.Drift[i].Channel, drift.Drift[i].Path)
		}
		if d.Mean == drift.Drift[i].Mean {
			same++
		}
	}
	if same == len(jumps.Drift) {
		t.Error("--drift-shape jumps gave the smooth drift's multipliers")
	}

	quarters := 0
	for _, w := range drift.Split.Windows() {
		if w == "all" {
			continue
		}
		for _, path := range []string{fitfolder.PathViaSearch, fitfolder.PathDirect} {
			a, ok := drift.Split.Effect("video_spend", path, w)
			b, ok2 := plain.Split.Effect("video_spend", path, w)
			if !ok || !ok2 {
				t.Fatalf("no %s effect of video in %s", path, w)
			}
			if a.Mean == b.Mean {
				t.Errorf("video %s in %s: %v with drift and without", path, w, a.Mean)
			}
			quarters++
		}
	}
	if quarters < 8 {
		t.Errorf("only %d quarterly effects compared", quarters)
	}
	if code, so, errs := runCmd(t, "report", "--fit", filepath.Join(dir, "drift")); code != 0 {
		t.Fatalf("report: exit %d\n%s\n%s", code, so, errs)
	}
	if b, err := os.ReadFile(filepath.Join(dir, "drift", "report.html")); err != nil || !strings.Contains(string(b), htmlreport.PanelDriftNote) {
		t.Errorf("report.html lacks the panel's drift note (%v)", err)
	}
	if !slices.Contains(drift.Run.Drift, "video_spend") {
		t.Errorf("spec.json's drift %v", drift.Run.Drift)
	}
}
