package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spillway/funnel/fitfolder"
)

// TestNationalNeedsRegions: --national on data without a region column is
// a usage error, before any sampling.
func TestNationalNeedsRegions(t *testing.T) {
	path := writeFile(t, "weekly.csv", cmdFrame(60).csv())
	out := filepath.Join(t.TempDir(), "fit")
	args := append(inspectArgs(path, "--national", "--out", out), quick...)
	args[0] = "fit"
	code, stdout, stderr := runCmd(t, args...)
	if code != exitUsage || !strings.Contains(stderr, "--national") || !strings.Contains(stderr, "--region") {
		t.Errorf("fit --national on national data: exit %d, stderr %q; want 2 naming --national and --region", code, stderr)
	}
	if stdout != "" {
		t.Errorf("stdout %q", stdout)
	}
	if _, err := os.Stat(out); err == nil {
		t.Error("the output folder was written")
	}
}

// TestNationalFit fits regional data with --national and without: with it
// the national sum (the national model's parameters), without it the
// region panel (the same names first, then each region's intercept and
// coefficients and their spreads); --national is recorded in spec.json and
// in the command that reruns the fit.
func TestNationalFit(t *testing.T) {
	if testing.Short() {
		t.Skip("two short fits; skipped with -short")
	}
	path := writeFile(t, "regions.csv", cmdRegions(60).csv())
	// the plumbing only: the shortest chains the flags allow
	base := append(inspectArgs(path, regionFlags...), "--chains", "1", "--warmup", "20", "--draws", "10", "--quiet")
	base[0] = "fit"
	note := map[bool]string{true: "2 regions are fitted as their national sum (--national)", false: "2 regions are fitted as a region panel"}
	header := map[bool]string{}
	for _, national := range []bool{true, false} {
		dir := filepath.Join(t.TempDir(), "fit")
		args := append(append([]string{}, base...), "--out", dir)
		if national {
			args = append(args, "--national")
		}
		code, _, stderr := runCmd(t, args...)
		if code != 0 {
			t.Fatalf("fit (national %v): exit %d: %s", national, code, stderr)
		}
		if !strings.Contains(stderr, note[national]) {
			t.Errorf("fit (national %v): stderr lacks %q: %s", national, note[national], stderr)
		}
		f, err := fitfolder.Open(dir)
		if err != nil {
			t.Fatal(err)
		}
		if f.Run.National != national || strings.Contains(f.Run.Command, "--national") != national {
			t.Errorf("spec.json (national %v): national %v, command %q", national, f.Run.National, f.Run.Command)
		}
		b, err := os.ReadFile(filepath.Join(dir, "outcome", "draws.csv"))
		if err != nil {
			t.Fatal(err)
		}
		header[national], _, _ = strings.Cut(string(b), "\n")
	}
	if !strings.HasPrefix(header[false], header[true]+",tau_mu_y,mu_y[north],mu_y[south],tau_gamma,gamma[north],gamma[south]") {
		t.Errorf("the panel's outcome parameters do not extend the national ones with the regions':\n%s\n%s", header[true], header[false])
	}
}

// TestNationalHelp: fit and run document --national.
func TestNationalHelp(t *testing.T) {
	for _, c := range []string{"fit", "run"} {
		code, stdout, _ := runCmd(t, "help", c)
		if code != 0 || !strings.Contains(stdout, "--national") || !strings.Contains(stdout, "national sum") {
			t.Errorf("help %s: exit %d, no --national:\n%s", c, code, stdout)
		}
	}
}
