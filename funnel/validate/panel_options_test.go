package validate

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"sync"
	"testing"

	"spillway/funnel/forward"
	"spillway/funnel/lifts"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/funnel/stat"
	"spillway/funnel/window"
)

// optionsPanel plans a sweep of a simulated panel of 3 regions x 64 weeks
// (the last never running audio, the first ten times the others' size)
// with video's effectiveness drifting (shape "" or model.DriftJumps) and
// three lift tests: video's outcome in R02 over weeks 14-21, audio's
// queries over the whole panel in weeks 30-37 (R03, which runs no audio,
// left out of it) and video's queries in R02 over weeks 50-55. The jobs:
// the reference, 1 replicate, 1 origin of 2 weeks, the quarters holding
// weeks 14-21 and 30-37 left out and R02 left out, each fit 1 chain x
// (30 + 30). It returns the sweep and the two quarters.
func optionsPanel(t *testing.T, shape string) (*Sweep, [2]window.Window) {
	t.Helper()
	sim, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: 3, Weeks: 64, Seed: 12, Dark: 1, Big: true})
	if err != nil {
		t.Fatal(err)
	}
	ds := sim.Data
	w := func(i int) string { return ds.Weeks[i].Format("2006-01-02") }
	file := "channel,start,end,estimate,se,metric,region\n" +
		"video_spend," + w(14) + "," + w(21) + ",400,100,outcome,R02\n" +
		"audio_spend," + w(30) + "," + w(37) + ",3000,1000,queries,\n" +
		"video_spend," + w(50) + "," + w(55) + ",2000,800,queries,R02\n"
	tests, err := lifts.ReadPanel(strings.NewReader(file), "lifts.csv", ds)
	if err != nil {
		t.Fatal(err)
	}
	var quarters [2]window.Window
	for _, q := range window.Quarters(ds.Weeks)[1:] {
		for k, wk := range [2][2]int{{14, 21}, {30, 37}} {
			if q.From <= wk[0] && wk[1] <= q.To {
				quarters[k] = q
			}
		}
	}
	if quarters[0].Name == "" || quarters[1].Name == "" {
		t.Fatalf("no quarters hold weeks 14-21 and 30-37: %+v", quarters)
	}
	o := model.Options{Drift: map[string]bool{"video_spend": true}, DriftShape: shape}
	in := Input{Series: ds.National(), Spec: ds.Spec, Panel: ds, Options: o, Lifts: tests, Tool: "test"}
	sw, err := New(in, Settings{Replicates: 1, Origins: 1, Horizon: 2, LeaveOut: []string{quarters[0].Name, quarters[1].Name}, LeaveOutRegions: []string{"R02"},
		Seeds: NoSeeds, Chains: 1, Warmup: 30, Draws: 30, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	return sw, quarters
}

// TestPanelSimulatedTests checks a panel replicate's simulated lift tests
// against the true lifts computed here apart from the likelihood term the
// sweep uses: region by region with the forward simulator (the data's
// spend against the spend with the channel's window zeroed in the test's
// region, or in every region, the metric's expected value summed over the
// window in raw units), on a draw whose video multiplier is far from 1 in
// the tests' windows, so a truth without the drift would be off. The
// estimates must be those lifts plus Normal(0, se) noise. It also checks
// which tests a refit leaving out a region takes.
func TestPanelSimulatedTests(t *testing.T) {
	sw, _ := optionsPanel(t, "")
	p := sw.pan
	tests := sw.in.Lifts
	if got := sw.testsWithoutRegion("R02"); len(got) != 0 {
		t.Errorf("a fit without R02 takes %+v, want none (not R02's, not the national one)", got)
	}
	if got := sw.testsWithoutRegion("R03"); len(got) != 2 || got[0].Line != 2 || got[1].Line != 4 {
		t.Errorf("a fit without R03 takes %+v, want the tests in R02", got)
	}
	if got := p.tests[1].Regions(); !slices.Equal(got, []int{0, 1}) {
		t.Errorf("the national audio test covers regions %v, want R01 and R02 (R03 runs no audio)", got)
	}

	j, err := model.NewPanelJoint(p.panels[:])
	if err != nil {
		t.Fatal(err)
	}
	x := make([]float64, j.Dim())
	for i := range x {
		x[i] = 0.4 * math.Sin(float64(7*i+1))
	}
	v := j.Constrain(nil, x)
	n0 := len(p.panels[0].Names())
	vd, vo := v[:n0], v[n0:]
	dl, ol := p.panels[0].Layout(), p.panels[1].Layout()

	// video's multiplier in the tests' windows (the base layout's, shared)
	m := dl.Region(nil, vd, 0)
	video := slices.Index(p.ps.Scaled[0].UpperNames, "video_spend")
	mult := p.panels[0].Stages[0].Layout().View(m).Multiplier(make([]float64, 64), video)
	far := 0.0
	for _, wk := range []int{14, 21, 50, 55} {
		far = math.Max(far, math.Abs(mult[wk]-1))
	}
	if far < 0.05 {
		t.Fatalf("video's multiplier in the tests' windows stays within 5%% of 1 (%v): the check would not see a truth without it", mult)
	}

	want := make([]float64, len(tests))
	for i, tst := range tests {
		for g, region := range p.ps.Regions {
			if tst.Region != "" && tst.Region != region {
				continue
			}
			sc := p.ps.Scaled[g]
			sim, err := forward.New(sc, p.panels[0].Stages[g], p.panels[1].Stages[g])
			if err != nil {
				t.Fatal(err)
			}
			d := sim.Draw(dl.Region(nil, vd, g), ol.Region(nil, vo, g))
			plan := sim.Data()
			cf := forward.Plan{Upper: append([][]float64(nil), plan.Upper...), Search: append([][]float64(nil), plan.Search...)}
			c := slices.Index(sc.UpperNames, tst.Channel)
			cf.Upper[c] = forward.Without(nil, plan.Upper[c], tst.From, tst.To)
			var a, b forward.Run
			sim.Run(&a, d, plan, nil)
			sim.Run(&b, d, cf, nil)
			for wk := tst.From; wk <= tst.To; wk++ {
				if tst.Metric == model.LiftQueries {
					want[i] += sc.QueriesScale * (a.Queries[wk] - b.Queries[wk])
				} else {
					want[i] += sc.OutcomeScale * (a.Outcome[wk] - b.Outcome[wk])
				}
			}
		}
	}
	rng := rand.New(rand.NewPCG(3, 1))
	dev := make([][]float64, len(tests))
	for range 400 {
		for i, st := range p.simulatedPanelTests(tests, vd, vo, rng) {
			if st.From != tests[i].From || st.To != tests[i].To || st.SE != tests[i].SE || st.Region != tests[i].Region || st.Metric != tests[i].Metric {
				t.Fatalf("simulated test %d: %+v", i, st)
			}
			dev[i] = append(dev[i], (st.Estimate-want[i])/st.SE)
		}
	}
	for i := range dev {
		// standardised noise: mean 0 (se 0.05 over 400 draws), sd 1
		m, sd := stat.Mean(dev[i]), math.Sqrt(stat.Variance(dev[i]))
		t.Logf("test %d (%s %v in %q): true lift %.4g, simulated estimates: mean deviation %.3f se, sd %.3f se", i, tests[i].Channel, tests[i].Metric, tests[i].Region, want[i], m, sd)
		if !(want[i] > 0) || math.Abs(m) > 0.2 || math.Abs(sd-1) > 0.12 {
			t.Errorf("test %d: true lift %.4g; estimates deviate by %.3f se on average with sd %.3f se", i, want[i], m, sd)
		}
	}
}

// panelRefit is what a test sees of one refit of a panel sweep.
type panelRefit struct {
	regions int
	masked  []int // the weeks left out of the likelihood
	tests   []lifts.Test
	names   [2][]string
	joint   bool // the demand and outcome draws come from one run
}

// TestPanelSweepTakesOptions runs the panel sweep of optionsPanel, with a
// smooth drift and with one that can jump, and checks that every refit
// (the reference, the replicate, the holdout origin, the quarters and the
// region left out) fits the drift (its parameters among the panels') and
// the lift tests of the weeks and regions it fits: the reference all three
// as given, the replicate all three with simulated estimates, the origin
// those before it, a quarter's refit those outside it, the refit without
// R02 none (not R02's, not the national one); with a test of the outcome
// the demand and outcome panels are one run (the same adapted step size),
// with tests of the queries alone or none two.
func TestPanelSweepTakesOptions(t *testing.T) {
	if testing.Short() {
		t.Skip("10 tiny panel fits")
	}
	for _, shape := range []string{"", model.DriftJumps} {
		t.Run("shape "+shape, func(t *testing.T) {
			sw, quarters := optionsPanel(t, shape)
			var mu sync.Mutex
			var refits []panelRefit
			sw.pan.fitted = func(f *panelFitted, tests []lifts.Test) {
				r := panelRefit{regions: len(f.ps.Regions), tests: tests,
					names: [2][]string{f.fits[0].Names, f.fits[1].Names},
					joint: f.fits[0].Chains[0].Stats.StepSize == f.fits[1].Chains[0].Stats.StepSize}
				for wk, out := range f.ps.Scaled[0].Mask {
					if out {
						r.masked = append(r.masked, wk)
					}
				}
				mu.Lock()
				refits = append(refits, r)
				mu.Unlock()
			}
			if _, err := sw.Run(context.Background(), Shard{}, nil); err != nil {
				t.Fatal(err)
			}
			if len(refits) != 6 {
				t.Fatalf("%d refits, want 6", len(refits))
			}
			given := sw.in.Lifts
			lines := func(ts []lifts.Test) []int {
				var out []int
				for _, x := range ts {
					out = append(out, x.Line)
				}
				return out
			}
			seen := map[string]bool{}
			for _, r := range refits {
				var kind string
				var wantLines []int
				switch {
				case r.regions == 2:
					kind, wantLines = "without R02", nil
				case len(r.masked) == 2 && r.masked[0] == 62:
					kind, wantLines = "origin", []int{2, 3, 4}
				case len(r.masked) > 0 && r.masked[0] == quarters[0].From:
					kind, wantLines = "without "+quarters[0].Name, []int{3, 4}
				case len(r.masked) > 0 && r.masked[0] == quarters[1].From:
					kind, wantLines = "without "+quarters[1].Name, []int{2, 4}
				case len(r.tests) == 3 && r.tests[0].Estimate == given[0].Estimate:
					kind, wantLines = "reference", []int{2, 3, 4}
					for i := range given {
						if r.tests[i].Estimate != given[i].Estimate {
							t.Errorf("the reference's test %d: estimate %v, want %v", i, r.tests[i].Estimate, given[i].Estimate)
						}
					}
				default:
					kind, wantLines = "replicate", []int{2, 3, 4}
					for i := range r.tests {
						if r.tests[i].Estimate == given[i].Estimate {
							t.Errorf("the replicate's test %d keeps the data's estimate", i)
						}
					}
				}
				seen[kind] = true
				if got := lines(r.tests); !slices.Equal(got, wantLines) {
					t.Errorf("%s: the refit takes the tests on lines %v, want %v", kind, got, wantLines)
				}
				outcomeTest := slices.ContainsFunc(r.tests, func(x lifts.Test) bool { return x.Metric == model.LiftOutcome })
				// video's two paths' drifts, tied in either shape (model.DriftTie),
				// tie the panels too
				if tied := sw.tied; !tied || r.joint != (outcomeTest || tied) {
					t.Errorf("%s: demand and outcome fitted as one run: %v; a test of the outcome among its tests: %v; drifts tied: %v", kind, r.joint, outcomeTest, tied)
				}
				want := []string{"drift_sd_alpha[video_spend]", "drift_sd_delta[video_spend]"}
				if shape == model.DriftJumps {
					want = []string{"drift_jump_sd_alpha[video_spend]", "drift_jump_sd_delta[video_spend]"}
				}
				for k, n := range want {
					if !slices.Contains(r.names[k], n) {
						t.Errorf("%s: the %s panel's parameters lack %s", kind, []string{"demand", "outcome"}[k], n)
					}
				}
			}
			if len(seen) != 6 {
				t.Errorf("refits seen: %v, want the reference, the replicate, the origin, the two quarters and the region left out", seen)
			}
		})
	}
}

// TestPanelPlacebo runs a panel sweep of placebo refits only (one per
// channel; 3 regions x 64 weeks, 1 chain x (30 + 30) per fit) and checks
// that each placebo refit moved its channel's spend by the job's shift in
// every region and nothing else, that the reference's placebo numbers are
// its summed total effects (an upper-funnel channel's; paid search's
// controlled effect is not among the recorded effects), that every placebo
// refit records its channel's summed effect, and that the placebo verdict is on the sums only:
// validation.csv has its rows, validation_by_region.csv none.
func TestPanelPlacebo(t *testing.T) {
	if testing.Short() {
		t.Skip("4 tiny panel fits")
	}
	sim, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: 3, Weeks: 64, Seed: 12, Dark: 1, Big: true})
	if err != nil {
		t.Fatal(err)
	}
	ds := sim.Data
	in := Input{Series: ds.National(), Spec: ds.Spec, Panel: ds, Tool: "test"}
	sw, err := New(in, Settings{Checks: []string{Placebo}, Placebos: 1, Chains: 1, Warmup: 30, Draws: 30, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	var raw [][2][][]float64 // per fit, per region: upper then search raw spend
	sw.pan.fitted = func(f *panelFitted, _ []lifts.Test) {
		var x [2][][]float64
		for _, sc := range f.ps.Scaled {
			x[0] = append(x[0], sc.RawUpper...)
			x[1] = append(x[1], sc.RawSearch...)
		}
		mu.Lock()
		raw = append(raw, x)
		mu.Unlock()
	}
	res, err := sw.Run(context.Background(), Shard{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	cols := append(append([]string(nil), ds.Spec.Upper...), ds.Spec.Search...)
	found := map[string]bool{}
	for _, j := range sw.Jobs() {
		if j.Check != Placebo {
			continue
		}
		// the expected spend: j.Channel moved in every region
		var want [2][][]float64
		for _, r := range ds.Regions {
			for k, group := range [2][][]float64{r.Series.Upper, r.Series.Search} {
				names := [2][]string{ds.Spec.Upper, ds.Spec.Search}[k]
				for c, x := range group {
					if names[c] == j.Channel {
						x = ShiftSpend(nil, x, j.Shift)
					}
					want[k] = append(want[k], x)
				}
			}
		}
		for _, got := range raw {
			same := true
			for k := range got {
				for i := range got[k] {
					if !slices.Equal(got[k][i], want[k][i]) {
						same = false
					}
				}
			}
			if same {
				found[j.Channel] = true
			}
		}
	}
	for _, col := range cols {
		if !found[col] {
			t.Errorf("no placebo refit fitted %s moved in every region and nothing else", col)
		}
	}
	// the reference's placebo numbers are its summed effects' means
	mean := map[string]float64{}
	plac := map[[2]any]float64{}
	for _, r := range res.Records {
		if r.Kind == "effect" && r.Job == 0 && r.Region == "" && r.Window == "all" && r.Stat == "mean" && (r.Path == "total" || r.Path == "controlled") {
			mean[r.Name] = r.Value
		}
		if r.Kind == "placebo" {
			if r.Region != "" {
				t.Errorf("a placebo record of region %s", r.Region)
			}
			plac[[2]any{r.Job, r.Name}] = r.Value
		}
	}
	for _, col := range cols {
		v, ok := plac[[2]any{0, col}]
		if !ok || !(v > 0) {
			t.Errorf("the reference's placebo number of %s is %v (recorded: %v)", col, v, ok)
		}
		// paid search's controlled effect is not among the recorded effects
		if m, has := mean[col]; has && math.Abs(v-m) > 1e-12*m {
			t.Errorf("the reference's placebo number of %s is %v, its summed total effect's mean %v", col, v, m)
		}
	}
	if len(mean) != len(ds.Spec.Upper) {
		t.Errorf("summed total effects of %d channels, want %d", len(mean), len(ds.Spec.Upper))
	}
	for _, j := range sw.Jobs() {
		if v, ok := plac[[2]any{j.Index, j.Channel}]; j.Check == Placebo && (!ok || math.IsNaN(v)) {
			t.Errorf("%s: placebo number %v (recorded: %v)", j.Label, v, ok)
		}
	}
	files, rep, err := Files(res)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(files[TableFile]), "\nplacebo,") {
		t.Errorf("%s has no placebo rows:\n%s", TableFile, files[TableFile])
	}
	if strings.Contains(string(files[RegionTableFile]), ",placebo,") {
		t.Errorf("%s has placebo rows:\n%s", RegionTableFile, files[RegionTableFile])
	}
	if !strings.Contains(rep.Text(), "placebo: ") {
		t.Errorf("no placebo verdict:\n%s", rep.Text())
	}
}
