package main

import (
	"bytes"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"testing"
)

// quick are sampling flags for end-to-end tests: short chains, because these
// tests check the plumbing, not the posterior (the pipeline package checks
// recovery with full chains).
var quick = []string{"--chains", "2", "--warmup", "150", "--draws", "100", "--quiet"}

// TestDemoIsCommitted holds the built-in demo to the committed
// testdata/demo files, byte for byte: the demo is regenerated from its seed
// on every run, so any change to the simulator shows up here.
func TestDemoIsCommitted(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "sim")
	code, _, stderr := runCmd(t, "simulate", "--scenario", "demo", "--out", dir)
	if code != 0 {
		t.Fatalf("simulate: exit %d: %s", code, stderr)
	}
	for _, f := range []string{"data.csv", "truth.json"} {
		got, _ := os.ReadFile(filepath.Join(dir, f))
		want, err := os.ReadFile(filepath.Join("..", "..", "testdata", "demo", f))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("simulate --scenario demo: %s differs from testdata/demo/%s (regenerate it deliberately if the simulator changed)", f, f)
		}
	}
}

// TestRunDemo runs the whole job on the demo and checks every file of the
// fit folder exists and the table is printed.
func TestRunDemo(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end run of the demo; skipped with -short")
	}
	dir := filepath.Join(t.TempDir(), "out")
	code, stdout, stderr := runCmd(t, append([]string{"run", "--out", dir}, quick...)...)
	if code != 0 {
		t.Fatalf("run: exit %d\n%s", code, stderr)
	}
	for _, f := range []string{"spec.json", "data.csv", "verdict.txt", "effects.csv", "effect_draws.csv", "borrowed.csv",
		"weekly.csv", "sensitivity.csv", "breakeven.csv", "fitted.csv", "curves.csv",
		"demand/draws.csv", "demand/summary.csv", "demand/stats.json", "outcome/draws.csv", "naive/summary.csv"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("missing %s", f)
		}
	}
	for _, want := range []string{"video_spend", "audio_spend", "search_spend", "borrowed share", "reaches zero"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("stdout lacks %q:\n%s", want, stdout)
		}
	}
	// one window for the table, the charts and the report: the demo's last
	// full quarter (its data end in 2025Q4 with 12 of 13 weeks)
	for _, want := range []string{"window 2025Q3 (", "review window 2025Q3;"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("stdout lacks %q:\n%s", want, stdout)
		}
	}
	page, _ := os.ReadFile(filepath.Join(dir, "report.html"))
	if !strings.Contains(string(page), "Quarterly review: 2025Q3") {
		t.Error("report.html is not the review of 2025Q3, the window of the table")
	}
	head, _ := os.ReadFile(filepath.Join(dir, "effects.csv"))
	if !strings.HasPrefix(string(head), "channel,path,window,mean,q05,q50,q95,per_unit_spend,prior_q05,prior_q95,contraction,p_negligible\n") {
		t.Errorf("effects.csv header: %q", strings.SplitN(string(head), "\n", 2)[0])
	}
	if v, _ := os.ReadFile(filepath.Join(dir, "verdict.txt")); !strings.Contains(string(v), "support: note: media terms improve the prediction of left-out weeks") {
		t.Errorf("verdict.txt lacks the support check:\n%s", v)
	}
	// split again on the folder: same bytes
	before, _ := os.ReadFile(filepath.Join(dir, "effects.csv"))
	if code, _, stderr := runCmd(t, "split", "--fit", dir, "--window", "2024Q2"); code != 0 {
		t.Fatalf("split: exit %d: %s", code, stderr)
	}
	after, _ := os.ReadFile(filepath.Join(dir, "effects.csv"))
	if !bytes.Equal(before, after) {
		t.Error("split on the same fit folder changed effects.csv")
	}
	// an existing output folder without --force is refused before any work
	code, _, stderr = runCmd(t, append([]string{"run", "--out", dir}, quick...)...)
	if code != 2 || !strings.Contains(stderr, "already exists") {
		t.Errorf("run into an existing folder: exit %d, %s", code, stderr)
	}
}

// TestSameSeedSameBytes fits twice with the same seed, once on one core and
// once on two, and requires identical draws and effects.
func TestSameSeedSameBytes(t *testing.T) {
	if testing.Short() {
		t.Skip("two end-to-end runs of the demo; skipped with -short")
	}
	var outs [2]string
	for i, procs := range []int{1, 2} {
		old := runtime.GOMAXPROCS(procs)
		dir := filepath.Join(t.TempDir(), "out")
		code, _, stderr := runCmd(t, append([]string{"run", "--out", dir, "--seed", "9"}, quick...)...)
		runtime.GOMAXPROCS(old)
		if code != 0 {
			t.Fatalf("run: exit %d: %s", code, stderr)
		}
		outs[i] = dir
	}
	for _, f := range []string{"demand/draws.csv", "outcome/draws.csv", "naive/draws.csv", "effects.csv", "effect_draws.csv", "borrowed.csv", "sensitivity.csv", "fitted.csv", "curves.csv", "weekly.csv"} {
		a, _ := os.ReadFile(filepath.Join(outs[0], f))
		b, _ := os.ReadFile(filepath.Join(outs[1], f))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s differs between GOMAXPROCS 1 and 2 (or is empty)", f)
		}
	}
}

// TestFitBadInputs checks that the fitting commands reject bad input with
// exit status 2, a located message, and no output folder.
func TestFitBadInputs(t *testing.T) {
	tmp := t.TempDir()
	good := filepath.Join("..", "..", "testdata", "demo", "data.csv")
	roles := []string{"--date", "week", "--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries", "--outcome", "conversions", "--controls", "price"}
	b, _ := os.ReadFile(good)
	lines := strings.Split(string(b), "\n")
	f := strings.Split(lines[5], ",")
	f[6] = "4x9" // line 6, column 7: a price that is not a number
	lines[5] = strings.Join(f, ",")
	bad := filepath.Join(tmp, "bad.csv")
	os.WriteFile(bad, []byte(strings.Join(lines, "\n")), 0o644)
	priors := filepath.Join(tmp, "priors.csv")
	os.WriteFile(priors, []byte("parameter,family,p1,p2\nK[video_spend],gamma,2,2\nlam[nope],beta,3,3\n"), 0o644)
	betaOnCoef := filepath.Join(tmp, "priors2.csv")
	os.WriteFile(betaOnCoef, []byte("parameter,family,p1,p2\ngamma,beta,2,2\n"), 0o644)
	for _, c := range []struct {
		name string
		args []string
		want string
	}{
		{"bad cell", append([]string{"fit", "--data", bad}, roles...), "bad.csv:6:7"},
		{"unknown prior parameter", append([]string{"fit", "--data", good, "--priors", priors}, roles...), "priors.csv:3:1"},
		{"prior that does not fit", append([]string{"fit", "--data", good, "--priors", betaOnCoef}, roles...), "gamma"},
		{"linear column not a channel", append([]string{"fit", "--data", good, "--linear", "price"}, roles...), "--linear price"},
		{"bad chains", append([]string{"fit", "--data", good, "--chains", "0"}, roles...), "--chains"},
		{"label of a column that is not spend", append([]string{"fit", "--data", good, "--label", "price=Price"}, roles...), "--label price=Price: price is not a spend column"},
		{"label without a name", append([]string{"fit", "--data", good, "--label", "video_spend"}, roles...), "expected COLUMN=NAME"},
	} {
		out := filepath.Join(tmp, "out-"+strings.ReplaceAll(c.name, " ", "-"))
		args := append(append([]string{c.args[0]}, quick...), c.args[1:]...)
		code, _, stderr := runCmd(t, append(args, "--out", out)...)
		if code != 2 {
			t.Errorf("%s: exit %d, want 2 (%s)", c.name, code, stderr)
		}
		if !strings.Contains(stderr, c.want) {
			t.Errorf("%s: stderr %q lacks %q", c.name, stderr, c.want)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("%s: output folder %s appeared", c.name, out)
		}
		entries, _ := os.ReadDir(tmp)
		for _, e := range entries {
			if strings.HasPrefix(e.Name(), ".out-") {
				t.Errorf("%s: temporary folder %s left behind", c.name, e.Name())
			}
		}
	}
}

// TestNoiseOutcomeNotSupported replaces the demo's outcome with independent
// normal noise (mean 2,080, sd 300, as a user tried it): the fit must say
// that the media effects are not supported, in stdout and verdict.txt, and
// the verdict must not be "trustworthy".
func TestNoiseOutcomeNotSupported(t *testing.T) {
	if testing.Short() {
		t.Skip("fits the model; skipped with -short")
	}
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "demo", "data.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	rng := rand.New(rand.NewPCG(10, 11))
	for i := 1; i < len(lines); i++ {
		f := strings.Split(lines[i], ",")
		f[5] = strconv.Itoa(int(math.Round(2080 + 300*rng.NormFloat64()))) // conversions
		lines[i] = strings.Join(f, ",")
	}
	tmp := t.TempDir()
	data := filepath.Join(tmp, "noise.csv")
	os.WriteFile(data, []byte(strings.Join(lines, "\n")+"\n"), 0o644)
	dir := filepath.Join(tmp, "fit")
	code, stdout, stderr := runCmd(t, append([]string{"fit", "--data", data, "--date", "week",
		"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
		"--outcome", "conversions", "--controls", "price", "--out", dir}, quick...)...)
	if code != 0 {
		t.Fatalf("fit: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stdout, "media effects are NOT SUPPORTED by the data") {
		t.Errorf("stdout does not say the media effects are not supported:\n%s", stdout)
	}
	v, _ := os.ReadFile(filepath.Join(dir, "verdict.txt"))
	if !strings.HasPrefix(string(v), "not trustworthy\n") || !strings.Contains(string(v), "support: media effects are NOT SUPPORTED") {
		t.Errorf("verdict.txt:\n%s", v)
	}
	if code, _, stderr := runCmd(t, "split", "--fit", dir, "--negligible", "1.5"); code != 2 || !strings.Contains(stderr, "--negligible") {
		t.Errorf("split --negligible 1.5: exit %d, %s", code, stderr)
	}
	if code, _, stderr := runCmd(t, "split", "--fit", dir); code != 0 {
		t.Fatalf("split: exit %d: %s", code, stderr)
	}
	v2, _ := os.ReadFile(filepath.Join(dir, "verdict.txt"))
	if !strings.HasPrefix(string(v2), string(v)) {
		t.Errorf("split dropped the fit's verdict lines:\n%s\nnow\n%s", v, v2)
	}
}
