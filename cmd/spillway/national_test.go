package main

import (
	"bytes"
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

// TestNationalFit fits regional data with --national and without: both
// fit the national sum today, so the draws are byte-identical; --national
// is recorded in spec.json and in the command that reruns the fit.
func TestNationalFit(t *testing.T) {
	if testing.Short() {
		t.Skip("two short fits; skipped with -short")
	}
	path := writeFile(t, "regions.csv", cmdRegions(60).csv())
	// the plumbing only: the shortest chains the flags allow
	base := append(inspectArgs(path, regionFlags...), "--chains", "1", "--warmup", "20", "--draws", "10", "--quiet")
	base[0] = "fit"
	dirs := map[bool]string{}
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
		if !strings.Contains(stderr, "2 regions are fitted as their national sum") {
			t.Errorf("fit (national %v): stderr lacks the note: %s", national, stderr)
		}
		dirs[national] = dir
		f, err := fitfolder.Open(dir)
		if err != nil {
			t.Fatal(err)
		}
		if f.Run.National != national || strings.Contains(f.Run.Command, "--national") != national {
			t.Errorf("spec.json (national %v): national %v, command %q", national, f.Run.National, f.Run.Command)
		}
	}
	for _, st := range fitfolder.StageNames {
		a, _ := os.ReadFile(filepath.Join(dirs[true], st, "draws.csv"))
		b, _ := os.ReadFile(filepath.Join(dirs[false], st, "draws.csv"))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s/draws.csv differs between --national and the default (%d and %d bytes)", st, len(a), len(b))
		}
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
