package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestDegenerateFitNotComputable fits the demo with one chain of 20 + 20
// iterations, where the demand stage's chain never moves (every
// proposal diverges). Its diagnostics cannot be computed: the console
// says "not computable" (it used to print "max R-hat 0.000, min bulk ESS
// 1e300") and the verdict says not trustworthy and why, not only the
// divergences.
func TestDegenerateFitNotComputable(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "fit")
	code, stdout, errs := runCmd(t, "fit", "--data", "../../testdata/demo/data.csv", "--date", "week",
		"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
		"--outcome", "conversions", "--controls", "price", "--chains", "1", "--warmup", "20", "--draws", "20",
		"--quiet", "--out", out)
	if code != 0 {
		t.Fatalf("fit: exit %d\n%s", code, errs)
	}
	if strings.Contains(stdout, "1000000000") || strings.Contains(stdout, "R-hat 0.000") {
		t.Errorf("stdout prints impossible diagnostics:\n%s", stdout)
	}
	if !strings.Contains(stdout, "not computable") || !strings.Contains(stdout, "NOT TRUSTWORTHY") {
		t.Errorf("stdout should say not computable and not trustworthy:\n%s", stdout)
	}
	v, err := os.ReadFile(filepath.Join(out, "verdict.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(string(v), "not trustworthy\n") || !strings.Contains(string(v), "not computable") {
		t.Errorf("verdict.txt:\n%s", v)
	}
}
