package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"spillway/funnel/fitfolder"
)

// panelSettings are the shortest chains worth sampling a small panel with:
// the tests check the plumbing and the arithmetic between files, not the
// posterior.
var panelSettings = []string{"--seed", "5", "--warmup", "30", "--draws", "20", "--quiet"}

// panelData simulates a 3-region, 60-week panel from the region model
// (simulate's demo-regions) and returns its data.csv and the role flags.
func panelData(t *testing.T) (string, []string) {
	t.Helper()
	sim := filepath.Join(t.TempDir(), "sim")
	if code, _, errs := runCmd(t, "simulate", "--scenario", "demo-regions", "--regions", "3", "--weeks", "60", "--seed", "3", "--out", sim); code != 0 {
		t.Fatalf("simulate: exit %d: %s", code, errs)
	}
	path := filepath.Join(sim, "data.csv")
	return path, []string{"--data", path, "--date", "week", "--region", "region", "--population", "population",
		"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
		"--outcome", "conversions", "--controls", "price"}
}

// TestPanelRun runs a 3-region panel end to end twice with the same seed
// (one short chain: the plumbing, not the posterior):
// every file of a run and the region tables are written, the folders are
// byte-identical but for timings, the summed effects are the regions' sums,
// the spreads printed are summary.csv's, and split, chart and report work
// on the fit folder read back (split reproducing run's tables byte for
// byte).
func TestPanelRun(t *testing.T) {
	if testing.Short() {
		t.Skip("two short panel runs; skipped with -short")
	}
	_, roles := panelData(t)
	dir := t.TempDir()
	// the same --out twice (spec.json and the report name it)
	out, first := filepath.Join(dir, "out"), filepath.Join(dir, "first")
	var stdout string
	for i := range 2 {
		args := append(append(append([]string{"run"}, roles...), "--chains", "1", "--out", out), panelSettings...)
		code, so, errs := runCmd(t, args...)
		if code != 0 {
			t.Fatalf("run %d: exit %d\n%s\n%s", i+1, code, so, errs)
		}
		if !strings.Contains(errs, "3 regions are fitted as a region panel") {
			t.Errorf("stderr lacks the panel note: %s", errs)
		}
		stdout = so
		if i == 0 {
			if err := os.Rename(out, first); err != nil {
				t.Fatal(err)
			}
		}
	}
	compareFolders(t, first, out)
	got := files(t, out)
	for _, want := range []string{"spec.json", "data.csv", "verdict.txt", "demand/draws.csv", "outcome/summary.csv", "naive/stats.json",
		"effects.csv", "effect_draws.csv", "borrowed.csv", "weekly.csv", "sensitivity.csv", "breakeven.csv", "fitted.csv", "curves.csv", "returns.csv",
		fitfolder.EffectsByRegionFile, fitfolder.BorrowedByRegionFile, fitfolder.RegionDifferencesFile,
		"charts/regions.png", "charts/split.png", "report.html"} {
		if !slices.Contains(got, want) {
			t.Errorf("the run did not write %s (it wrote %v)", want, got)
		}
	}
	if report, _ := os.ReadFile(filepath.Join(out, "report.html")); !strings.Contains(string(report), "<h2>Regions</h2>") {
		t.Error("report.html has no Regions section")
	}

	// the sum over regions, draw by draw, has for its mean the sum of the
	// regions' means; the shares are not sums
	f, err := fitfolder.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	if rs := f.Split.Regions(); !slices.Equal(rs, []string{"R01", "R02", "R03"}) {
		t.Fatalf("regions %v", rs)
	}
	for _, e := range f.Split.Effects {
		if e.Path == fitfolder.PathMediatedShare {
			continue
		}
		sum := 0.0
		for _, r := range f.Split.Regions() {
			re, ok := f.Split.RegionEffectOf(r, e.Channel, e.Path, e.Window)
			if !ok {
				t.Fatalf("no %s row for %s %s %s %s", fitfolder.EffectsByRegionFile, r, e.Channel, e.Path, e.Window)
			}
			sum += re.Mean
		}
		if math.Abs(sum-e.Mean) > 1e-9*math.Abs(e.Mean) {
			t.Errorf("%s %s %s: effects.csv mean %v, the regions' means add to %v", e.Channel, e.Path, e.Window, e.Mean, sum)
		}
	}
	for _, b := range f.Split.Borrowed {
		if b.Measure != fitfolder.PathControlled || b.Window != "all" {
			continue
		}
		sum := 0.0
		for _, rb := range f.Split.RegionBorrowed {
			if rb.Channel == b.Channel && rb.Measure == b.Measure && rb.Window == b.Window {
				sum += rb.Mean
			}
		}
		if math.Abs(sum-b.Mean) > 1e-9*math.Abs(b.Mean) {
			t.Errorf("borrowed %s controlled: %v, the regions' add to %v", b.Channel, b.Mean, sum)
		}
	}
	// weekly.csv holds the sum: its via-search means over the weeks of the
	// whole period add up to the summed effect's mean
	for _, ch := range []string{"video_spend", "audio_spend"} {
		total := 0.0
		for _, w := range f.Split.Weekly {
			if w.Channel == ch && w.Path == fitfolder.PathViaSearch {
				total += w.Mean
			}
		}
		e, _ := f.Split.Effect(ch, fitfolder.PathViaSearch, "all")
		if math.Abs(total-e.Mean) > 1e-6*math.Abs(e.Mean) {
			t.Errorf("%s: weekly via-search means add to %v, effects.csv says %v", ch, total, e.Mean)
		}
	}

	// the spreads on stdout are summary.csv's rows
	rows := readCSV(t, filepath.Join(out, "outcome", "summary.csv"))
	for _, name := range []string{"tau_mu_y", "tau_gamma", "tau_delta[video_spend]", "tau_beta[search_spend]"} {
		i := slices.IndexFunc(rows, func(r []string) bool { return r[0] == name })
		if i < 0 {
			t.Fatalf("summary.csv has no %s", name)
		}
		mean, _ := strconv.ParseFloat(rows[i][1], 64)
		if want := fmt.Sprintf("%s %.3g [", name, mean); !strings.Contains(stdout, want) {
			t.Errorf("stdout lacks %q:\n%s", want, stdout)
		}
	}

	// the fit folder read back
	again := filepath.Join(dir, "again")
	copyFolder(t, out, again)
	if code, _, errs := runCmd(t, "split", "--fit", again); code != 0 {
		t.Fatalf("split --fit: exit %d: %s", code, errs)
	}
	for _, name := range []string{"effects.csv", "borrowed.csv", "weekly.csv", "sensitivity.csv", "fitted.csv", "curves.csv", "returns.csv",
		fitfolder.EffectsByRegionFile, fitfolder.BorrowedByRegionFile, fitfolder.RegionDifferencesFile, "verdict.txt"} {
		a, _ := os.ReadFile(filepath.Join(out, name))
		b, _ := os.ReadFile(filepath.Join(again, name))
		if len(a) == 0 || string(a) != string(b) {
			t.Errorf("%s differs after split --fit of the folder read back", name)
		}
	}
	if code, _, errs := runCmd(t, "chart", "--fit", again, "--out", filepath.Join(dir, "charts")); code != 0 {
		t.Errorf("chart --fit: exit %d: %s", code, errs)
	} else if _, err := os.Stat(filepath.Join(dir, "charts", "regions.png")); err != nil {
		t.Errorf("chart --fit drew no regions chart: %v", err)
	}
	if code, _, errs := runCmd(t, "report", "--fit", again, "--out", filepath.Join(dir, "report.html")); code != 0 {
		t.Errorf("report --fit: exit %d: %s", code, errs)
	}
	if code, _, errs := runCmd(t, "allocate", "--fit", again); code != exitUsage || !strings.Contains(errs, "--national") {
		t.Errorf("allocate on a panel: exit %d, %s; want 2 naming --national", code, errs)
	}

	// validate --fit on the panel's folder: a region panel sweep whose
	// reference is the folder's posterior, not a refit: the reference
	// job's effects are the folder's, summed and per region, to the digit
	val := filepath.Join(dir, "val")
	code, so, errs := runCmd(t, "validate", "--fit", again, "--checks", "stability", "--leave-out", "2023Q2", "--leave-out-regions", "R02",
		"--seeds", "0", "--chains", "1", "--warmup", "30", "--draws", "20", "--out", val)
	if code != 0 {
		t.Fatalf("validate --fit on a panel: exit %d\n%s\n%s", code, so, errs)
	}
	if strings.Contains(errs, "reference fit done") || strings.Contains(errs, "validated as their national sum") {
		t.Errorf("validate --fit on a panel refitted the reference or summed the regions: %s", errs)
	}
	if m, _ := os.ReadFile(filepath.Join(val, "manifest.json")); !strings.Contains(string(m), `"reference_source": "given"`) {
		t.Errorf("manifest does not name the given reference:\n%s", m)
	}
	jobs := readCSV(t, filepath.Join(val, "jobs.csv"))
	refMean := func(region string) string {
		for _, r := range jobs {
			if r[0] == "0" && r[1] == "effect" && r[2] == "video_spend" && r[3] == "total" && r[4] == "all" && r[5] == "mean" && r[7] == region {
				return r[6]
			}
		}
		t.Fatalf("jobs.csv has no reference mean of video's total effect for region %q", region)
		return ""
	}
	for _, c := range []struct{ file, region string }{{"effects.csv", ""}, {fitfolder.EffectsByRegionFile, "R02"}} {
		want := ""
		for _, r := range readCSV(t, filepath.Join(again, c.file)) {
			if c.region != "" && r[0] != c.region {
				continue
			}
			if c.region != "" {
				r = r[1:]
			}
			if r[0] == "video_spend" && r[1] == "total" && r[2] == "all" {
				want = r[3]
			}
		}
		if got := refMean(c.region); got != want {
			t.Errorf("region %q: the reference job's mean of video's total effect is %s, the fit folder's %s %s", c.region, got, c.file, want)
		}
	}
	if _, err := os.Stat(filepath.Join(val, "validation_by_region.csv")); err != nil {
		t.Errorf("validate --fit on a panel wrote no region file: %v", err)
	}
	if code, _, errs := runCmd(t, "validate", "--fit", again, "--national", "--out", filepath.Join(dir, "val2")); code != exitUsage || !strings.Contains(errs, "region panel's fit") {
		t.Errorf("validate --fit of a panel with --national: exit %d, %s; want 2 naming the panel's fit", code, errs)
	}
	if _, err := os.Stat(filepath.Join(dir, "val2")); !os.IsNotExist(err) {
		t.Errorf("the refused validate wrote its folder: %v", err)
	}
}

// TestPanelChainsMerge runs a panel as two one-chain jobs merged with run
// --merge and requires the folder of one run of two chains, file by file
// but for timings.
func TestPanelChainsMerge(t *testing.T) {
	if testing.Short() {
		t.Skip("three short panel runs; skipped with -short")
	}
	_, roles := panelData(t)
	dir := t.TempDir()
	// the single run and the merge write the same --out (spec.json and the
	// report name it)
	out, single := filepath.Join(dir, "out"), filepath.Join(dir, "single")
	args := func(extra ...string) []string {
		return append(append(append([]string{"run"}, roles...), panelSettings...), extra...)
	}
	if code, _, errs := runCmd(t, args("--chains", "2", "--out", out)...); code != 0 {
		t.Fatalf("run: exit %d: %s", code, errs)
	}
	if err := os.Rename(out, single); err != nil {
		t.Fatal(err)
	}
	var shards []string
	for _, c := range []string{"1", "2"} {
		d := filepath.Join(dir, "chain"+c)
		if code, stdout, errs := runCmd(t, args("--chain", c+"/2", "--out", d)...); code != 0 || !strings.Contains(stdout, "chain "+c+"/2 written to") {
			t.Fatalf("run --chain %s/2: exit %d\n%s\n%s", c, code, stdout, errs)
		}
		shards = append(shards, d)
	}
	if got, want := files(t, shards[0]), []string{".spillway.json", "data.csv", "demand/draws.csv", "naive/draws.csv", "outcome/draws.csv", "shard.json"}; !slices.Equal(got, want) {
		t.Errorf("a panel's shard holds %v, want %v", got, want)
	}
	if code, stdout, errs := runCmd(t, "run", "--merge", "--out", out, shards[1], shards[0]); code != 0 {
		t.Fatalf("run --merge: exit %d\n%s\n%s", code, stdout, errs)
	}
	compareFolders(t, single, out)
}

// TestPanelBadInput: a region column the data lack, a region with too few
// weeks, regions of different lengths, lift tests in a region the data lack
// or that does not run the channel in the window (or in a region of data
// fitted as their national sum), and the options the panel does not have
// yet are refused with the file, line and column (or the flag), exit
// status 2, before any sampling, and nothing is written.
func TestPanelBadInput(t *testing.T) {
	short := cmdRegions(60)
	short.rows = short.rows[:len(short.rows)-1]
	// north (rows 0, 2, 4, ...) without video in its first 20 weeks
	noVideo := cmdRegions(60)
	for w := range 20 {
		noVideo.set(2*w, "video", "0")
	}
	lifts := writeFile(t, "lifts.csv", "channel,start,end,estimate,se,region\nvideo,2023-04-10,2023-05-01,80,15,south\nvideo,2023-04-10,2023-05-01,80,15,east\n")
	north := writeFile(t, "north.csv", "channel,start,end,estimate,se,region\nvideo,2023-04-10,2023-05-01,80,15,north\n")
	for _, c := range []struct {
		name  string
		data  string
		flags []string
		cmd   string
		want  []string
	}{
		{"no such region column", cmdRegions(60).csv(), []string{"--region", "area"}, "fit", []string{":1: ", `column "area": not in the header (asked for by --region)`}},
		{"regions with too few weeks", cmdRegions(40).csv(), regionFlags, "fit", []string{": only 40 weeks per region", "at least 52"}},
		{"regions of different lengths", short.csv(), regionFlags, "fit", []string{fmt.Sprintf(":%d:1: ", 2*58+1+2), `region "south" ends on`}},
		{"a lift test in an unknown region", cmdRegions(60).csv(), append([]string{"--lifts", lifts}, regionFlags...), "fit", []string{lifts + ":3:6: ", `unknown region "east"; expected one of the data's regions north, south`}},
		{"a lift test in a region without the channel's spend", noVideo.csv(), append([]string{"--lifts", north}, regionFlags...), "fit", []string{north + ":2:6: ", "video has no spend in region north from 2023-04-10 to 2023-05-01"}},
		{"a lift test in a region of the national sum", cmdRegions(60).csv(), append([]string{"--lifts", north, "--national"}, regionFlags...), "fit", []string{north + ":2:6: ", "fitted as their national sum"}},
		{"a lift test in an unknown region in validate", cmdRegions(60).csv(), append([]string{"--lifts", lifts}, regionFlags...), "validate", []string{lifts + ":3:6: ", `unknown region "east"; expected one of the data's regions north, south`}},
		{"allocate", cmdRegions(60).csv(), append([]string{"--allocate"}, regionFlags...), "run", []string{"--allocate", "--national"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			path := writeFile(t, "regions.csv", c.data)
			out := filepath.Join(t.TempDir(), "out")
			args := append(inspectArgs(path, c.flags...), append([]string{"--out", out}, panelSettings...)...)
			args[0] = c.cmd
			code, stdout, stderr := runCmd(t, args...)
			if code != exitUsage {
				t.Fatalf("exit %d, want 2; stderr %q", code, stderr)
			}
			for _, w := range c.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("stderr %q lacks %q", stderr, w)
				}
			}
			if strings.HasPrefix(c.want[0], ":") && !strings.Contains(stderr, path+c.want[0]) {
				t.Errorf("stderr %q does not name the file %s", stderr, path)
			}
			if stdout != "" {
				t.Errorf("stdout %q", stdout)
			}
			if _, err := os.Stat(out); err == nil {
				t.Errorf("%s was written", out)
			}
		})
	}
}
