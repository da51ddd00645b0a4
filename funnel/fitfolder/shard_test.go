package fitfolder_test

import (
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/fitfolder"
	"spillway/funnel/fitfolder/fitfoldertest"
	"spillway/funnel/mcmc"
)

// shardOf writes a shard folder of chain 2 of 4 with the fixture's data,
// random draws and a lift-test copy into dir, and returns it.
func shardOf(t *testing.T, dir string) *fitfolder.ShardFolder {
	t.Helper()
	fitDir := filepath.Join(t.TempDir(), "fit")
	if _, err := fitfoldertest.Write(fitDir, fitfoldertest.Options{}); err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Open(fitDir)
	if err != nil {
		t.Fatal(err)
	}
	run := f.Run
	run.Command, run.Chains, run.Draws, run.Seed = "", 4, 12, 3
	m := fitfolder.Shard{Tool: "test", Command: "fit", Chain: 2, Run: run}
	rng := rand.New(rand.NewPCG(1, 2))
	var draws []*mcmc.Fit
	for k, name := range fitfolder.ShardStages {
		d := mat.NewDense(run.Draws, 2, nil)
		for i := range run.Draws {
			d.Set(i, 0, rng.NormFloat64())
			d.Set(i, 1, rng.ExpFloat64()/3)
		}
		fit := &mcmc.Fit{Names: []string{"a", "b"}, Chains: []mcmc.Chain{{Draws: d, Stats: mcmc.ChainStats{
			WarmupSeconds: 1.5, SamplingSeconds: 2.25, GradientEvaluations: 1000 + k, Divergences: k, TreeDepthHits: 1,
			StepSize: 0.1 / float64(k+1), EBFMI: 0.9, MeanLeapfrogs: 15, MeanAccept: 0.91, InvMetric: []float64{1, 0.3}}}}}
		draws = append(draws, fit)
		m.Stages = append(m.Stages, fitfolder.ShardStageOf(name, fit, 4.5))
	}
	s, err := fitfolder.NewShardFolder(m, f.Data, nil, []byte("channel,start,end,estimate,se\n"), draws)
	if err != nil {
		t.Fatal(err)
	}
	files, err := s.Files()
	if err != nil {
		t.Fatal(err)
	}
	for name, b := range files {
		p := filepath.Join(dir, filepath.FromSlash(name))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return s
}

// TestShardRoundTrip writes a shard folder and reads it back: the same
// manifest, draws and sampler statistics; Open refuses it as a fit.
func TestShardRoundTrip(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "chain2")
	s := shardOf(t, dir)
	got, err := fitfolder.ReadShard(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.Manifest, s.Manifest) {
		t.Errorf("manifest:\n%+v\nwant\n%+v", got.Manifest, s.Manifest)
	}
	for k := range fitfolder.ShardStages {
		g, w := got.Draws[k].Chains[0], s.Draws[k].Chains[0]
		if !mat.Equal(g.Draws, w.Draws) || !reflect.DeepEqual(g.Stats, w.Stats) {
			t.Errorf("stage %s: draws or statistics differ", fitfolder.ShardStages[k])
		}
	}
	if string(got.LiftTests) != string(s.LiftTests) || got.Priors != nil {
		t.Errorf("copies: lift tests %q, priors %q", got.LiftTests, got.Priors)
	}
	if !strings.Contains(s.Manifest.About, "chain 2 of 4 of a fit; not a fit folder") {
		t.Errorf("about: %q", s.Manifest.About)
	}
	if _, err := fitfolder.Open(dir); err == nil || !strings.Contains(err.Error(), "holds chain 2 of 4 of a fit, not a fit folder") {
		t.Errorf("Open on a shard: %v", err)
	}
}

// TestShardErrors: a shard folder that is not whole, or changed since it
// was written, is an error naming the file.
func TestShardErrors(t *testing.T) {
	for _, c := range []struct {
		name    string
		breakIt func(dir string) error
		want    string
	}{
		{"no manifest", func(d string) error { return os.Remove(filepath.Join(d, fitfolder.ShardFile)) }, "not the folder of one chain"},
		{"format", func(d string) error { return edit(d, fitfolder.ShardFile, fitfolder.ShardFormat, "other-1") }, `column format: "other-1"`},
		{"chain", func(d string) error { return edit(d, fitfolder.ShardFile, `"chain": 2`, `"chain": 5`) }, "chain 5 of 4"},
		{"data", func(d string) error { return edit(d, "data.csv", "2023-01-02,", "2023-01-02, ") }, "data.csv"},
		{"copy", func(d string) error { return edit(d, fitfolder.LiftTestsFile, "se", "sd") }, "the file changed after the chain was sampled"},
		{"draws", func(d string) error { return edit(d, "naive/draws.csv", "\n1,12,12,", "\n1,13,12,") }, filepath.Join("naive", "draws.csv")},
		{"rows", func(d string) error {
			b, err := os.ReadFile(filepath.Join(d, "outcome", "draws.csv"))
			if err != nil {
				return err
			}
			lines := strings.SplitAfter(string(b), "\n")
			return os.WriteFile(filepath.Join(d, "outcome", "draws.csv"), []byte(strings.Join(lines[:len(lines)-2], "")), 0o644)
		}, "expected one chain of 12"},
	} {
		dir := filepath.Join(t.TempDir(), "chain2")
		shardOf(t, dir)
		if err := c.breakIt(dir); err != nil {
			t.Fatal(err)
		}
		_, err := fitfolder.ReadShard(dir)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: got %v, want %q", c.name, err, c.want)
		}
	}
}

// TestSame names what differs between two shards' fits.
func TestSame(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "chain2")
	a := shardOf(t, dir).Manifest
	b := a
	b.Chain, b.Stages = 3, nil // the chain and its statistics may differ
	if why := fitfolder.Same(a, b); why != "" {
		t.Errorf("chains of one fit: %q", why)
	}
	for _, c := range []struct {
		change func(*fitfolder.Shard)
		want   string
	}{
		{func(s *fitfolder.Shard) { s.Run.Seed = 4 }, "the settings differ: seed 3 vs 4"},
		{func(s *fitfolder.Shard) { s.Run.Warmup = 7 }, "the settings differ: warmup"},
		{func(s *fitfolder.Shard) { s.Data = "x" }, "the data differ"},
		{func(s *fitfolder.Shard) { s.LiftTests = "" }, "the lift-test files differ"},
		{func(s *fitfolder.Shard) { s.Command = "run" }, "sampled by spillway fit, the other by spillway run"},
		{func(s *fitfolder.Shard) { s.Tool = "v2" }, "versions differ"},
		{func(s *fitfolder.Shard) { s.Review = &fitfolder.Review{Window: "2024Q1"} }, "run's options differ"},
	} {
		b := a
		b.Run.Spec.Upper = append([]string(nil), a.Run.Spec.Upper...)
		c.change(&b)
		if why := fitfolder.Same(a, b); !strings.Contains(why, c.want) {
			t.Errorf("got %q, want %q", why, c.want)
		}
	}
}

// edit replaces the first old by new in the file name of dir.
func edit(dir, name, old, new string) error {
	p := filepath.Join(dir, filepath.FromSlash(name))
	b, err := os.ReadFile(p)
	if err != nil {
		return err
	}
	if !strings.Contains(string(b), old) {
		return os.ErrNotExist
	}
	return os.WriteFile(p, []byte(strings.Replace(string(b), old, new, 1)), 0o644)
}
