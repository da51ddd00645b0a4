package main

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"spillway/funnel/fitfolder"
)

// TestPanelBaseline runs a 3-region panel end to end with --baseline
// smooth, fits the same panel with the trend line and with the moving
// baseline beside a drifting video (short chains: the plumbing, not the
// posterior): every stage's summary has the baseline's sd, length-scale
// and weights and no trend slope (the line fit the reverse), spec.json and
// its command line record the choice, the run's report, charts and fitted
// values are written, split on the folder read back reproduces the run's
// effects byte for byte (the panel rebuilt with its baseline), and the
// fitted values and the effects differ from the trend line's; with --drift
// too, drift.csv holds video's multipliers beside the baseline.
func TestPanelBaseline(t *testing.T) {
	if testing.Short() {
		t.Skip("three short panel fits; skipped with -short")
	}
	_, roles := panelData(t)
	dir := t.TempDir()
	fit := func(verb, name string, extra ...string) *fitfolder.Fit {
		out := filepath.Join(dir, name)
		args := append(append(append([]string{verb}, roles...), "--chains", "2", "--out", out), append(panelSettings, extra...)...)
		code, stdout, errs := runCmd(t, args...)
		if code != 0 {
			t.Fatalf("%s %s: exit %d\n%s\n%s", verb, name, code, stdout, errs)
		}
		if verb == "fit" {
			if code, so, errs := runCmd(t, "split", "--fit", out); code != 0 {
				t.Fatalf("split %s: exit %d\n%s\n%s", name, code, so, errs)
			}
		}
		f, err := fitfolder.Load(out)
		if err != nil {
			t.Fatal(err)
		}
		return f
	}
	smooth := fit("run", "smooth", "--baseline", "smooth")
	line := fit("fit", "line")
	both := fit("fit", "both", "--baseline", "smooth", "--drift", "video_spend")

	const weeks = 60
	M := 4 // the basis of 60 weeks: ceil(1.75 * 1.5 * 29.5 / 20)
	for _, c := range []struct {
		name string
		f    *fitfolder.Fit
		base bool
	}{{"smooth", smooth, true}, {"line", line, false}, {"both", both, true}} {
		if len(c.f.Stages) != 3 {
			t.Fatalf("%s: %d stages", c.name, len(c.f.Stages))
		}
		for _, st := range c.f.Stages {
			suffix := "y"
			if st.Name == "demand" {
				suffix = "q"
			}
			var names []string
			for _, p := range st.Params {
				names = append(names, p.Name)
			}
			want := []string{"base_sd_" + suffix, "base_len_" + suffix, fmt.Sprintf("base_z_%s[%d]", suffix, M)}
			for _, w := range want {
				if slices.Contains(names, w) != c.base {
					t.Errorf("%s %s: summary has %s: %v, want %v", c.name, st.Name, w, !c.base, c.base)
				}
			}
			if slices.Contains(names, fmt.Sprintf("base_z_%s[%d]", suffix, M+1)) {
				t.Errorf("%s %s: more than %d baseline weights", c.name, st.Name, M)
			}
			if slices.Contains(names, "b_"+suffix) == c.base {
				t.Errorf("%s %s: trend slope b_%s in the summary: %v", c.name, st.Name, suffix, !c.base)
			}
			if c.base && !slices.Contains(names, "tau_mu_"+suffix) {
				t.Errorf("%s %s: no intercepts' spread: not a region panel", c.name, st.Name)
			}
		}
		if got := c.f.Run.Baseline == "smooth"; got != c.base {
			t.Errorf("%s: spec.json baseline %q", c.name, c.f.Run.Baseline)
		}
		if got := strings.Contains(c.f.Run.Command, "--baseline smooth"); got != c.base {
			t.Errorf("%s: spec.json command %q", c.name, c.f.Run.Command)
		}
	}

	// the run's outputs, and split on the folder read back
	for _, name := range []string{"report.html", "fitted.csv", "effects_by_region.csv"} {
		if _, err := os.Stat(filepath.Join(dir, "smooth", name)); err != nil {
			t.Errorf("the run with --baseline smooth: %v", err)
		}
	}
	pngs, _ := filepath.Glob(filepath.Join(dir, "smooth", "charts", "*.png"))
	if len(pngs) == 0 {
		t.Error("the run with --baseline smooth drew no chart")
	}
	before, err := os.ReadFile(filepath.Join(dir, "smooth", "effects.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if code, so, errs := runCmd(t, "split", "--fit", filepath.Join(dir, "smooth")); code != 0 {
		t.Fatalf("split smooth: exit %d\n%s\n%s", code, so, errs)
	}
	after, err := os.ReadFile(filepath.Join(dir, "smooth", "effects.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if string(after) != string(before) {
		t.Error("split on the run's folder read back changed effects.csv")
	}

	// the fitted values and effects are the moving baseline's own
	if len(smooth.Fitted) != len(line.Fitted) || len(smooth.Fitted) == 0 {
		t.Fatalf("fitted.csv: %d rows with the moving baseline, %d with the line", len(smooth.Fitted), len(line.Fitted))
	}
	differ := 0
	for i, r := range smooth.Fitted {
		if l := line.Fitted[i]; r.Stage != l.Stage || !r.Week.Equal(l.Week) || r.Actual != l.Actual {
			t.Fatalf("fitted.csv row %d: %s %v against %s %v", i, r.Stage, r.Week, l.Stage, l.Week)
		}
		if r.Mean != line.Fitted[i].Mean {
			differ++
		}
	}
	if differ < len(smooth.Fitted)/2 {
		t.Errorf("only %d of %d fitted values differ from the trend line's", differ, len(smooth.Fitted))
	}
	a, ok := smooth.Split.Effect("video_spend", fitfolder.PathViaSearch, "all")
	b, ok2 := line.Split.Effect("video_spend", fitfolder.PathViaSearch, "all")
	if !ok || !ok2 || a.Mean == b.Mean {
		t.Errorf("video's effect via search: %v with the moving baseline, %v with the line", a.Mean, b.Mean)
	}

	// with --drift too
	if len(both.Drift) != 2*weeks {
		t.Errorf("--baseline smooth --drift video_spend: drift.csv has %d rows, want %d", len(both.Drift), 2*weeks)
	}
	if len(smooth.Drift) != 0 {
		t.Errorf("--baseline smooth alone: drift.csv has %d rows", len(smooth.Drift))
	}
}

// TestValidatePanelBaseline runs a tiny panel sweep (3 regions x 70 weeks,
// recovery and holdout, one chain of 30 + 30) with --baseline smooth and
// the same sweep with the trend line, same seed: validate's panel refits
// take the model options straight through (model.PanelStages), so the
// sweep with the moving baseline runs (it was refused before the region
// model had one), every job of the line's sweep is there, and its fits'
// numbers differ from the line's: the option reached the reference fit
// and the refits.
func TestValidatePanelBaseline(t *testing.T) {
	if testing.Short() {
		t.Skip("two tiny panel sweeps")
	}
	dir := t.TempDir()
	if code, _, errs := runCmd(t, "simulate", "--scenario", "demo-regions", "--regions", "3", "--weeks", "70", "--seed", "4", "--out", filepath.Join(dir, "sim")); code != 0 {
		t.Fatalf("simulate: %d %s", code, errs)
	}
	sweep := func(name string, extra ...string) map[string]string {
		out := filepath.Join(dir, name)
		args := append([]string{"validate", "--data", filepath.Join(dir, "sim", "data.csv"), "--date", "week", "--region", "region",
			"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
			"--outcome", "conversions", "--controls", "price", "--chains", "1", "--warmup", "30", "--draws", "30", "--seed", "4", "--quiet",
			"--checks", "recovery,holdout", "--replicates", "1", "--origins", "1", "--seeds", "0", "--out", out}, extra...)
		code, stdout, errs := runCmd(t, args...)
		if code != 0 {
			t.Fatalf("validate %s: exit %d\n%s\n%s", name, code, stdout, errs)
		}
		b, err := os.ReadFile(filepath.Join(out, "jobs.csv"))
		if err != nil {
			t.Fatal(err)
		}
		// job,kind,name,path,window,stat,value,region: the value by the rest
		rows := map[string]string{}
		for _, line := range strings.Split(strings.TrimSpace(string(b)), "\n")[1:] {
			f := strings.Split(line, ",")
			if len(f) != 8 {
				t.Fatalf("jobs.csv row %q", line)
			}
			rows[strings.Join(append(f[:6:6], f[7]), ",")] = f[6]
		}
		return rows
	}
	base := sweep("smooth", "--baseline", "smooth")
	line := sweep("line")
	same, compared, kinds := 0, 0, map[string]bool{}
	for k, v := range line {
		w, ok := base[k]
		if !ok {
			t.Fatalf("the sweep with --baseline smooth has no %s", k)
		}
		f := strings.Split(k, ",")
		kinds[f[1]] = true
		if f[5] == "actual" || strings.HasPrefix(f[5], "base") || f[5] == "divergences" || f[5] == "ess_tail_min" {
			// the data, the seasonal baseline's forecast from them, counts,
			// and the least tail ESS, which on one chain of 30 draws
			// takes few values (the 5% and 95% indicators hold one or two
			// draws): both sweeps' outcome refits once had 12.66
			continue
		}
		compared++
		if w == v {
			same++
		}
	}
	if len(base) != len(line) {
		t.Errorf("jobs.csv: %d rows with the moving baseline, %d with the line", len(base), len(line))
	}
	if !kinds["effect"] || !kinds["forecast"] {
		t.Errorf("jobs.csv's kinds %v, want effects (recovery) and forecasts (holdout)", kinds)
	}
	if same > 0 || compared < len(line)/2 {
		t.Errorf("%d of %d values of jobs.csv's fits are the line sweep's", same, compared)
	}
}
