package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestRunReturnPriors runs the demo with priors on returns: the fit, the
// split read back from the folder, priors_implied.csv with the stated
// return beside the priors' and the posterior's, the report's table, and
// a short validate sweep whose refits take the same stated priors.
func TestRunReturnPriors(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end run of the demo; skipped with -short")
	}
	tmp := t.TempDir()
	priors := writeFileIn(t, tmp, "priors.csv", "parameter,family,p1,p2,window,per\n"+
		"return[video_spend],lognormal90,2,8,2025Q3,1000\nincremental_direct[audio_spend],lognormal,20000,10000,,\n")
	dir := filepath.Join(tmp, "out")
	code, _, stderr := runCmd(t, append([]string{"run", "--priors", priors, "--out", dir}, quick...)...)
	if code != 0 {
		t.Fatalf("run: exit %d\n%s", code, stderr)
	}
	b, err := os.ReadFile(filepath.Join(dir, "priors_implied.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	if lines[0] != "channel,path,window,measure,per,stated_q05,stated_q50,stated_q95,prior_q05,prior_q50,prior_q95,posterior_q05,posterior_q50,posterior_q95" || len(lines) != 5 {
		t.Fatalf("priors_implied.csv:\n%s", b)
	}
	// the stated 90% range, exactly; whole-period rows state nothing
	for _, want := range []string{"video_spend,total,2025Q3,return_on_spend,1000,2,4,8,", "audio_spend,direct,all,incremental,1,8224.87",
		"video_spend,total,all,return_on_spend,1000,,,,"} {
		found := false
		for _, l := range lines[1:] {
			found = found || strings.HasPrefix(l, want)
		}
		if !found {
			t.Errorf("priors_implied.csv has no row %q:\n%s", want, b)
		}
	}
	page, _ := os.ReadFile(filepath.Join(dir, "report.html"))
	if !strings.Contains(string(page), `id="priors-implied"`) || !strings.Contains(string(page), "A stated prior can dominate weak data") {
		t.Error("report.html lacks the table of what the priors assumed or its caution")
	}
	// validate takes the stated return priors into every refit (short
	// chains: the path end to end, not convergence); the manifest names them.
	val := filepath.Join(tmp, "val")
	code, _, stderr = runCmd(t, "validate", "--fit", dir, "--out", val, "--quiet", "--checks", "recovery",
		"--replicates", "2", "--chains", "1", "--warmup", "30", "--draws", "30")
	if code != 0 {
		t.Fatalf("validate on a fit with return priors: exit %d, %s", code, stderr)
	}
	m, err := os.ReadFile(filepath.Join(val, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(m), "return[video_spend] over 2025Q3 per 1000=lognormal90(2,8)") {
		t.Errorf("manifest.json does not name the stated return prior:\n%s", m)
	}
}
