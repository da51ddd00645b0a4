package main

import (
	"bytes"
	"os"
	"path/filepath"
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
// region flags' refusals (exit 2, nothing written).
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
	for _, c := range []struct {
		args []string
		want string
	}{
		{args("--leave-out-regions", "R09", "--out", filepath.Join(dir, "x1")), `region "R09" is not in the data`},
		{args("--truth", filepath.Join(dir, "sim", "truth.json"), "--out", filepath.Join(dir, "x2")), "--truth holds national true parameters"},
		{args("--national", "--leave-out-regions", "R01", "--out", filepath.Join(dir, "x3")), "--leave-out-regions needs a region panel"},
		{args("--checks", "placebo", "--out", filepath.Join(dir, "x4")), "placebo does not run on a region panel"},
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
