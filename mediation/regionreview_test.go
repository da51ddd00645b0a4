package mediation

import (
	"fmt"
	"math"
	"testing"

	"spillway/funnel/fitfolder"
	"spillway/funnel/model"
	"spillway/funnel/window"
)

// panelOf builds the region panel of the synthetic regions scs (synth) with
// three paired draws: each panel draw carries every region's own intercept
// and coefficients from its own draw (the shared parameters are the first
// region's), so in.Region(g) is region g's national draw but for those.
func panelOf(t *testing.T, scs []*model.Scaled, seeds []uint64) *PanelInputs {
	t.Helper()
	names := []string{"east", "west", "north"}[:len(scs)]
	ps := &model.PanelScaled{Regions: names, Scaled: scs}
	panels, err := model.PanelStages(ps, model.Options{})
	if err != nil {
		t.Fatal(err)
	}
	in := &PanelInputs{Data: ps, Demand: panels[0], Outcome: panels[1]}
	for d := range 3 {
		var v [2][][]float64 // [stage][region]
		for _, seed := range seeds {
			_, _, _, v1, v2 := synth(t, scs[0].T, 10*seed+uint64(d), model.Options{})
			v[0], v[1] = append(v[0], v1), append(v[1], v2)
		}
		for k, p := range []*model.Panel{in.Demand, in.Outcome} {
			l := p.Layout()
			row := make([]float64, l.Len())
			copy(row, v[k][0])
			row[l.TauMu()] = 0.1
			for g := range scs {
				row[l.Intercepts().Start+g] = v[k][g][l.Base().InterceptSlot()]
			}
			for _, c := range l.Coefs() {
				row[c.Tau] = 0.1
				for g := range scs {
					row[c.Block.Start+g] = v[k][g][c.Hyper]
				}
			}
			dr := &in.DemandDraws
			if k == 1 {
				dr = &in.OutcomeDraws
			}
			dr.Names, dr.Rows = l.Names(), append(dr.Rows, row)
		}
	}
	return in
}

// scaled is synth's data with the spend scales the curves need.
func scaled(t *testing.T, seed uint64) *model.Scaled {
	sc, _, _, _, _ := synth(t, 104, seed, model.Options{})
	sc.UpperScale, sc.SearchScale = nil, nil
	for _, raw := range sc.RawUpper {
		sc.UpperScale = append(sc.UpperScale, model.SpendScale(raw))
	}
	for _, raw := range sc.RawSearch {
		sc.SearchScale = append(sc.SearchScale, model.SpendScale(raw))
	}
	return sc
}

func near(a, b float64) bool { return math.Abs(a-b) <= 1e-9*math.Max(1, math.Abs(b)) }

// TestPanelReviewSums checks the summed review tables on two different
// regions against each region's own national tables: the observed and
// expected series and the sensitivity draws add up; the summed
// sensitivity's zero is where the sum's posterior mean, a known function of
// rho, crosses zero.
func TestPanelReviewSums(t *testing.T) {
	a, b := scaled(t, 1), scaled(t, 2)
	in := panelOf(t, []*model.Scaled{a, b}, []uint64{1, 2})
	var rins []*Inputs
	for g := range 2 {
		r, err := in.Region(g)
		if err != nil {
			t.Fatal(err)
		}
		rins = append(rins, r)
	}

	fp, err := FittedPanel(in, 4)
	if err != nil {
		t.Fatal(err)
	}
	var f0, f1 = mustFitted(t, rins[0]), mustFitted(t, rins[1])
	for i, row := range fp {
		if !near(row.Actual, f0[i].Actual+f1[i].Actual) || !near(row.Mean, f0[i].Mean+f1[i].Mean) || row.Week != f0[i].Week || row.Stage != f0[i].Stage {
			t.Fatalf("fitted row %d: %+v, regions %+v and %+v", i, row, f0[i], f1[i])
		}
		if !(row.Q05 <= row.Q95) {
			t.Errorf("fitted row %d: band %v..%v", i, row.Q05, row.Q95)
		}
	}

	rhos := RhoGrid()
	sp, err := SensitivitiesPanel(in, rhos)
	if err != nil {
		t.Fatal(err)
	}
	s0, _ := Sensitivities(rins[0], rhos)
	s1, _ := Sensitivities(rins[1], rhos)
	for c := range sp {
		for i := range rhos {
			for d := range sp[c].Draws[i] {
				if !near(sp[c].Draws[i][d], s0[c].Draws[i][d]+s1[c].Draws[i][d]) {
					t.Fatalf("%s rho %v draw %d: %v, regions add to %v", sp[c].Channel, rhos[i], d, sp[c].Draws[i][d], s0[c].Draws[i][d]+s1[c].Draws[i][d])
				}
			}
		}
		// the mean is P - Q rho/sqrt(1-rho^2): P at rho 0, Q from any other
		mean := func(i int) float64 { return Summarise(sp[c].Draws[i]).Mean }
		i0, i1 := -1, -1
		for i, r := range rhos {
			if r == 0 {
				i0 = i
			} else if i1 < 0 {
				i1 = i
			}
		}
		P := mean(i0)
		Q := (P - mean(i1)) * math.Sqrt(1-rhos[i1]*rhos[i1]) / rhos[i1]
		z := sp[c].Zero
		if got := P - Q*z/math.Sqrt(1-z*z); math.Abs(got) > 1e-9*math.Abs(P) {
			t.Errorf("%s: the summed mean at its zero %v is %v (at rho 0: %v)", sp[c].Channel, z, got, P)
		}
	}
}

// TestPanelReviewTwins: two identical regions (same data, same draws) sum
// to twice one region: the response curve at the same point of the grid
// (the summed grid runs to twice the summed largest week, and each region
// gets half) is twice the region's, the marginal return is the region's,
// and the return on spend of a window is the region's.
func TestPanelReviewTwins(t *testing.T) {
	a := scaled(t, 1)
	in := panelOf(t, []*model.Scaled{a, a}, []uint64{1, 1})
	rin, err := in.Region(0)
	if err != nil {
		t.Fatal(err)
	}
	cp, err := CurvesPanel(in, 11)
	if err != nil {
		t.Fatal(err)
	}
	c1, err := Curves(rin, 11)
	if err != nil {
		t.Fatal(err)
	}
	if len(cp) != len(c1) {
		t.Fatalf("%d curve rows, one region has %d", len(cp), len(c1))
	}
	for i := range cp {
		p, r := cp[i], c1[i]
		if p.Channel != r.Channel || p.Path != r.Path || !near(p.WeeklySpend, 2*r.WeeklySpend) || !near(p.CurrentWeeklySpend, 2*r.CurrentWeeklySpend) ||
			!near(p.Mean, 2*r.Mean) || !near(p.Q05, 2*r.Q05) || !near(p.Q95, 2*r.Q95) {
			t.Fatalf("curve row %d: %+v, one region %+v", i, p, r)
		}
	}
	pr, err := SplitPanel(in, nil)
	if err != nil {
		t.Fatal(err)
	}
	rp, err := ReturnsPanel(in, pr.Total)
	if err != nil {
		t.Fatal(err)
	}
	res, err := Split(rin, nil)
	if err != nil {
		t.Fatal(err)
	}
	r1, err := Returns(rin, res)
	if err != nil {
		t.Fatal(err)
	}
	if len(rp) != len(r1) || len(rp) == 0 {
		t.Fatalf("%d returns rows, one region has %d", len(rp), len(r1))
	}
	for i := range rp {
		p, r := rp[i], r1[i]
		if p.Channel != r.Channel || p.Measure != r.Measure || p.Window != r.Window || !near(p.Mean, r.Mean) || !near(p.Q05, r.Q05) || !near(p.Q95, r.Q95) {
			t.Errorf("returns row %d: %+v, one region %+v", i, p, r)
		}
	}
	if w := pr.Total.Weekly; len(w) != 2 || len(w[0][0]) != 3 || !near(w[0][0][1][5], 2*res.Weekly[0][0][1][5]) {
		t.Errorf("the summed weekly contributions are not twice one region's")
	}
	for _, r := range pr.Regions {
		if r.Weekly != nil {
			t.Errorf("region %s keeps its weekly draws", r.Region)
		}
	}
}

func mustFitted(t *testing.T, in *Inputs) []fitfolder.Fitted {
	t.Helper()
	f, err := Fitted(in, 4)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// TestSplitPanelTables: the region tables made region by region, with the
// running sum, are the tables of SplitPanel's whole result, value for
// value.
func TestSplitPanelTables(t *testing.T) {
	in := panelOf(t, []*model.Scaled{scaled(t, 1), scaled(t, 2), scaled(t, 3)}, []uint64{1, 2, 3})
	wins := window.Quarters(in.Data.Scaled[0].Weeks)
	pr, err := SplitPanel(in, wins)
	if err != nil {
		t.Fatal(err)
	}
	pt, err := SplitPanelTables(in, wins)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	var results []*Result
	for _, r := range pr.Regions {
		names, results = append(names, r.Region), append(results, r.Result)
	}
	diffs, err := RegionDifferences(names, results, pr.Total)
	if err != nil {
		t.Fatal(err)
	}
	// printed with %v (shortest round-trip floats, NaN as NaN)
	same := func(what string, a, b any) {
		if x, y := fmt.Sprintf("%+v", a), fmt.Sprintf("%+v", b); x != y {
			t.Errorf("%s differ (%d and %d characters)", what, len(x), len(y))
		}
	}
	same("effects_by_region rows", RegionEffectsTable(names, results), pt.Effects)
	same("borrowed_by_region rows", RegionBorrowedTable(names, results), pt.Borrowed)
	same("region_differences rows", diffs, pt.Differences)
	same("summed effects", EffectsTable(pr.Total, nil), EffectsTable(pt.Total, nil))
	same("summed borrowed", BorrowedTable(pr.Total), BorrowedTable(pt.Total))
	same("summed weekly", pr.Total.Weekly, pt.Total.Weekly)
	if len(pt.Differences) == 0 || len(pt.Effects) == 0 {
		t.Error("empty tables")
	}
}
