package main

import (
	"math"
	"os"
	"path/filepath"
	"strconv"
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
		{[]string{"--drift-shape", "jumps"}, "--drift-shape jumps: needs --drift"},
		{[]string{"--drift", "all", "--drift-shape", "wiggly"}, `--drift-shape "wiggly": expected smooth`},
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

// TestRunDriftJumps runs the demo with video's effectiveness drifting with
// jumps (--drift-shape jumps, short chains): spec.json records the shape,
// drift.csv has video's two paths over the 156 weeks, and split reads the
// folder back with the same model (the fit folder's draws name the jump
// parameters, which the rebuilt stages must have).
func TestRunDriftJumps(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end run of the demo with a drift that can jump; skipped with -short")
	}
	out := filepath.Join(t.TempDir(), "out")
	code, _, stderr := runCmd(t, append([]string{"run", "--out", out, "--drift", "video_spend", "--drift-shape", "jumps"}, quick...)...)
	if code != 0 {
		t.Fatalf("run: exit %d\n%s", code, stderr)
	}
	spec, err := os.ReadFile(filepath.Join(out, "spec.json"))
	if err != nil || !strings.Contains(string(spec), `"drift_shape": "jumps"`) {
		t.Errorf("spec.json does not record the drift's shape (%v):\n%s", err, spec)
	}
	d, err := os.ReadFile(filepath.Join(out, "drift.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if lines := strings.Split(strings.TrimSpace(string(d)), "\n"); len(lines) != 1+2*156 {
		t.Errorf("drift.csv: %d lines; want video's 2 paths x 156 weeks", len(lines))
	}
	if code, _, stderr := runCmd(t, "split", "--fit", out); code != 0 {
		t.Errorf("split of the fit with jumps: exit %d: %s", code, stderr)
	}
}

// TestValidateTruthWithDrift runs validate's recovery, holdout and
// stability checks from a simulation's truth.json with every channel
// drifting and a moving baseline, at short chains (not to converge: to
// exercise the path end to end), beside the same recovery sweep with the
// default model. The truth.json holds the default model's parameters; the
// sweep carries them into the drift model with multipliers of 1 and the
// trend line as the moving baseline, so each replicate's true effects
// (jobs.csv) must be the default sweep's, up to the baseline's projection
// on its smooth basis (within 1%). Paid search's borrowed share is left
// out: it is defined by the fitted model's own regressors (what that model
// without the query term would credit), and a moving baseline is another
// set of regressors than the trend line.
func TestValidateTruthWithDrift(t *testing.T) {
	if testing.Short() {
		t.Skip("two short validation sweeps")
	}
	dir := t.TempDir()
	if code, _, errs := runCmd(t, "simulate", "--weeks", "68", "--seed", "4", "--out", filepath.Join(dir, "sim")); code != 0 {
		t.Fatalf("simulate: %d %s", code, errs)
	}
	truthFile := filepath.Join(dir, "sim", "truth.json")
	sweep := func(out string, checks string, extra ...string) map[string][]float64 {
		args := []string{"validate", "--data", filepath.Join(dir, "sim", "data.csv"), "--date", "week",
			"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
			"--outcome", "conversions", "--controls", "price", "--checks", checks, "--replicates", "2",
			"--origins", "1", "--leave-out", "2023Q3", "--seeds", "0", "--chains", "1", "--warmup", "30", "--draws", "30",
			"--seed", "4", "--quiet", "--truth", truthFile, "--out", out}
		code, stdout, errs := runCmd(t, append(args, extra...)...)
		if code != 0 {
			t.Fatalf("validate %v: exit %d\n%s", extra, code, errs)
		}
		for _, c := range strings.Split(checks, ",") {
			if !strings.Contains(stdout, c+": ") {
				t.Errorf("validate %v: stdout lacks the %s verdict:\n%s", extra, c, stdout)
			}
		}
		b, err := os.ReadFile(filepath.Join(out, "jobs.csv"))
		if err != nil {
			t.Fatal(err)
		}
		truth := map[string][]float64{} // effect/path/window: the replicates' true values in order
		for _, line := range strings.Split(strings.TrimSpace(string(b)), "\n")[1:] {
			f := strings.Split(line, ",") // job,kind,name,path,window,stat,value,region
			if len(f) == 8 && f[7] == "" && f[1] == "effect" && f[5] == "truth" && f[3] != "borrowed_share" {
				v, err := strconv.ParseFloat(f[6], 64)
				if err != nil {
					t.Fatal(err)
				}
				k := f[2] + "/" + f[3] + "/" + f[4]
				truth[k] = append(truth[k], v)
			}
		}
		return truth
	}
	t0 := sweep(filepath.Join(dir, "default"), "recovery")
	t1 := sweep(filepath.Join(dir, "drift"), "recovery,holdout,stability", "--drift", "all", "--baseline", "smooth")
	if len(t0) == 0 || len(t0) != len(t1) {
		t.Fatalf("true effects: %d with the default model, %d with drift", len(t0), len(t1))
	}
	for k, v0 := range t0 {
		v1 := t1[k]
		if len(v1) != len(v0) || len(v0) != 2 {
			t.Fatalf("%s: true values %v with the default model, %v with drift (want one per replicate)", k, v0, v1)
		}
		for i := range v0 {
			if math.Abs(v1[i]-v0[i]) > 0.01*math.Abs(v0[i])+1e-9 {
				t.Errorf("%s replicate %d: true value %g with drift, %g with the default model", k, i+1, v1[i], v0[i])
			}
		}
	}
}
