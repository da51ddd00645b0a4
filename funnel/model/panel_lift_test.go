package model

import (
	"fmt"
	"math"
	"testing"

	"spillway/funnel/mcmc/mcmctest"
)

// panelLiftCase is a pair of demand and outcome panels of G regions (region
// 1 never runs video when G > 1) with lift tests: video's outcome in region
// 0, video's outcome summed over every region, audio's queries in the last
// region, and paid search's outcome summed over the regions. Each region's
// stages are built with options o (testDrift: video and paid search drift).
func panelLiftCase(t *testing.T, G int, seed uint64, o Options) ([]*Panel, []*PanelLiftTest) {
	t.Helper()
	var panels []*Panel
	for k, build := range []func(*Scaled, Options) (*Stage, error){Demand, Outcome} {
		p := testPanelOpts(t, G, 30, build, G > 1, o)
		p.Coords = randomCoords(p, seed+uint64(k))
		panels = append(panels, p)
	}
	one := func(g int) []float64 {
		w := make([]float64, G)
		w[g] = 1
		return w
	}
	all := make([]float64, G)
	for g := range all {
		all[g] = 0.5 + 0.25*float64(g)
	}
	tests := []*PanelLiftTest{
		{Column: "video", Metric: LiftOutcome, Start: 8, End: 15, Estimate: 0.3, SE: 0.2, Weights: one(0), Demand: 0, Outcome: 1},
		{Column: "video", Metric: LiftOutcome, Start: 5, End: 20, Estimate: 1.1, SE: 0.5, Weights: all, Demand: 0, Outcome: 1},
		{Column: "audio", Metric: LiftQueries, Start: 10, End: 25, Estimate: 0.4, SE: 0.3, Weights: one(G - 1), Demand: 0, Outcome: 1},
		{Column: "search", Metric: LiftOutcome, Start: 3, End: 12, Estimate: 0.2, SE: 0.4, Weights: all, Demand: 0, Outcome: 1},
	}
	return panels, tests
}

// TestPanelJointGradient checks the panel joint target with lift tests
// against central finite differences in the sampling coordinates (the tests
// reach the per-region coefficients through their hierarchies and the
// shared transforms, and the shared drift of video and paid search), with
// mixed coordinates, a region without video, and one region, and that an
// evaluation allocates nothing.
func TestPanelJointGradient(t *testing.T) {
	for _, c := range []struct {
		G     int
		drift bool
		base  bool // the moving baseline
		cond  bool // intercepts and gamma in their conditional coordinates
	}{{1, false, false, false}, {4, false, false, false}, {1, true, false, false}, {4, true, false, false}, {4, true, true, false}, {1, false, true, false},
		{4, false, false, true}, {4, true, false, true}, {4, true, true, true}} {
		G := c.G
		o := Options{}
		if c.drift {
			o = testDrift
		}
		if c.base {
			o.Baseline = BaselineSmooth
		}
		panels, tests := panelLiftCase(t, G, 7, o)
		for _, p := range panels {
			p.Coords.MuConditional, p.Coords.GammaConditional = c.cond, c.cond
		}
		if G == 1 {
			tests[2].Weights = []float64{1}
		}
		j, err := NewPanelJoint(panels, tests...)
		if err != nil {
			t.Fatal(err)
		}
		if c.drift && tests[0].regs[0].y.sm == nil {
			t.Fatal("video's outcome test does not see its drift")
		}
		if c.base && (j.parts[0].base == nil || j.parts[1].base == nil) {
			t.Fatal("the panels have no moving baseline")
		}
		if c.cond && j.parts[1].condGamma() == nil {
			t.Fatal("gamma is not in its conditional coordinates")
		}
		t.Run(fmt.Sprintf("G=%d drift=%v baseline=%v conditional=%v", G, c.drift, c.base, c.cond), func(t *testing.T) {
			// step 1e-5: the tests' quadratic terms make the density large
			// at random points, and central differences' rounding error
			// grows with it (about 1e-5 scaled at the default step 1e-6)
			r := mcmctest.CheckGradient(t, j, 1e-5, &mcmctest.GradSettings{Seed: 5, Points: 6, Radius: 1, Step: 1e-5})
			if r.Checked < 4 {
				t.Fatalf("only %d points had a finite density", r.Checked)
			}
			x := mcmctest.Ramp(j.Dim())
			mcmctest.CheckNoAlloc(t, j, x)
			mcmctest.CheckNoAlloc(t, j.Clone(), x)
		})
	}
}

// TestPanelLiftValue checks each test's value against the lift computed
// plainly from each region's national-shaped draw (wantLift on the region's
// stages), weighted and summed over the regions, and that the joint log
// density is the panels' plus each test's log Normal(estimate | Lift, se):
// the term and Lift compute the same quantity. A region without spend in
// the window is left out of a test; a test with none anywhere is refused.
func TestPanelLiftValue(t *testing.T) {
	for _, o := range []Options{{}, testDrift} {
		panelLiftValue(t, o)
	}
}

func panelLiftValue(t *testing.T, o Options) {
	t.Helper()
	panels, tests := panelLiftCase(t, 4, 9, o)
	j, err := NewPanelJoint(panels, tests...)
	if err != nil {
		t.Fatal(err)
	}
	if got := tests[1].Regions(); fmt.Sprint(got) != "[0 2 3]" {
		t.Errorf("the national video test covers regions %v, want [0 2 3] (region 1 never runs video)", got)
	}
	dt, _ := panels[0].Target()
	ot, _ := panels[1].Target()
	dl, ol := panels[0].Layout(), panels[1].Layout()
	for pt := 0; pt < 3; pt++ {
		x := make([]float64, j.Dim())
		for i := range x {
			x[i] = 0.3 * math.Sin(float64(3*i+pt))
		}
		v := j.Constrain(nil, x)
		vd, vo := v[:j.Offset(1)], v[j.Offset(1):]
		tie := 0.0
		for k, l := range tests {
			want := 0.0
			for g, w := range l.Weights {
				if w == 0 {
					continue
				}
				st := []*Stage{panels[0].Stages[g], panels[1].Stages[g]}
				rv := [][]float64{dl.Region(nil, vd, g), ol.Region(nil, vo, g)}
				if l.Metric == LiftQueries {
					rv[1] = nil
				}
				if st[0].ChannelIndex(l.Column) < 0 {
					rv[0] = nil
				}
				var s float64
				if rv[0] == nil {
					s = wantLift(st[1:], rv[1:], l.Column, l.Start, l.End, false)
				} else {
					s = wantLift(st, rv, l.Column, l.Start, l.End, l.Metric == LiftOutcome)
				}
				want += w * s
			}
			got := l.Clone().Lift(vd, vo)
			if math.Abs(got-want) > 1e-12*math.Max(1, math.Abs(want)) {
				t.Errorf("point %d test %d: Lift %v, want %v", pt, k, got, want)
			}
			z := (l.Estimate - got) / l.SE
			tie += -0.5 * z * z
		}
		lp := j.LogProb(x)
		sep := dt.LogProb(x[:dt.Dim()]) + ot.LogProb(x[dt.Dim():])
		if d := lp - sep - tie; math.Abs(d) > 1e-9*math.Max(1, math.Abs(lp)) {
			t.Errorf("point %d: joint log density %v, panels' %v plus tests' %v (off by %v)", pt, lp, sep, tie, d)
		}
	}
	dark := &PanelLiftTest{Column: "video", Metric: LiftQueries, Start: 3, End: 9, Estimate: 1, SE: 1, Weights: []float64{0, 1, 0, 0}, Demand: 0, Outcome: 1}
	if _, err := NewPanelJoint(panels[:1], dark); err == nil {
		t.Error("a test of video in the region that never runs it was accepted")
	}
}

// BenchmarkPanelJointLift measures the demand and outcome panels of 40
// regions x 156 weeks as one joint target, without tests and with two
// national outcome tests (video over 13 weeks, paid search over 8: every
// region's lift each): the tests' share of a gradient, and 0 allocations.
func BenchmarkPanelJointLift(b *testing.B) {
	const G, T = 40, 156
	var panels []*Panel
	for _, build := range []func(*Scaled, Options) (*Stage, error){Demand, Outcome} {
		p := &Panel{TauMu: PriorTauMu, TauCoef: PriorTauCoef}
		for g := 0; g < G; g++ {
			st, _ := build(testScaled(T, uint64(20+g)), Options{})
			p.Stages = append(p.Stages, st)
			p.Regions = append(p.Regions, fmt.Sprintf("r%d", g+1))
		}
		p.Name = p.Stages[0].Name
		p.Coords = p.Uniform(0.5)
		panels = append(panels, p)
	}
	w := make([]float64, G)
	for g := range w {
		w[g] = 1.0 / G
	}
	for _, n := range []int{0, 2} {
		b.Run(fmt.Sprintf("tests=%d", n), func(b *testing.B) {
			tests := []*PanelLiftTest{
				{Column: "video", Metric: LiftOutcome, Start: 60, End: 72, Estimate: 1, SE: 0.5, Weights: w, Demand: 0, Outcome: 1},
				{Column: "search", Metric: LiftOutcome, Start: 100, End: 107, Estimate: 1, SE: 0.5, Weights: w, Demand: 0, Outcome: 1},
			}[:n]
			j, err := NewPanelJoint(panels, tests...)
			if err != nil {
				b.Fatal(err)
			}
			x := mcmctest.Ramp(j.Dim())
			g := make([]float64, j.Dim())
			b.ReportAllocs()
			cpu0 := cpuSeconds()
			for b.Loop() {
				j.LogProbGrad(g, x)
			}
			b.ReportMetric((cpuSeconds()-cpu0)*1e9/float64(b.N), "cpu-ns/op")
		})
	}
}
