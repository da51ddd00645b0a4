package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestChecksBeforeFitting: a bad --window or priors file (a return row
// included) is reported
// before any sampling (nothing on stdout, where each fitted stage prints
// its line), located, with exit status 2 and nothing written. The chains
// asked for are long, so a check made after the fit would show as a slow
// test and as stage lines on stdout.
func TestChecksBeforeFitting(t *testing.T) {
	dir := t.TempDir()
	good := writeFileIn(t, dir, "sales.csv", cmdFrame(60).csv())
	priors := func(name, text string) string { return writeFileIn(t, dir, name, "parameter,family,p1,p2\n"+text) }
	wide := func(name, text string) string {
		return writeFileIn(t, dir, name, "parameter,family,p1,p2,window,per\n"+text)
	}
	long := []string{"--chains", "2", "--warmup", "100000", "--draws", "100000", "--quiet"}
	out := filepath.Join(dir, "out")
	for _, c := range []struct {
		name string
		args []string
		want string
	}{
		{"window not a window", []string{"run", "--window", "banana"}, `spillway run: --window: "banana" is not all, a quarter like 2024Q3`},
		{"window outside the data", []string{"run", "--window", "2019Q1"}, `spillway run: --window: "2019Q1": expected all, a quarter in the data such as 2023Q1`},
		{"window range outside the data", []string{"run", "--window", "2030-01-01:2030-03-31"}, `holds no week of the data (2023-01-02 to 2024-02-19)`},
		{"fixed sigma below zero", []string{"fit", "--priors", priors("p1.csv", "sigma_q,fixed,-1,\n")}, "p1.csv:2:3: sigma_q: fixed value -1 is outside x > 0"},
		{"bad p2", []string{"fit", "--priors", priors("p2.csv", "gamma,normal,0,-1\n")}, "p2.csv:2:4: gamma: normal needs sd p2 > 0"},
		{"sd too small", []string{"fit", "--priors", priors("p3.csv", "gamma,normal,0,1e-300\n")}, "p3.csv:2:4: gamma: normal sd p2 1e-300 is outside"},
		{"flat with numbers", []string{"fit", "--priors", priors("p4.csv", "mu_y,flat,5,7\n")}, "p4.csv:2:3: mu_y: flat takes no numbers"},
		{"halfnormal intercept", []string{"run", "--priors", priors("p5.csv", "mu_q,halfnormal,1,\n")}, "p5.csv:2:2: mu_q: the intercept lies on the real line"},
		{"return window outside the data", []string{"run", "--priors", wide("r1.csv", "return[video],lognormal90,0.5,3,2030Q1,1000\n")}, `r1.csv:2:5: return[video]: window "2030Q1"`},
		{"return of paid search", []string{"fit", "--priors", wide("r2.csv", "return[search],lognormal90,0.5,3,,\n")}, "r2.csv:2:1: return[search]: search is not an upper-funnel column"},
		{"return range upside down", []string{"fit", "--priors", wide("r3.csv", "incremental[audio],lognormal90,300,100,2023Q2,\n")}, "r3.csv:2:4: incremental[audio]: lognormal90 takes the 5% and 95% quantiles, p1 < p2"},
		{"return beside its coefficient", []string{"fit", "--priors", wide("r4.csv", "delta[audio],halfnormal,1,,,\nreturn_direct[audio],lognormal,2,1,,\n")}, "r4.csv:3:1: return_direct[audio] sets the prior of delta[audio], which has its own prior on line 2"},
	} {
		args := append(append(c.args, "--out", out), inspectArgs(good, long...)[1:]...)
		code, stdout, stderr := runCmd(t, args...)
		if code != exitUsage || !strings.Contains(stderr, c.want) {
			t.Errorf("%s: exit %d, stderr %q; want 2 and %q", c.name, code, stderr, c.want)
		}
		if stdout != "" {
			t.Errorf("%s: stdout %q; want nothing (no stage fitted)", c.name, stdout)
		}
		if _, err := os.Stat(out); !os.IsNotExist(err) {
			t.Errorf("%s: %s exists", c.name, out)
		}
		if left := tempLeft(t, out); left != "" {
			t.Errorf("%s: %s left behind", c.name, left)
		}
	}
}
