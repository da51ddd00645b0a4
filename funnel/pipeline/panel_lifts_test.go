package pipeline

import (
	"math"
	"strings"
	"testing"

	"spillway/funnel/data"
	"spillway/funnel/forward"
	"spillway/funnel/lifts"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
)

// liftPanel returns a 4-region, 60-week simulated panel whose last region
// (R04) never runs audio, and the lift tests of file (a header and rows)
// read against it as a panel.
func liftPanel(t *testing.T, file string) (*data.Dataset, []lifts.Test) {
	t.Helper()
	res, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: 4, Weeks: 60, Seed: 3, Dark: 1})
	if err != nil {
		t.Fatal(err)
	}
	tests, err := lifts.ReadPanel(strings.NewReader(file), "lifts.csv", res.Data)
	if err != nil {
		t.Fatal(err)
	}
	return res.Data, tests
}

func weekOf(ds *data.Dataset, i int) string { return ds.Weeks[i].Format("2006-01-02") }

// TestPanelLiftForward checks each test's value on a panel draw against the
// forward simulator's what-if, region by region: the data's spend against
// the spend with the channel's window zeroed (in the test's region, or in
// every region), the expected outcome (queries following the plan) or
// queries summed over the window in the region's own units, then over the
// regions. They must agree to 1e-10.
func TestPanelLiftForward(t *testing.T) {
	res, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: 4, Weeks: 60, Seed: 3, Dark: 1})
	if err != nil {
		t.Fatal(err)
	}
	ds := res.Data
	w := func(i int) string { return weekOf(ds, i) }
	file := "channel,start,end,estimate,se,metric,region\n" +
		"video_spend," + w(10) + "," + w(17) + ",300,40,,R02\n" +
		"video_spend," + w(30) + "," + w(41) + ",2000,400,outcome,\n" +
		"audio_spend," + w(20) + "," + w(27) + ",5000,900,queries,\n" +
		"audio_spend," + w(5) + "," + w(12) + ",100,50,outcome,R03\n" +
		"search_spend," + w(44) + "," + w(50) + ",150,60,,R01\n" +
		"search_spend," + w(0) + "," + w(6) + ",150,60,,\n"
	tests, err := lifts.ReadPanel(strings.NewReader(file), "lifts.csv", ds)
	if err != nil {
		t.Fatal(err)
	}
	ps, err := model.ScalePanel(ds, nil)
	if err != nil {
		t.Fatal(err)
	}
	panels, err := model.PanelStages(ps, model.Options{})
	if err != nil {
		t.Fatal(err)
	}
	f := &PanelFitted{Data: ps, Panels: panels, Tests: tests}
	j, err := f.bindLifts()
	if err != nil {
		t.Fatal(err)
	}
	n0 := len(panels[0].Names())
	if len(j.Names()) != n0+len(panels[1].Names()) {
		t.Fatalf("the joint target holds %d parameters, want the demand and the outcome panel's", len(j.Names()))
	}
	dl, ol := panels[0].Layout(), panels[1].Layout()
	for pt := 0; pt < 3; pt++ {
		x := make([]float64, j.Dim())
		for i := range x {
			x[i] = 0.4 * math.Sin(float64(7*i+pt))
		}
		v := j.Constrain(nil, x)
		vd, vo := v[:n0], v[n0:]
		for i, tst := range tests {
			got := tst.PanelUnit(ps) * f.Lifts[i].Clone().Lift(vd, vo)
			want := 0.0
			for g, region := range ps.Regions {
				if tst.Region != "" && tst.Region != region {
					continue
				}
				sc := ps.Scaled[g]
				sim, err := forward.New(sc, panels[0].Stages[g], panels[1].Stages[g])
				if err != nil {
					t.Fatal(err)
				}
				d := sim.Draw(dl.Region(nil, vd, g), ol.Region(nil, vo, g))
				plan := sim.Data()
				cf := forward.Plan{Upper: append([][]float64(nil), plan.Upper...), Search: append([][]float64(nil), plan.Search...)}
				if c := indexOf(sc.UpperNames, tst.Channel); c >= 0 {
					cf.Upper[c] = forward.Without(nil, plan.Upper[c], tst.From, tst.To)
				} else {
					k := indexOf(sc.SearchNames, tst.Channel)
					cf.Search[k] = forward.Without(nil, plan.Search[k], tst.From, tst.To)
				}
				var a, b forward.Run
				sim.Run(&a, d, plan, nil)
				sim.Run(&b, d, cf, nil)
				for wk := tst.From; wk <= tst.To; wk++ {
					if tst.Metric == model.LiftQueries {
						want += sc.QueriesScale * (a.Queries[wk] - b.Queries[wk])
					} else {
						want += sc.OutcomeScale * (a.Outcome[wk] - b.Outcome[wk])
					}
				}
			}
			if !(want > 0) || math.Abs(got-want) > 1e-10*math.Abs(want) {
				t.Errorf("point %d, test on line %d (%s %v in %q): lift %v, the forward simulator's %v", pt, tst.Line, tst.Channel, tst.Metric, tst.Region, got, want)
			}
		}
	}
}

func indexOf(names []string, s string) int {
	for i, n := range names {
		if n == s {
			return i
		}
	}
	return -1
}
