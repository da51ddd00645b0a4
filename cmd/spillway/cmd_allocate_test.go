package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"testing"
)

// fitForAllocate makes a fit folder of simulated data with short chains:
// the allocate tests check the plumbing; funnel/allocate checks the plans.
func fitForAllocate(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	if code, _, errs := runCmd(t, "simulate", "--weeks", "68", "--seed", "4", "--out", filepath.Join(dir, "sim")); code != 0 {
		t.Fatalf("simulate: %d %s", code, errs)
	}
	fit := filepath.Join(dir, "fit")
	if code, _, errs := runCmd(t, "fit", "--data", filepath.Join(dir, "sim", "data.csv"), "--date", "week",
		"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
		"--outcome", "conversions", "--controls", "price", "--chains", "2", "--warmup", "60", "--draws", "60",
		"--quiet", "--out", fit); code != 0 {
		t.Fatalf("fit: %d %s", code, errs)
	}
	return fit
}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

// TestAllocateCommand plans from a fit folder: every file, the columns the
// issue asks for, the budget kept to the cent, a lock kept, the summary on
// stdout, and the same bytes on one core and on two.
func TestAllocateCommand(t *testing.T) {
	fit := fitForAllocate(t)
	dir := t.TempDir()
	limits := filepath.Join(dir, "limits.csv")
	os.WriteFile(limits, []byte("channel,min,max\nsearch_spend,10000,\nvideo_spend,0,400000\n"), 0o644)
	var outs [2][]byte
	for i, procs := range []int{1, 2} {
		old := runtime.GOMAXPROCS(procs)
		out := filepath.Join(dir, "plan")
		code, stdout, stderr := runCmd(t, "allocate", "--fit", fit, "--out", out, "--force", "--limits", limits, "--lock", "audio_spend")
		runtime.GOMAXPROCS(old)
		if code != 0 {
			t.Fatalf("allocate: exit %d\n%s", code, stderr)
		}
		for _, want := range []string{"gain over the current plan", "probability that the plan beats", "confirm large moves", "audio_spend"} {
			if !strings.Contains(stdout, want) {
				t.Errorf("stdout lacks %q:\n%s", want, stdout)
			}
		}
		var all []byte
		for _, f := range []string{"plan.csv", "plan_weekly.csv", "plan.json", "plan.png"} {
			b, err := os.ReadFile(filepath.Join(out, f))
			if err != nil || len(b) == 0 {
				t.Fatalf("missing %s", f)
			}
			all = append(all, b...)
		}
		outs[i] = all
	}
	if !bytes.Equal(outs[0], outs[1]) {
		t.Error("the plan's files differ between GOMAXPROCS 1 and 2")
	}
	out := filepath.Join(dir, "plan")
	rows := readCSV(t, filepath.Join(out, "plan.csv"))
	if got := strings.Join(rows[0][:6], ","); got != "channel,current,planned,min,max,locked" {
		t.Errorf("plan.csv header starts %s", got)
	}
	var cur, planned int64
	for _, r := range rows[1:] {
		c, p := cents(t, r[1]), cents(t, r[2])
		cur += c
		planned += p
		switch r[0] {
		case "audio_spend":
			if r[5] != "true" || c != p {
				t.Errorf("locked audio: %v", r)
			}
		case "video_spend":
			if p > 40000000 {
				t.Errorf("video planned %s above its max 400000", r[2])
			}
		case "search_spend":
			if p < 1000000 || r[4] != "" {
				t.Errorf("search: %v", r)
			}
		}
	}
	if cur != planned {
		t.Errorf("planned %d cents, current (the default budget) %d", planned, cur)
	}
	var sum struct {
		Gain struct{ Mean, Q05, Q95 float64 }
		P    float64 `json:"p_beats_current"`
	}
	b, _ := os.ReadFile(filepath.Join(out, "plan.json"))
	if err := json.Unmarshal(b, &sum); err != nil || sum.Gain.Q05 > sum.Gain.Mean || sum.Gain.Mean > sum.Gain.Q95 || sum.P < 0 || sum.P > 1 {
		t.Errorf("plan.json: %v %+v", err, sum)
	}
	weekly := readCSV(t, filepath.Join(out, "plan_weekly.csv"))
	if strings.Join(weekly[0], ",") != "week,channel,spend" || len(weekly) != 1+3*13 {
		t.Errorf("plan_weekly.csv: header %v, %d rows", weekly[0], len(weekly)-1)
	}

	// a plan the user brings: evaluated, not optimised
	given := filepath.Join(dir, "given.csv")
	os.WriteFile(given, []byte("channel,amount\nvideo_spend,150000\n"), 0o644)
	code, stdout, stderr := runCmd(t, "allocate", "--fit", fit, "--out", filepath.Join(dir, "given"), "--plan", given)
	if code != 0 || !strings.Contains(stdout, "the plan given") {
		t.Fatalf("allocate --plan: exit %d\n%s\n%s", code, stdout, stderr)
	}
	rows = readCSV(t, filepath.Join(dir, "given", "plan.csv"))
	for _, r := range rows[1:] {
		if r[0] == "video_spend" && r[2] != "150000.00" || r[0] != "video_spend" && r[1] != r[2] {
			t.Errorf("given plan row %v", r)
		}
	}
}

// TestAllocateIntoFitFolder plans into the fit folder itself (no --out)
// and checks that the report then has the plan's section.
func TestAllocateIntoFitFolder(t *testing.T) {
	fit := fitForAllocate(t)
	if code, _, stderr := runCmd(t, "split", "--fit", fit); code != 0 {
		t.Fatalf("split: exit %d: %s", code, stderr)
	}
	code, stdout, stderr := runCmd(t, "allocate", "--fit", fit, "--budget", "500000")
	if code != 0 || !strings.Contains(stdout, "plan written to "+fit) {
		t.Fatalf("allocate into the fit folder: exit %d\n%s\n%s", code, stdout, stderr)
	}
	if code, _, stderr := runCmd(t, "report", "--fit", fit); code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	html, _ := os.ReadFile(filepath.Join(fit, "report.html"))
	for _, want := range []string{`id="plan"`, "Gain over the current plan", "confirm large moves with a controlled experiment"} {
		if !strings.Contains(string(html), want) {
			t.Errorf("the report lacks %q", want)
		}
	}
}

func cents(t *testing.T, s string) int64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("%q: %v", s, err)
	}
	return int64(math.Round(v * 100))
}

// TestAllocateErrors checks that impossible limits, unknown channels and
// contradicting flags exit with status 2, name the file, line and column
// (or the flag), and write nothing.
func TestAllocateErrors(t *testing.T) {
	fit := fitForAllocate(t)
	dir := t.TempDir()
	file := func(name, body string) string {
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte(body), 0o644)
		return p
	}
	unknown := file("unknown.csv", "channel,min,max\nvideo_spend,0,\ntv_spend,0,100\n")
	minMax := file("minmax.csv", "channel,min,max\naudio_spend,5000,4000\n")
	above := file("above.csv", "channel,min,max\nvideo_spend,9000000,\n")
	cell := file("cell.csv", "channel,min,max\nvideo_spend,lots,\n")
	header := file("header.csv", "channel,max,min\n")
	givenBad := file("given.csv", "channel,amount\naudio_spend,-5\n")
	for _, c := range []struct {
		name string
		args []string
		want string
	}{
		{"unknown channel", []string{"--limits", unknown}, "unknown.csv:3:1"},
		{"min above max", []string{"--limits", minMax}, "minmax.csv:2:2"},
		{"minimums above the budget", []string{"--limits", above, "--budget", "100000"}, "above.csv:2:2"},
		{"not a number", []string{"--limits", cell}, "cell.csv:2:2"},
		{"columns", []string{"--limits", header}, "header.csv:1:2"},
		{"negative amount", []string{"--plan", givenBad}, "given.csv:2:2"},
		{"unknown lock", []string{"--lock", "radio"}, "--lock"},
		{"plan and budget", []string{"--plan", givenBad, "--budget", "5"}, "--plan"},
		{"cautious", []string{"--cautious", "0.9"}, "--cautious"},
		{"pattern", []string{"--pattern", "1999Q1"}, "pattern"},
		{"weeks", []string{"--weeks", "0"}, "--weeks"},
	} {
		out := filepath.Join(dir, "out-"+strings.ReplaceAll(c.name, " ", "-"))
		code, _, stderr := runCmd(t, append([]string{"allocate", "--fit", fit, "--out", out}, c.args...)...)
		if code != exitUsage || !strings.Contains(stderr, c.want) {
			t.Errorf("%s: exit %d, stderr %q; want 2 and %q", c.name, code, stderr, c.want)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("%s: the refused command wrote %s", c.name, out)
		}
	}
}

// TestRunAllocate runs the whole job on the demo with --allocate: the plan
// is in the folder and in the report.
func TestRunAllocate(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end run of the demo; skipped with -short")
	}
	dir := filepath.Join(t.TempDir(), "out")
	code, stdout, stderr := runCmd(t, append([]string{"run", "--allocate", "--out", dir}, quick...)...)
	if code != 0 || !strings.Contains(stdout, "gain over the current plan") {
		t.Fatalf("run --allocate: exit %d\n%s\n%s", code, stdout, stderr)
	}
	for _, f := range []string{"plan.csv", "plan_weekly.csv", "plan.json", "plan.png", "report.html"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("missing %s", f)
		}
	}
	html, _ := os.ReadFile(filepath.Join(dir, "report.html"))
	if !strings.Contains(string(html), `id="plan"`) {
		t.Error("the report has no plan section")
	}
}
