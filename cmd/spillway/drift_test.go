package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestDriftFlagErrors checks that bad --drift, --baseline and --lifts
// values stop the run before anything is written: a usage error (exit 2)
// for the flags, bad data (exit 2, FILE:LINE:COLUMN) for the file.
func TestDriftFlagErrors(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "lifts.csv")
	if err := os.WriteFile(bad, []byte("channel,start,end,estimate,se\nvideo_spend,2023-04-10,2023-05-01,900,120\nradio_spend,2023-04-10,2023-05-01,900,120\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--drift", "price"}, "--drift price: not an upper-funnel or paid-search column"},
		{[]string{"--baseline", "wiggly"}, `--baseline "wiggly": expected line`},
		{[]string{"--lifts", bad}, bad + `:3:1: column "channel": unknown channel "radio_spend"`},
		{[]string{"--lifts", filepath.Join(dir, "none.csv")}, "none.csv"},
	} {
		code, _, stderr := runCmd(t, append(append([]string{"run", "--out", out}, quick...), c.args...)...)
		if code != 2 || !strings.Contains(stderr, c.want) {
			t.Errorf("%v: exit %d, stderr %q; want 2 and %q", c.args, code, stderr, c.want)
		}
		if _, err := os.Stat(out); err == nil {
			t.Fatalf("%v: the output folder was written", c.args)
		}
	}
}

// TestRunDrift runs the demo with every channel drifting, a smooth baseline
// and lift tests (one that contradicts the data by a wide margin), and
// checks drift.csv, lifts.csv, the folder's copy of the tests, the line on
// standard output for the contradicted test (contradicted or, if the model
// took it in, unchecked: never silently agreeing), and that split reads
// the folder back.
func TestRunDrift(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end run of the demo with drift and lift tests; skipped with -short")
	}
	dir := t.TempDir()
	tests := filepath.Join(dir, "tests.csv")
	// the first is near the demo's truth (its video lift over those weeks is
	// 811 conversions, funnel/validate's TestSweepLiftTests); the second,
	// 9000, is several times too large and must be flagged as contradicting
	// the data (left out of the fit by reweighting or by a refit). (A
	// test of always-on audio would not do: with audio drifting and the
	// baseline moving, a steady response times a multiplier is confounded
	// with the baseline, and the data cannot contradict the test.)
	if err := os.WriteFile(tests, []byte("channel,start,end,estimate,se\nvideo_spend,2023-04-10,2023-05-01,800,150\nvideo_spend,2024-05-20,2024-06-10,9000,300\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	code, stdout, stderr := runCmd(t, append([]string{"run", "--out", out, "--drift", "all", "--baseline", "smooth", "--lifts", tests}, quick...)...)
	if code != 0 {
		t.Fatalf("run: exit %d\n%s", code, stderr)
	}
	d, err := os.ReadFile(filepath.Join(out, "drift.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(d)), "\n")
	if lines[0] != "channel,path,week,mean,q05,q95" || len(lines) != 1+5*156 {
		t.Errorf("drift.csv: header %q, %d lines; want 5 paths x 156 weeks", lines[0], len(lines))
	}
	l, err := os.ReadFile(filepath.Join(out, "lifts.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows := strings.Split(strings.TrimSpace(string(l)), "\n")
	if len(rows) != 3 || !strings.HasSuffix(rows[1], ",agrees") || !strings.HasSuffix(rows[2], ",contradicts") {
		t.Errorf("lifts.csv:\n%s\nwant the first test agreeing with the data and the second contradicting them", l)
	}
	for _, name := range []string{"drift_change.csv", "charts/drift.png"} {
		if _, err := os.Stat(filepath.Join(out, name)); err != nil {
			t.Error(err)
		}
	}
	if r, err := os.ReadFile(filepath.Join(out, "report.html")); err != nil || !strings.Contains(string(r), "Effectiveness over time and lift tests") {
		t.Errorf("report.html lacks the drift section (%v)", err)
	}
	// the charts and the report read drift.csv, drift_change.csv and
	// lifts.csv back from the folder
	charts := filepath.Join(dir, "charts")
	if code, _, stderr := runCmd(t, "chart", "--fit", out, "--out", charts); code != 0 {
		t.Errorf("chart of the drift fit: exit %d: %s", code, stderr)
	} else if _, err := os.Stat(filepath.Join(charts, "drift.png")); err != nil {
		t.Error(err)
	}
	if !strings.Contains(stdout, "lift test (line 3) of video_spend on outcome") || strings.Contains(stdout, "(line 2)") {
		t.Errorf("stdout should name the contradicted test only:\n%s", stdout)
	}
	if _, err := os.Stat(filepath.Join(out, "lift_tests.csv")); err != nil {
		t.Error(err)
	}
	if code, _, stderr := runCmd(t, "split", "--fit", out); code != 0 {
		t.Errorf("split of the drift fit: exit %d: %s", code, stderr)
	}
}
