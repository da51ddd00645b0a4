package validate

import (
	"bytes"
	"context"
	"encoding/csv"
	"math"
	"os"
	"runtime"
	"slices"
	"strings"
	"testing"

	"spillway/funnel/scenario"
)

// tinyPanelSweep plans a sweep of every kind of panel job on a simulated
// panel of 3 regions x 64 weeks (the last never running audio, the first
// ten times the others' size): the reference, 1 replicate, 1 origin of 2
// weeks and 1 left-out region, each fit 1 chain x (30 + 30): the fits need
// not converge for what is checked here.
func tinyPanelSweep(t *testing.T) *Sweep {
	t.Helper()
	sim, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: 3, Weeks: 64, Seed: 12, Dark: 1, Big: true})
	if err != nil {
		t.Fatal(err)
	}
	ds := sim.Data
	in := Input{Series: ds.National(), Spec: ds.Spec, Panel: ds, Tool: "test"}
	sw, err := New(in, Settings{Replicates: 1, Origins: 1, Horizon: 2, LeaveOut: []string{}, LeaveOutRegions: []string{"R02"},
		Seeds: NoSeeds, Chains: 1, Warmup: 30, Draws: 30, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	return sw
}

// TestPanelSweep runs the tiny panel sweep (with SPILLWAY_LONG=1 also as
// two shards) and checks that:
//   - the merged folder is byte-identical to the whole run's (LONG only);
//   - every additive effect's truth summed over the regions is the sum's
//     truth in every replicate (the sum is of the regions simulated, not
//     of something else), and the dark region has no audio effect;
//   - every holdout week's summed forecast mean is the sum of the
//     regions' means and its actual the sum of theirs;
//   - the refit without a region records no effect of it and measures
//     the sum's move against the reference over the regions kept;
//   - validation_by_region.csv holds validation.csv's metrics for every
//     region.
func TestPanelSweep(t *testing.T) {
	if testing.Short() {
		t.Skip("4 tiny panel fits")
	}
	sw := tinyPanelSweep(t)
	jobs := sw.Jobs()
	labels := make([]string, len(jobs))
	for i, j := range jobs {
		labels[i] = j.Label
	}
	wantLabels := []string{"reference fit", "replicate 1", "origin ORIGIN", "without region R02"}
	wantLabels[2] = "origin " + sw.in.Series.Weeks[62].Format("2006-01-02")
	if !slices.Equal(labels, wantLabels) {
		t.Fatalf("jobs %q, want %q", labels, wantLabels)
	}
	whole, err := sw.Run(context.Background(), Shard{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	want, rep, err := Files(whole)
	if err != nil {
		t.Fatal(err)
	}
	if os.Getenv("SPILLWAY_LONG") == "1" {
		prev := runtime.GOMAXPROCS(1)
		var parts []*Results
		for _, i := range []int{2, 1} {
			r, err := sw.Run(context.Background(), Shard{I: i, N: 2}, nil)
			if err != nil {
				t.Fatal(err)
			}
			parts = append(parts, r)
		}
		runtime.GOMAXPROCS(prev)
		merged, err := Merge(parts, []string{"s2", "s1"})
		if err != nil {
			t.Fatal(err)
		}
		got, _, err := Files(merged)
		if err != nil {
			t.Fatal(err)
		}
		for name, b := range want {
			if !bytes.Equal(b, got[name]) {
				t.Errorf("%s differs between the whole run and the merged shards", name)
			}
		}
	}
	if _, ok := want[RegionTableFile]; !ok {
		t.Fatalf("no %s among %d files", RegionTableFile, len(want))
	}

	type key struct {
		job                         int
		kind, name, path, win, stat string
	}
	val := map[key]map[string]float64{} // by region ("" the sum)
	for _, r := range whole.Records {
		k := key{r.Job, r.Kind, r.Name, r.Path, r.Window, r.Stat}
		if val[k] == nil {
			val[k] = map[string]float64{}
		}
		val[k][r.Region] = r.Value
	}
	regions := whole.Manifest.Regions
	if !slices.Equal(regions, []string{"R01", "R02", "R03"}) {
		t.Fatalf("manifest regions %q", regions)
	}
	nTruth, nFc, nShift := 0, 0, 0
	for k, byReg := range val {
		sum, ok := byReg[""]
		additive := k.path == "via_search" || k.path == "direct" || k.path == "total"
		switch {
		case k.kind == "effect" && k.stat == "truth" && additive && ok:
			if _, dark := byReg["R03"]; dark && k.name == "audio_spend" {
				t.Errorf("job %d: the region that never runs audio has an audio effect", k.job)
			}
			s := 0.0
			for _, g := range regions {
				s += byReg[g]
			}
			nTruth++
			if math.Abs(s-sum) > 1e-9*math.Max(1, math.Abs(sum)) {
				t.Errorf("job %d %s %s %s: regions' truths sum to %g, the sum's truth is %g", k.job, k.name, k.path, k.win, s, sum)
			}
		case k.kind == "forecast" && (k.stat == "mean" || k.stat == "actual"):
			s := 0.0
			for _, g := range regions {
				s += byReg[g]
			}
			nFc++
			if math.Abs(s-sum) > 1e-9*math.Abs(sum) {
				t.Errorf("job %d %s %s %s: regions sum to %g, the sum is %g", k.job, k.name, k.win, k.stat, s, sum)
			}
		case k.stat == "shift_sd":
			nShift++
			// a share of a tiny unconverged fit may be undefined (a draw
			// whose apparent effect sums to zero); the sums must not be
			if _, has := byReg["R02"]; has || !(sum >= 0) && additive {
				t.Errorf("job %d %s %s: shift %v", k.job, k.name, k.path, byReg)
			}
		}
		if k.job == 3 && k.kind == "effect" {
			if _, has := byReg["R02"]; has {
				t.Errorf("the refit without R02 records its %s %s", k.name, k.path)
			}
		}
	}
	// 1 replicate x the windows x (2 channels x 3 paths); 2 weeks x 2 stages x 2 numbers; 2 channels x 4 paths and a borrowed share
	if W := len(sw.windows); nTruth != W*6 || nFc != 2*2*2 || nShift != 9 {
		t.Errorf("%d summed truths, %d summed forecasts, %d shifts; want %d, 8 and 9", nTruth, nFc, nShift, W*6)
	}

	rows, err := csv.NewReader(bytes.NewReader(want[RegionTableFile])).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if got := strings.Join(rows[0], ","); got != "region,check,effect,channel,metric,value" {
		t.Fatalf("%s header %s", RegionTableFile, got)
	}
	perRegion := map[string]int{}
	for _, r := range rows[1:] {
		perRegion[r[0]+" "+r[1]]++
	}
	for _, g := range regions {
		for _, c := range []string{Recovery, Holdout, Stability} {
			if perRegion[g+" "+c] == 0 {
				t.Errorf("%s has no %s rows of region %s", RegionTableFile, c, g)
			}
		}
	}
	if len(rep.Regions) != 3 || !strings.Contains(rep.Text(), "By region") {
		t.Errorf("verdicts do not speak of the regions:\n%s", rep.Text())
	}
	t.Logf("\n%s", rep.Text())
}
