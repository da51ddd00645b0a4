package validate

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"testing"

	"spillway/funnel/scenario"
)

// tinySweep plans a sweep of every kind of job on 68 weeks of the demo
// scenario: the reference, 2 replicates from its posterior, 1 origin, 1
// left-out quarter and 1 extra seed, each fit 2 chains x (60 + 60): the fits need not converge to be compared.
func tinySweep(t *testing.T) *Sweep {
	t.Helper()
	sc, err := scenario.Named("demo", 4, 68, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := sc.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	in := Input{Series: res.Data.National(), Spec: res.Data.Spec, Tool: "test"}
	sw, err := New(in, Settings{Replicates: 2, Origins: 1, LeaveOut: []string{"2023Q3"}, Seeds: 1,
		Chains: 2, Warmup: 60, Draws: 60, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	return sw
}

// TestMergeEqualsWholeRun runs a tiny sweep whole (with the default
// GOMAXPROCS) and as three shards (with GOMAXPROCS 1, given in a shuffled
// order), and checks that the merged folder is byte-identical to the whole
// run's, and that merge refuses incomplete, repeated and foreign shards.
func TestMergeEqualsWholeRun(t *testing.T) {
	sw := tinySweep(t)
	if got := len(sw.Jobs()); got != 6 {
		t.Fatalf("%d jobs, want 6 (reference, 2 replicates, 1 origin, 1 quarter, 1 seed)", got)
	}
	whole, err := sw.Run(context.Background(), Shard{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	want, wantRep, err := Files(whole)
	if err != nil {
		t.Fatal(err)
	}
	prev := runtime.GOMAXPROCS(1)
	var parts []*Results
	var names []string
	for _, i := range []int{3, 1, 2} {
		r, err := sw.Run(context.Background(), Shard{I: i, N: 3}, nil)
		if err != nil {
			runtime.GOMAXPROCS(prev)
			t.Fatal(err)
		}
		// through the files a shard folder holds
		f, err := ShardFiles(r)
		if err != nil {
			t.Fatal(err)
		}
		back, err := ReadResults(bytes.NewReader(f[ManifestFile]), bytes.NewReader(f[JobsFile]), "shard")
		if err != nil {
			t.Fatal(err)
		}
		parts = append(parts, back)
		names = append(names, r.Manifest.Shard)
	}
	runtime.GOMAXPROCS(prev)
	merged, err := Merge(parts, names)
	if err != nil {
		t.Fatal(err)
	}
	got, gotRep, err := Files(merged)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) {
		t.Fatalf("merged folder has %d files, the whole run %d", len(got), len(want))
	}
	for name, b := range want {
		if !bytes.Equal(got[name], b) {
			t.Errorf("%s differs between the merged shards and the whole run", name)
		}
	}
	// validation.png is drawn from the report alone (plots/validation)
	if g, w := fmt.Sprintf("%+v", gotRep), fmt.Sprintf("%+v", wantRep); g != w {
		t.Errorf("the report (and so validation.png) differs between the merged shards and the whole run:\n%s\n%s", g, w)
	}
	if !strings.Contains(string(want[TableFile]), "check,effect,channel,metric,value\n") {
		t.Errorf("validation.csv header: %q", strings.SplitN(string(want[TableFile]), "\n", 2)[0])
	}

	// incomplete, repeated and foreign shards are refused
	if _, err := Merge(parts[:2], names[:2]); err == nil || !strings.Contains(err.Error(), "missing") {
		t.Errorf("merge of 2 of 3 shards: err %v, want jobs missing", err)
	}
	if _, err := Merge([]*Results{parts[0], parts[1], parts[2], parts[1]}, []string{"a", "b", "c", "d"}); err == nil || !strings.Contains(err.Error(), "in both") {
		t.Errorf("merge with a shard twice: err %v, want a repeated job", err)
	}
	other := *parts[1]
	other.Manifest.Settings.Draws++
	if _, err := Merge([]*Results{parts[0], &other, parts[2]}, []string{"a", "b", "c"}); err == nil || !strings.Contains(err.Error(), "different sweeps") {
		t.Errorf("merge with a shard of other settings: err %v, want different sweeps", err)
	}
	if _, err := Aggregate(parts[0]); err == nil {
		t.Error("aggregating one shard: no error, want one")
	}
}

func TestPlan(t *testing.T) {
	in, _ := testScenario(t, 1) // 104 weeks from 2023-01-02: quarters 2023Q1 .. 2024Q4
	sw, err := New(in, Settings{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	jobs := sw.Jobs()
	count := map[string]int{}
	for i, j := range jobs {
		if j.Index != i {
			t.Fatalf("job %d has index %d", i, j.Index)
		}
		count[j.Check]++
	}
	// 1 reference + 20 replicates + 4 origins + 8 quarters + 2 seeds
	want := map[string]int{Reference: 1, Recovery: 20, Holdout: 4, Stability: 10}
	for k, v := range want {
		if count[k] != v {
			t.Errorf("%d %s jobs, want %d", count[k], k, v)
		}
	}
	if jobs[0].Seed != 3 || jobs[1].Seed != JobSeed(3, 1) || jobs[1].Seed == jobs[2].Seed {
		t.Errorf("seeds %d %d %d: want the sweep's seed for the reference and distinct derived seeds", jobs[0].Seed, jobs[1].Seed, jobs[2].Seed)
	}
	// origins: the last 4 blocks of 8 weeks
	var origins []int
	for _, j := range jobs {
		if j.Check == Holdout {
			origins = append(origins, j.Origin)
		}
	}
	if len(origins) != 4 || origins[0] != 72 || origins[3] != 96 {
		t.Errorf("origins %v, want 72, 80, 88, 96", origins)
	}
	// user errors
	for _, c := range []struct {
		s    Settings
		want string
	}{
		{Settings{Origins: 6}, "need at least 108 weeks"},
		{Settings{Checks: []string{"stability"}, LeaveOut: []string{"2022Q1"}}, "not in the data"},
		{Settings{Checks: []string{"speed"}}, "unknown check"},
		{Settings{Horizon: 60}, "horizon"},
	} {
		if _, err := New(in, c.s); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: err %v, want %q", c.s, err, c.want)
		}
	}
	for _, c := range []struct {
		s    string
		want Shard
		ok   bool
	}{{"3/8", Shard{3, 8}, true}, {"0/8", Shard{}, false}, {"9/8", Shard{}, false}, {"1-8", Shard{}, false}} {
		got, err := ParseShard(c.s)
		if (err == nil) != c.ok || got != c.want {
			t.Errorf("ParseShard(%q) = %v, %v", c.s, got, err)
		}
	}
	// shards partition the jobs
	seen := map[int]int{}
	for i := 1; i <= 4; i++ {
		for _, j := range jobs {
			if (Shard{i, 4}).owns(j.Index) {
				seen[j.Index]++
			}
		}
	}
	for _, j := range jobs {
		if seen[j.Index] != 1 {
			t.Errorf("job %d is in %d of 4 shards", j.Index, seen[j.Index])
		}
	}
}

// TestSimulateTruth checks the replicate generator on known parameters:
// with the noise switched off the simulated series is the model's own
// prediction, and the true effects computed on the replicate equal those
// the scenario computes on its data (both by mediation.Split on a single
// draw, in raw outcome units, so the rescaling to the replicate's units
// must leave them unchanged).
func TestSimulateTruth(t *testing.T) {
	sc, err := scenario.Named("demo", 2, 104, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := sc.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	in := Input{Series: res.Data.National(), Spec: res.Data.Spec, Truth: &Truth{Demand: res.Demand, Outcome: res.Outcome}}
	sw, err := New(in, Settings{Checks: []string{Recovery}, Replicates: 1})
	if err != nil {
		t.Fatal(err)
	}
	v1, v2, _ := sw.gen.draw(1, nil, nil)
	z1, z2 := append([]float64(nil), v1...), append([]float64(nil), v2...)
	z1[sw.stages[0].Layout().SigmaSlot()], z2[sw.stages[1].Layout().SigmaSlot()] = 1e-300, 1e-300 // no noise
	rep, err := sw.simulate(sw.gen, z1, z2, newRand(1))
	if err != nil {
		t.Fatal(err)
	}
	m := sw.stages[0].Predict(nil, v1)
	for i, q := range rep.series.Queries {
		if want := m[i] * sw.base.QueriesScale; abs(q-want) > 1e-9*want {
			t.Fatalf("week %d: simulated queries %v, want the prediction %v", i, q, want)
		}
	}
	truth, err := sc.Truth(res)
	if err != nil {
		t.Fatal(err)
	}
	// with noise, the replicate's truth keeps the scenario's effects
	rep, err = sw.simulate(sw.gen, v1, v2, newRand(2))
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]float64{}
	for _, e := range rep.effects.Effects {
		got[e.Channel+"/"+e.Path+"/"+e.Window] = e.Draws[0]
	}
	n := 0
	for _, e := range truth.Effects {
		if e.Path == "mediated_share" {
			continue
		}
		g, ok := got[e.Channel+"/"+e.Path+"/"+e.Window]
		if !ok {
			t.Fatalf("no replicate truth for %s %s %s", e.Channel, e.Path, e.Window)
		}
		if abs(g-e.Value) > 1e-9*abs(e.Value)+1e-9 {
			t.Errorf("%s %s %s: replicate truth %v, scenario truth %v", e.Channel, e.Path, e.Window, g, e.Value)
		}
		n++
	}
	if n < 20 {
		t.Errorf("only %d effects compared", n)
	}
}

func newRand(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 0)) }

func abs(x float64) float64 { return math.Abs(x) }
