package main

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"spillway/funnel/fitfolder"
)

// TestPanelLifts fits a 3-region panel with lift tests (short chains: the
// plumbing, not the posterior): a test of video's outcome in region R02, a
// national test of audio's queries (summed over the regions), and a test of
// video's outcome in R01 far beyond anything the data allow. lifts.csv
// has the region column and a row per test with the model beside it, the
// far test is flagged on standard output naming its region, the fit's
// chains run as two jobs merge into the same folder, and split reads the
// folder back.
func TestPanelLifts(t *testing.T) {
	if testing.Short() {
		t.Skip("three short panel fits; skipped with -short")
	}
	_, roles := panelData(t)
	dir := t.TempDir()
	tests := writeFileIn(t, dir, "tests.csv", "channel,start,end,estimate,se,metric,region\n"+
		"video_spend,2023-05-22,2023-06-19,300,120,outcome,R02\n"+
		"audio_spend,2023-03-06,2023-04-03,6000,2500,queries,\n"+
		"video_spend,2023-05-22,2023-06-19,400000,500,,R01\n")
	args := func(extra ...string) []string {
		return append(append(append([]string{"fit"}, roles...), "--lifts", tests, "--chains", "2"), append(panelSettings, extra...)...)
	}
	out := filepath.Join(dir, "out")
	code, stdout, errs := runCmd(t, args("--out", out)...)
	if code != 0 {
		t.Fatalf("fit: exit %d\n%s\n%s", code, stdout, errs)
	}
	if !strings.Contains(stdout, "lift test (line 4) of video_spend in region R01 on outcome, 2023-05-22 to 2023-06-19: 4e+05 (se 500), but the rest of the data say") ||
		!strings.Contains(stdout, "the model cannot reconcile them") {
		t.Errorf("stdout does not flag the far test in R01:\n%s", stdout)
	}
	f, err := os.Open(filepath.Join(out, fitfolder.LiftsFileName))
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(f).ReadAll()
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 4 || strings.Join(rows[0][:6], ",") != "region,channel,metric,start,end,estimate" {
		t.Fatalf("lifts.csv:\n%v", rows)
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	for i, want := range [][3]string{{"R02", "video_spend", "outcome"}, {"", "audio_spend", "queries"}, {"R01", "video_spend", "outcome"}} {
		r := rows[i+1]
		if r[col["region"]] != want[0] || r[col["channel"]] != want[1] || r[col["metric"]] != want[2] {
			t.Errorf("lifts.csv row %d: %v, want %v", i+1, r, want)
		}
		lo, _ := strconv.ParseFloat(r[col["model_q05"]], 64)
		m, _ := strconv.ParseFloat(r[col["model_mean"]], 64)
		hi, _ := strconv.ParseFloat(r[col["model_q95"]], 64)
		if !(lo <= m && m <= hi) || !(hi > 0) || math.IsInf(hi, 0) {
			t.Errorf("lifts.csv row %d: the model's lift %v [%v, %v]", i+1, m, lo, hi)
		}
	}
	if v := rows[3][col["verdict"]]; v != "contradicts" {
		t.Errorf("the far test in R01: verdict %q, want contradicts", v)
	}
	// the chains as two jobs, merged into the same --out (spec.json names it)
	single := filepath.Join(dir, "single")
	if err := os.Rename(out, single); err != nil {
		t.Fatal(err)
	}
	var shards []string
	for _, c := range []string{"2", "1"} {
		d := filepath.Join(dir, "chain"+c)
		if code, so, errs := runCmd(t, args("--chain", c+"/2", "--out", d)...); code != 0 {
			t.Fatalf("fit --chain %s/2: exit %d\n%s\n%s", c, code, so, errs)
		}
		shards = append(shards, d)
	}
	if code, so, errs := runCmd(t, append([]string{"fit", "--merge", "--out", out}, shards...)...); code != 0 {
		t.Fatalf("fit --merge: exit %d\n%s\n%s", code, so, errs)
	}
	compareFolders(t, single, out)
	if code, so, errs := runCmd(t, "split", "--fit", out); code != 0 {
		t.Fatalf("split: exit %d\n%s\n%s", code, so, errs)
	}
}
