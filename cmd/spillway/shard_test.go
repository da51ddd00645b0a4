package main

import (
	"bytes"
	"encoding/json"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"regexp"
	"slices"
	"strings"
	"syscall"
	"testing"
	"time"

	"spillway/funnel/fitfolder"
)

// TestRunChainsMergeToTheSameBytes runs the demo once with four chains and
// once as four one-chain jobs (--chain I/4) merged with run --merge into
// the same --out, and compares the two folders file by file: every file is
// byte-identical but for the recorded timings (each stage's wall, warm-up
// and sampling seconds in stats.json, and the wall seconds in the
// report's table of stages). Then it checks the shard folders and the
// merge's refusals.
func TestRunChainsMergeToTheSameBytes(t *testing.T) {
	if testing.Short() {
		t.Skip("five short runs of the demo; skipped with -short")
	}
	dir := t.TempDir()
	out := filepath.Join(dir, "out")
	settings := []string{"--seed", "3", "--warmup", "100", "--draws", "100", "--quiet"}
	if code, _, errs := runCmd(t, append([]string{"run", "--chains", "4", "--out", out}, settings...)...); code != 0 {
		t.Fatalf("run: exit %d\n%s", code, errs)
	}
	single := filepath.Join(dir, "single")
	if err := os.Rename(out, single); err != nil {
		t.Fatal(err)
	}
	var shards []string
	for _, c := range []string{"1", "2", "3", "4"} {
		d := filepath.Join(dir, "chain"+c)
		code, stdout, errs := runCmd(t, append([]string{"run", "--chain", c + "/4", "--out", d}, settings...)...)
		if code != 0 || !strings.Contains(stdout, "chain "+c+"/4 written to "+d) || !strings.Contains(stdout, "spillway run --merge") {
			t.Fatalf("run --chain %s/4: exit %d\n%s\n%s", c, code, stdout, errs)
		}
		shards = append(shards, d)
	}
	// a shard holds what the merge needs and nothing that reads as a fit
	got := files(t, shards[1])
	if want := []string{".spillway.json", "baseline/draws.csv", "data.csv", "demand/draws.csv", "naive/draws.csv", "outcome/draws.csv", "shard.json"}; !slices.Equal(got, want) {
		t.Errorf("shard folder holds %v, want %v", got, want)
	}
	code, _, errs := runCmd(t, "split", "--fit", shards[1])
	if code != exitUsage || !strings.Contains(errs, "chain 2 of 4 of a fit, not a fit folder") || !strings.Contains(errs, "spillway run --merge") {
		t.Errorf("split on a shard: exit %d, %s", code, errs)
	}

	code, stdout, errs := runCmd(t, "run", "--merge", "--out", out, shards[2], shards[0], shards[3], shards[1])
	if code != 0 || !strings.Contains(stdout, "report: "+filepath.Join(out, "report.html")) {
		t.Fatalf("run --merge: exit %d\n%s\n%s", code, stdout, errs)
	}
	compareFolders(t, single, out)

	// refusals, each before anything is written
	bad := filepath.Join(dir, "chain4-other")
	copyFolder(t, shards[3], bad)
	editFile(t, filepath.Join(bad, fitfolder.ShardFile), `"seed": 3,`, `"seed": 4,`)
	tampered := filepath.Join(dir, "chain4-tampered")
	copyFolder(t, shards[3], tampered)
	editFile(t, filepath.Join(tampered, "data.csv"), "180085.18", "180085.19")
	for i, c := range []struct {
		args []string
		want string
	}{
		{[]string{"run", "--merge", shards[0], shards[1], shards[2]}, "1 of 4 chains are missing: chain 4"},
		{[]string{"run", "--merge", shards[0], shards[1], shards[2], shards[3], shards[1]}, "chain 2 of 4 is in both"},
		{[]string{"run", "--merge", "--seed", "3", shards[0], shards[1], shards[2], shards[3]}, "the shards already fix --seed"},
		{[]string{"run", "--merge", shards[0], shards[1], shards[2], bad}, "chains of different fits (the settings differ: seed 3 vs 4)"},
		{[]string{"run", "--merge", shards[0], shards[1], shards[2], tampered}, "the file changed after the chain was sampled"},
		{[]string{"fit", "--merge", shards[0], shards[1], shards[2], shards[3]}, "merge it with spillway run --merge"},
		{[]string{"run", "--merge", shards[0], single}, "not the folder of one chain"},
		{[]string{"run", "--merge"}, "--merge needs the shard folders"},
		{append([]string{"run", "--chain", "5/4"}, settings...), `--chain "5/4"`},
		{append([]string{"run", "--chain", "2/4", "--chains", "3"}, settings...), "--chains is 3"},
	} {
		o := filepath.Join(dir, "refused", strings.Repeat("x", i+1))
		code, _, errs := runCmd(t, append(c.args, "--out", o)...)
		if code != exitUsage || !strings.Contains(errs, c.want) {
			t.Errorf("%v: exit %d, stderr %q; want 2 and %q", c.args[:3], code, errs, c.want)
		}
		if _, err := os.Stat(o); err == nil {
			t.Errorf("%v: the refused command left %s behind", c.args[:3], o)
		}
	}
}

// TestFitChainsWithLiftsMerge fits two chains with a priors file and a lift
// test of the outcome (so the demand and outcome stages are one joint
// target), whole and as two jobs merged with fit --merge, and requires the
// same folder but for timings.
func TestFitChainsWithLiftsMerge(t *testing.T) {
	if testing.Short() {
		t.Skip("three short fits; skipped with -short")
	}
	dir := t.TempDir()
	priors := filepath.Join(dir, "priors.csv")
	tests := filepath.Join(dir, "tests.csv")
	if err := os.WriteFile(priors, []byte("parameter,family,p1,p2\ngamma,halfnormal,0.3,\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(tests, []byte("channel,start,end,estimate,se\nvideo_spend,2023-04-10,2023-05-01,800,150\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	args := func(extra ...string) []string {
		return append([]string{"fit", "--data", "../../testdata/demo/data.csv", "--date", "week",
			"--upper", "video_spend,audio_spend", "--search", "search_spend", "--queries", "branded_queries",
			"--outcome", "conversions", "--controls", "price", "--priors", priors, "--lifts", tests,
			"--seed", "5", "--warmup", "40", "--draws", "20", "--quiet"}, extra...)
	}
	out := filepath.Join(dir, "out")
	if code, _, errs := runCmd(t, args("--chains", "2", "--out", out)...); code != 0 {
		t.Fatalf("fit: exit %d\n%s", code, errs)
	}
	single := filepath.Join(dir, "single")
	if err := os.Rename(out, single); err != nil {
		t.Fatal(err)
	}
	var shards []string
	for _, c := range []string{"2", "1"} {
		d := filepath.Join(dir, "chain"+c)
		if code, stdout, errs := runCmd(t, args("--chain", c+"/2", "--chains", "2", "--out", d)...); code != 0 {
			t.Fatalf("fit --chain %s/2: exit %d\n%s\n%s", c, code, stdout, errs)
		}
		shards = append(shards, d)
	}
	for _, f := range []string{"priors.csv", fitfolder.LiftTestsFile} {
		if _, err := os.Stat(filepath.Join(shards[0], f)); err != nil {
			t.Errorf("the shard lacks its copy %s", f)
		}
	}
	code, stdout, errs := runCmd(t, append([]string{"fit", "--merge", "--out", out}, shards...)...)
	if code != 0 || !strings.Contains(stdout, "fit written to "+out) || !strings.Contains(stdout, "lift test") {
		t.Fatalf("fit --merge: exit %d\n%s\n%s", code, stdout, errs)
	}
	compareFolders(t, single, out)
	if _, err := os.Stat(filepath.Join(out, "lifts.csv")); err != nil {
		t.Error("the merged fit lacks lifts.csv")
	}
	// the merged folder is spillway's: --force replaces it
	if code, _, errs := runCmd(t, append([]string{"fit", "--merge", "--force", "--out", out}, shards...)...); code != 0 {
		t.Errorf("fit --merge --force over a merged folder: exit %d\n%s", code, errs)
	}
}

// stageSeconds is a stage's row in the report's table of stages, its last
// cell the wall seconds.
var stageSeconds = regexp.MustCompile(`(<tr[^>]*><td>(?:demand|outcome|naive)</td>(?:<td class="num">[^<]*</td>){5}<td class="num">)[0-9.]+(</td></tr>)`)

// compareFolders requires the same files in a and b, byte for byte but for
// the recorded timings.
func compareFolders(t *testing.T, a, b string) {
	t.Helper()
	fa, fb := files(t, a), files(t, b)
	if !slices.Equal(fa, fb) {
		t.Fatalf("files differ:\n%v\n%v", fa, fb)
	}
	timed := 0
	for _, name := range fa {
		x, _ := os.ReadFile(filepath.Join(a, name))
		y, _ := os.ReadFile(filepath.Join(b, name))
		switch {
		case strings.HasSuffix(name, "/stats.json"):
			sx, sy := untimed(t, x), untimed(t, y)
			if !reflect.DeepEqual(sx, sy) {
				t.Errorf("%s differs beyond timings:\n%+v\n%+v", name, sx, sy)
			}
			timed++
		case name == "report.html":
			x = stageSeconds.ReplaceAll(x, []byte("${1}S${2}"))
			y = stageSeconds.ReplaceAll(y, []byte("${1}S${2}"))
			if n := bytes.Count(x, []byte(`">S</td></tr>`)); n != 3 {
				t.Errorf("report.html: %d stage rows with seconds, want 3", n)
			}
			fallthrough
		default:
			if !bytes.Equal(x, y) {
				t.Errorf("%s differs", name)
			}
		}
	}
	if timed != 3 {
		t.Errorf("%d stats.json files compared, want 3", timed)
	}
}

// untimed is a stats.json without its timings.
func untimed(t *testing.T, b []byte) fitfolder.Stats {
	t.Helper()
	var s fitfolder.Stats
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	if len(s.WarmupSeconds) == 0 || len(s.SamplingSeconds) != len(s.WarmupSeconds) {
		t.Errorf("stats.json without timings: %+v", s)
	}
	s.WallSeconds, s.WarmupSeconds, s.SamplingSeconds = 0, nil, nil
	return s
}

// files lists the files under dir, slash-separated and sorted.
func files(t *testing.T, dir string) []string {
	t.Helper()
	var out []string
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		out = append(out, filepath.ToSlash(rel))
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	slices.Sort(out)
	return out
}

// copyFolder copies the files of src into dst.
func copyFolder(t *testing.T, src, dst string) {
	t.Helper()
	for _, name := range files(t, src) {
		b, err := os.ReadFile(filepath.Join(src, name))
		if err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(dst, filepath.FromSlash(name))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// editFile replaces the first old in the file at path by new.
func editFile(t *testing.T, path, old, new string) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(b, []byte(old)) {
		t.Fatalf("%s lacks %q", path, old)
	}
	if err := os.WriteFile(path, bytes.Replace(b, []byte(old), []byte(new), 1), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestSignalLeavesNoShard stops a one-chain job while it samples: it exits
// with 128 + SIGTERM and leaves neither the shard folder nor its temporary
// folder, like any other run.
func TestSignalLeavesNoShard(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the command; skipped with -short")
	}
	bin := buildSpillway(t)
	out := filepath.Join(t.TempDir(), "chain2")
	c := exec.Command(bin, "run", "--chain", "2/2", "--warmup", "5000", "--draws", "5000", "--quiet", "--out", out)
	var stderr strings.Builder
	c.Stderr = &stderr
	if err := c.Start(); err != nil {
		t.Fatal(err)
	}
	waitTemp(t, out)
	time.Sleep(200 * time.Millisecond)
	if err := c.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	if code := exitOf(t, c); code != 128+int(syscall.SIGTERM) {
		t.Errorf("exit %d, want %d; stderr:\n%s", code, 128+int(syscall.SIGTERM), stderr.String())
	}
	if left := tempLeft(t, out); left != "" {
		t.Errorf("%s left behind", left)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("the shard folder exists after the signal (err %v)", err)
	}
}
