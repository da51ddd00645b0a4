package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// validateArgs validates simulated data in dir/sim with a tiny sweep: the
// reference, two recovery replicates, one holdout origin, one left-out
// quarter and one placebo per channel, each fit with
// one chain of 30 + 30 iterations (enough to exercise the command, not to
// converge).
func validateArgs(dir string, extra ...string) []string {
	args := []string{"validate", "--data", filepath.Join(dir, "sim", "data.csv"), "--date", "week",
		"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
		"--outcome", "conversions", "--controls", "price",
		"--checks", "recovery,holdout,stability,placebo", "--replicates", "2", "--origins", "1", "--leave-out", "2023Q3", "--seeds", "0", "--placebos", "1",
		"--chains", "1", "--warmup", "30", "--draws", "30", "--seed", "4", "--quiet"}
	return append(args, extra...)
}

// TestValidateShardsMergeToTheSameBytes runs the same tiny sweep whole and
// as two shards, merges the shards, and checks that the merged folder is
// byte-identical to the whole run's; then it checks merge's refusals.
func TestValidateShardsMergeToTheSameBytes(t *testing.T) {
	dir := t.TempDir()
	if code, _, errs := runCmd(t, "simulate", "--weeks", "68", "--seed", "4", "--out", filepath.Join(dir, "sim")); code != 0 {
		t.Fatalf("simulate: %d %s", code, errs)
	}
	whole := filepath.Join(dir, "whole")
	code, out, errs := runCmd(t, validateArgs(dir, "--out", whole)...)
	if code != 0 {
		t.Fatalf("validate: exit %d\n%s", code, errs)
	}
	// two replicates of unconverged refits never claim "recovers truth"
	// (as 'validate --replicates 2' used to)
	if strings.Contains(out, "recovers truth") {
		t.Errorf("two replicates claim recovery:\n%s", out)
	}
	for _, want := range []string{"recovery: ", "holdout: ", "stability: ", "placebo: ", "validation written to " + whole} {
		if !strings.Contains(out, want) {
			t.Errorf("stdout lacks %q:\n%s", want, out)
		}
	}
	if errs != "" {
		t.Errorf("--quiet run wrote to stderr: %q", errs)
	}
	var shards []string
	for _, s := range []string{"1/2", "2/2"} {
		d := filepath.Join(dir, "shard"+s[:1])
		code, out, errs := runCmd(t, validateArgs(dir, "--shard", s, "--out", d)...)
		if code != 0 || !strings.Contains(out, "shard "+s+": ") {
			t.Fatalf("shard %s: exit %d\n%s\n%s", s, code, out, errs)
		}
		shards = append(shards, d)
	}
	merged := filepath.Join(dir, "merged")
	code, out, errs = runCmd(t, append([]string{"validate", "--merge", "--out", merged}, shards[1], shards[0])...)
	if code != 0 || !strings.Contains(out, "validation written to "+merged) {
		t.Fatalf("merge: exit %d\n%s\n%s", code, out, errs)
	}
	entries, err := os.ReadDir(whole)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		names = append(names, e.Name())
		a, _ := os.ReadFile(filepath.Join(whole, e.Name()))
		b, err := os.ReadFile(filepath.Join(merged, e.Name()))
		if err != nil || !bytes.Equal(a, b) {
			t.Errorf("%s: the merged shards differ from the whole run (%v)", e.Name(), err)
		}
	}
	if got := strings.Join(names, " "); got != ".spillway.json jobs.csv manifest.json validation.csv validation.png verdict.txt" {
		t.Errorf("files %s", got)
	}
	table, _ := os.ReadFile(filepath.Join(whole, "validation.csv"))
	if !strings.HasPrefix(string(table), "check,effect,channel,metric,value\n") ||
		!strings.Contains(string(table), "holdout,outcome_baseline,,crps,") ||
		!strings.Contains(string(table), "stability,via_search,video_spend,max_shift_sd,") ||
		!strings.Contains(string(table), "holdout,demand_no_media,,crps,") ||
		!strings.Contains(string(table), "placebo,total,video_spend,placebo_p,") ||
		!strings.Contains(string(table), "placebo,controlled,search_spend,placebo_p,") {
		t.Errorf("validation.csv:\n%s", table)
	}

	// refusals: a missing shard, a shard twice, merge with data flags, a
	// bad shard, an existing output folder
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"validate", "--merge", "--out", filepath.Join(dir, "m2"), shards[0]}, "missing"},
		{[]string{"validate", "--merge", "--out", filepath.Join(dir, "m3"), shards[0], shards[1], shards[1]}, "in both"},
		{[]string{"validate", "--merge", "--seed", "5", "--out", filepath.Join(dir, "m4"), shards[0], shards[1]}, "--seed"},
		{[]string{"validate", "--merge", "--out", filepath.Join(dir, "m5"), filepath.Join(dir, "sim")}, "not a folder written by spillway validate"},
		{validateArgs(dir, "--shard", "3/2", "--out", filepath.Join(dir, "s3")), "--shard"},
		{validateArgs(dir, "--out", whole), "already exists"},
		{validateArgs(dir, "--origins", "3", "--horizon", "8", "--out", filepath.Join(dir, "o3")), "need at least 84 weeks"},
		{validateArgs(dir, "--truth", filepath.Join(dir, "sim", "data.csv"), "--out", filepath.Join(dir, "t1")), "data.csv"},
	} {
		code, _, errs := runCmd(t, c.args...)
		if code != exitUsage || !strings.Contains(errs, c.want) {
			t.Errorf("%v: exit %d, stderr %q; want 2 and %q", c.args[1:], code, errs, c.want)
		}
	}
	for _, d := range []string{"m2", "m3", "m4", "s3", "o3", "t1"} {
		if _, err := os.Stat(filepath.Join(dir, d)); err == nil {
			t.Errorf("a refused command left %s behind", d)
		}
	}
}

// TestValidateFromFitFolder validates a fit folder's data with its own
// posterior as the reference (one left-out quarter, no refit of the
// reference), and refuses data roles next to --fit.
func TestValidateFromFitFolder(t *testing.T) {
	dir := t.TempDir()
	if code, _, errs := runCmd(t, "simulate", "--weeks", "68", "--seed", "4", "--out", filepath.Join(dir, "sim")); code != 0 {
		t.Fatalf("simulate: %d %s", code, errs)
	}
	fit := filepath.Join(dir, "fit")
	if code, _, errs := runCmd(t, "fit", "--data", filepath.Join(dir, "sim", "data.csv"), "--date", "week",
		"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
		"--outcome", "conversions", "--controls", "price", "--chains", "1", "--warmup", "30", "--draws", "30",
		"--quiet", "--out", fit); code != 0 {
		t.Fatalf("fit: %d %s", code, errs)
	}
	out := filepath.Join(dir, "val")
	code, stdout, errs := runCmd(t, "validate", "--fit", fit, "--checks", "stability", "--leave-out", "2023Q3",
		"--seeds", "0", "--chains", "1", "--warmup", "30", "--draws", "30", "--out", out)
	if code != 0 || !strings.Contains(stdout, "stability: ") {
		t.Fatalf("validate --fit: exit %d\n%s\n%s", code, stdout, errs)
	}
	if strings.Contains(errs, "reference fit done") {
		t.Errorf("validate --fit refitted the reference: %s", errs)
	}
	m, _ := os.ReadFile(filepath.Join(out, "manifest.json"))
	if !strings.Contains(string(m), `"reference_source": "given"`) {
		t.Errorf("manifest does not name the given reference:\n%s", m)
	}
	code, _, errs = runCmd(t, "validate", "--fit", fit, "--data", filepath.Join(dir, "sim", "data.csv"), "--out", filepath.Join(dir, "v2"))
	if code != exitUsage || !strings.Contains(errs, "--fit takes the data") {
		t.Errorf("--fit with --data: exit %d, stderr %q", code, errs)
	}
}

// TestValidateRegionPanel validates a simulated 3-region panel with the
// region model through the command (a reference and two stability refits,
// one chain of 30 + 30: enough to exercise the command, not to converge)
// and checks the region file and the verdict's region lines, then the
// region flags' refusals and --truth's (exit 2, nothing written).
func TestValidateRegionPanel(t *testing.T) {
	if testing.Short() {
		t.Skip("three tiny panel fits")
	}
	dir := t.TempDir()
	if code, _, errs := runCmd(t, "simulate", "--scenario", "demo-regions", "--regions", "3", "--weeks", "70", "--seed", "4", "--out", filepath.Join(dir, "sim")); code != 0 {
		t.Fatalf("simulate: %d %s", code, errs)
	}
	args := func(extra ...string) []string {
		a := []string{"validate", "--data", filepath.Join(dir, "sim", "data.csv"), "--date", "week", "--region", "region",
			"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
			"--outcome", "conversions", "--controls", "price", "--chains", "1", "--warmup", "30", "--draws", "30", "--seed", "4", "--quiet"}
		return append(a, extra...)
	}
	out := filepath.Join(dir, "val")
	code, stdout, errs := runCmd(t, args("--checks", "stability", "--leave-out", "2023Q3", "--leave-out-regions", "R02", "--seeds", "0", "--out", out)...)
	if code != 0 {
		t.Fatalf("validate: exit %d\n%s", code, errs)
	}
	if !strings.Contains(stdout, "stability: ") || !strings.Contains(stdout, "By region: the largest move") {
		t.Errorf("stdout lacks the stability verdict by region:\n%s", stdout)
	}
	b, err := os.ReadFile(filepath.Join(out, "validation_by_region.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	if lines[0] != "region,check,effect,channel,metric,value" || len(lines) < 4 {
		t.Fatalf("validation_by_region.csv:\n%s", b)
	}
	for _, g := range []string{"R01", "R02", "R03"} {
		if !strings.Contains(string(b), "\n"+g+",stability,total,video_spend,max_shift_sd,") {
			t.Errorf("validation_by_region.csv has no shift of %s's video total:\n%s", g, b)
		}
	}

	// recovery from the simulation's own truth per region: a replicate's
	// true effects summed over regions are truth.json's (computed by the
	// simulator on the same spend), to rounding
	rec := filepath.Join(dir, "rec")
	if code, _, errs := runCmd(t, args("--truth", filepath.Join(dir, "sim", "truth.json"), "--checks", "recovery", "--replicates", "1", "--out", rec)...); code != 0 {
		t.Fatalf("validate --truth on a panel: exit %d\n%s", code, errs)
	}
	if m, _ := os.ReadFile(filepath.Join(rec, "manifest.json")); !strings.Contains(string(m), "given true parameters per region") {
		t.Errorf("manifest does not name the regions' true parameters:\n%s", m)
	}
	var truth struct {
		Effects []struct {
			Channel, Path, Window string
			Value                 float64
		}
	}
	tb, err := os.ReadFile(filepath.Join(dir, "sim", "truth.json"))
	if err != nil || json.Unmarshal(tb, &truth) != nil {
		t.Fatalf("truth.json: %v", err)
	}
	got := map[string]float64{}
	for _, r := range readCSV(t, filepath.Join(rec, "jobs.csv")) {
		if r[1] == "effect" && r[5] == "truth" && r[7] == "" {
			v, _ := strconv.ParseFloat(r[6], 64)
			got[r[2]+" "+r[3]+" "+r[4]] = v
		}
	}
	n := 0
	for _, e := range truth.Effects {
		g, ok := got[e.Channel+" "+e.Path+" "+e.Window]
		if !ok {
			continue
		}
		n++
		if math.Abs(g-e.Value) > 1e-9*math.Max(1, math.Abs(e.Value)) {
			t.Errorf("%s %s %s: the replicate's true summed effect %v, truth.json %v", e.Channel, e.Path, e.Window, g, e.Value)
		}
	}
	if n < 8 {
		t.Errorf("only %d of truth.json's effects are in the replicate's records", n)
	}
	if code, _, errs := runCmd(t, "simulate", "--weeks", "70", "--seed", "4", "--out", filepath.Join(dir, "national")); code != 0 {
		t.Fatalf("simulate: %d %s", code, errs)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{args("--leave-out-regions", "R09", "--out", filepath.Join(dir, "x1")), `region "R09" is not in the data`},
		{args("--truth", filepath.Join(dir, "national", "truth.json"), "--out", filepath.Join(dir, "x2")), "holds national true parameters"},
		{args("--national", "--leave-out-regions", "R01", "--out", filepath.Join(dir, "x3")), "--leave-out-regions needs a region panel"},
		{args("--national", "--truth", filepath.Join(dir, "sim", "truth.json"), "--out", filepath.Join(dir, "x4")), "holds each region's true parameters"},
	} {
		code, _, errs := runCmd(t, c.args...)
		if code != 2 || !strings.Contains(errs, c.want) {
			t.Errorf("%v: exit %d, stderr %q; want 2 and %q", c.args[len(c.args)-3:], code, errs, c.want)
		}
		if _, err := os.Stat(c.args[len(c.args)-1]); !os.IsNotExist(err) {
			t.Errorf("%s was written", c.args[len(c.args)-1])
		}
	}
}

// panelJobs reads a validate folder's jobs.csv into each job's own
// numbers (the file's lines without the job number, in order), leaving out
// the shifts of a sum against the reference's ("shift_sd"), which depend
// on the reference fit too.
func panelJobs(t *testing.T, dir string) map[string][]string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dir, "jobs.csv"))
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]string{}
	for _, line := range strings.Split(strings.TrimSpace(string(b)), "\n")[1:] {
		job, rest, _ := strings.Cut(line, ",")
		if !strings.Contains(rest, ",shift_sd,") {
			out[job] = append(out[job], rest)
		}
	}
	return out
}

// TestValidateRegionPanelOptions validates a simulated 3-region, 70-week
// panel with the region model through the command, every check with one
// job each (the reference, 1 replicate, 1 origin of 2 weeks, 2023Q3 left
// out, R02 left out; one chain of 30 + 30 per fit), without options, with
// --drift video_spend (smooth, and with --drift-shape jumps) and with
// --lifts FILE (a test of video's outcome in R02 in 2023Q2 and a national
// test of audio's queries in 2023Q3). Every job's numbers must differ from
// the sweep without options (its fit took the option), except the refit
// without R02 of the lift-test sweep: it drops R02's test and the national
// one, so it is the same fit as without tests, number for number (but for
// the shifts of its sums, measured against the reference fit). The
// manifest names the options; the lift-test sweep run as two shards and
// merged gives the same folder byte for byte. A sweep with the placebo
// check judges the sums (validation.csv) and not the regions.
func TestValidateRegionPanelOptions(t *testing.T) {
	if testing.Short() {
		t.Skip("six tiny panel sweeps")
	}
	dir := t.TempDir()
	if code, _, errs := runCmd(t, "simulate", "--scenario", "demo-regions", "--regions", "3", "--weeks", "70", "--seed", "4", "--out", filepath.Join(dir, "sim")); code != 0 {
		t.Fatalf("simulate: %d %s", code, errs)
	}
	// weeks 14-21 (2023-04-10 to 2023-05-29) lie in 2023Q2, 30-37 in 2023Q3
	tests := writeFileIn(t, dir, "lifts.csv", "channel,start,end,estimate,se,metric,region\n"+
		"video_spend,2023-04-10,2023-05-29,400,100,outcome,R02\n"+
		"audio_spend,2023-07-31,2023-09-18,3000,1000,queries,\n")
	sweep := func(out string, extra ...string) map[string][]string {
		t.Helper()
		a := []string{"validate", "--data", filepath.Join(dir, "sim", "data.csv"), "--date", "week", "--region", "region",
			"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
			"--outcome", "conversions", "--controls", "price", "--replicates", "1", "--origins", "1", "--horizon", "2",
			"--leave-out", "2023Q3", "--leave-out-regions", "R02", "--seeds", "0",
			"--chains", "1", "--warmup", "30", "--draws", "30", "--seed", "4", "--quiet", "--out", filepath.Join(dir, out)}
		code, stdout, errs := runCmd(t, append(a, extra...)...)
		if code != 0 {
			t.Fatalf("validate %v: exit %d\n%s", extra, code, errs)
		}
		if strings.Contains(out, "shard") {
			return nil
		}
		if !strings.Contains(stdout, "By region") {
			t.Errorf("validate %v: stdout lacks the region lines:\n%s", extra, stdout)
		}
		if _, err := os.Stat(filepath.Join(dir, out, "validation_by_region.csv")); err != nil {
			t.Error(err)
		}
		return panelJobs(t, filepath.Join(dir, out))
	}
	manifest := func(out string) string {
		b, err := os.ReadFile(filepath.Join(dir, out, "manifest.json"))
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	plain := sweep("plain")
	labels := []string{"reference", "replicate 1", "origin", "without 2023Q3", "without region R02"}
	if len(plain) != len(labels) {
		t.Fatalf("%d jobs, want %d", len(plain), len(labels))
	}
	for _, c := range []struct {
		name  string
		flags []string
		same  []string // jobs whose numbers equal the sweep without options
		opts  string
	}{
		{"drift", []string{"--drift", "video_spend"}, nil, `"options": "drift=video_spend"`},
		{"jumps", []string{"--drift", "video_spend", "--drift-shape", "jumps"}, nil, `"options": "drift=video_spend; drift shape=jumps"`},
		{"lifts", []string{"--lifts", tests}, []string{"4"}, `"options": "default; lift video_spend outcome 14-21 400 100 in R02; lift audio_spend queries 30-37 3000 1000"`},
	} {
		got := sweep(c.name, c.flags...)
		for job, label := range labels {
			k := string(rune('0' + job))
			same := strings.Join(got[k], "\n") == strings.Join(plain[k], "\n")
			if want := slices.Contains(c.same, k); same != want {
				t.Errorf("%s: job %s (%s) has the same numbers as without the option: %v, want %v", c.name, k, label, same, want)
			}
		}
		if m := manifest(c.name); !strings.Contains(m, c.opts) {
			t.Errorf("%s: manifest.json lacks %s:\n%s", c.name, c.opts, m)
		}
	}
	// the placebo check judges the sums only
	sweep("placebo", "--checks", "stability,placebo", "--placebos", "1")
	for name, want := range map[string]bool{"validation.csv": true, "validation_by_region.csv": false} {
		b, err := os.ReadFile(filepath.Join(dir, "placebo", name))
		if err != nil {
			t.Fatal(err)
		}
		if got := strings.Contains(string(b), "placebo,"); got != want {
			t.Errorf("placebo rows in %s: %v, want %v:\n%s", name, got, want, b)
		}
	}
	// the lift-test sweep as two shards, merged
	sweep("shard1", "--lifts", tests, "--shard", "1/2")
	sweep("shard2", "--lifts", tests, "--shard", "2/2")
	merged := filepath.Join(dir, "merged")
	if code, _, errs := runCmd(t, "validate", "--merge", filepath.Join(dir, "shard2"), filepath.Join(dir, "shard1"), "--out", merged, "--quiet"); code != 0 {
		t.Fatalf("merge: exit %d\n%s", code, errs)
	}
	for _, name := range files(t, filepath.Join(dir, "lifts")) {
		a, _ := os.ReadFile(filepath.Join(dir, "lifts", name))
		b, err := os.ReadFile(filepath.Join(merged, name))
		if err != nil || !bytes.Equal(a, b) {
			t.Errorf("%s differs between the whole sweep and the merged shards (%v)", name, err)
		}
	}
}
