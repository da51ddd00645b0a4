package main

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// TestForceKeepsInputs is the reproduction of the data-loss report:
//
//	mkdir p && cp sales.csv notes.txt p/ && spillway run --data p/sales.csv ... --out p --force
//
// must exit 2, say why, and leave both files. It also holds for a folder
// that spillway did write when the command reads a file from it (through
// --data, a spec file's "data", --priors, --fit), which the marker alone
// would let go.
func TestForceKeepsInputs(t *testing.T) {
	root := t.TempDir()
	p := filepath.Join(root, "p")
	sales := writeFileIn(t, p, "sales.csv", cmdFrame(60).csv())
	writeFileIn(t, p, "notes.txt", "do not lose me\n")
	args := append([]string{"run", "--out", p, "--force"}, inspectArgs(sales, quick...)[1:]...)
	code, stdout, stderr := runCmd(t, args...)
	if code != exitUsage || !strings.Contains(stderr, "--force would delete "+sales+", an input of this command") {
		t.Errorf("run --data p/sales.csv --out p --force: exit %d, stderr %q; want 2 and why", code, stderr)
	}
	if stdout != "" {
		t.Errorf("stdout %q, want nothing", stdout)
	}
	if names := dirNames(t, p); !slices.Equal(names, []string{"notes.txt", "sales.csv"}) {
		t.Errorf("p holds %v after the refused run", names)
	}
	if names := dirNames(t, root); !slices.Equal(names, []string{"p"}) {
		t.Errorf("the parent holds %v after the refused run", names)
	}

	// A folder spillway wrote, read by the command itself.
	sim := filepath.Join(root, "sim")
	if code, _, stderr := runCmd(t, "simulate", "--out", sim); code != 0 {
		t.Fatalf("simulate: exit %d: %s", code, stderr)
	}
	demo := []string{"--date", "week", "--upper", "video_spend,audio_spend", "--search", "search_spend",
		"--queries", "branded_queries", "--outcome", "conversions"}
	spec := writeFileIn(t, root, "spec.json", `{"data": "sim/data.csv"}`)
	priors := writeFileIn(t, sim+"x", "priors.csv", "parameter,family,p1,p2\ngamma,halfnormal,0.5,\n")
	for _, c := range []struct {
		name  string
		args  []string
		input string
	}{
		{"fit --data", append([]string{"fit", "--data", filepath.Join(sim, "data.csv"), "--out", sim, "--force"}, append(demo, quick...)...), filepath.Join(sim, "data.csv")},
		{"fit --spec naming the data", append([]string{"fit", "--spec", spec, "--out", sim, "--force"}, append(demo, quick...)...), filepath.Join(sim, "data.csv")},
		{"validate --fit", []string{"validate", "--fit", sim, "--out", sim, "--force"}, sim},
		{"fit --priors", append([]string{"fit", "--data", filepath.Join(sim, "data.csv"), "--priors", priors, "--out", sim + "x", "--force"}, append(demo, quick...)...), priors},
		{"validate --merge", []string{"validate", "--merge", filepath.Join(sim, "shard"), "--out", sim, "--force"}, filepath.Join(sim, "shard")},
	} {
		code, _, stderr := runCmd(t, c.args...)
		if code != exitUsage || !strings.Contains(stderr, "--force would delete "+c.input+", an input of this command") {
			t.Errorf("%s: exit %d, stderr %q; want 2 naming %s", c.name, code, stderr, c.input)
		}
	}
	if names := dirNames(t, sim); !slices.Equal(names, []string{".spillway.json", "data.csv", "truth.json"}) {
		t.Errorf("sim holds %v after the refused commands", names)
	}
}

// TestForceSaysWhatGoes: a forced replace of a run folder holding an
// earlier command's output folder (its validation, say) says plainly on
// stderr that it goes.
func TestForceSaysWhatGoes(t *testing.T) {
	root := t.TempDir()
	run := filepath.Join(root, "run")
	val := filepath.Join(run, "validation")
	for _, out := range []string{run, val} {
		if code, _, stderr := runCmd(t, "simulate", "--out", out); code != 0 {
			t.Fatalf("simulate --out %s: exit %d: %s", out, code, stderr)
		}
	}
	code, _, stderr := runCmd(t, "simulate", "--out", run, "--force")
	if code != 0 {
		t.Fatalf("simulate --force: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stderr, "--force replaces "+run+", and with it "+val) {
		t.Errorf("stderr %q does not say that %s goes", stderr, val)
	}
	if _, err := os.Stat(val); !os.IsNotExist(err) {
		t.Errorf("%s still there after the forced replace (err %v)", val, err)
	}
	// Without nested output folders, no note.
	if code, _, stderr := runCmd(t, "simulate", "--out", run, "--force"); code != 0 || stderr != "" {
		t.Errorf("second forced replace: exit %d, stderr %q; want 0 and nothing", code, stderr)
	}
}
