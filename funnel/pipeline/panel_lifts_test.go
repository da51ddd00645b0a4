package pipeline

import (
	"context"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"

	"spillway/funnel/data"
	"spillway/funnel/forward"
	"spillway/funnel/lifts"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/funnel/stat"
)

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

// pinFit fits the demand panel of ds with the tests (queries tests only,
// so the joint target is the demand panel) and returns, per chain, each
// draw's lift of test 0's quantity (raw units, computed whatever the tests
// given), log alpha[video] (the regions' median) and log alpha[video,R02].
func pinFit(t *testing.T, ds *data.Dataset, probe lifts.Test, tests []lifts.Test, seed uint64) (lift, hyper, region [][]float64) {
	t.Helper()
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
	fit, _, err := run(context.Background(), j, settings(mcmc.Settings{Chains: 4, Warmup: 250, Draws: 400, Seed: seed}, 0), nil, "demand")
	if err != nil {
		t.Fatal(err)
	}
	g := &PanelFitted{Data: ps, Panels: panels, Tests: []lifts.Test{probe}}
	if _, err := g.bindLifts(); err != nil {
		t.Fatal(err)
	}
	term, unit := g.Lifts[0], probe.PanelUnit(ps)
	l := panels[0].Layout()
	var hs, rs int
	for _, c := range l.Coefs() {
		if c.Column == "video_spend" {
			hs, rs = c.Hyper, c.Block.Start+1 // R02 is the second region
		}
	}
	for _, ch := range fit.Chains {
		n, _ := ch.Draws.Dims()
		var a, b, c []float64
		for i := 0; i < n; i++ {
			v := ch.Draws.RawRowView(i)
			a = append(a, unit*term.Lift(v, nil))
			b = append(b, math.Log(v[hs]))
			c = append(c, math.Log(v[rs]))
		}
		lift, hyper, region = append(lift, a), append(hyper, b), append(region, c)
	}
	return lift, hyper, region
}

// TestPanelLiftPins checks a test in one region of a panel by what it must
// do to the posterior. Leaving the test out and reweighting the draws by its
// likelihood Normal(estimate | L, se) is exact (Bayes' rule), so a test of
// moderate se fitted as data must give the reweighted posterior mean of the
// region's lift and of the regions' median coefficient, within their Monte
// Carlo errors (4 of the difference's). A test with a tiny se pins the
// region's lift to the estimate (the conjugate normal update's mean and sd,
// Gelman et al., BDA 3rd ed., ch. 2.5, with the data's sd 20 times the
// test's) and, by partial pooling, moves the median coefficient the same
// way as the region's coefficient, but less.
func TestPanelLiftPins(t *testing.T) {
	if testing.Short() {
		t.Skip("three short panel fits")
	}
	res, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: 4, Weeks: 60, Seed: 3, Dark: 1})
	if err != nil {
		t.Fatal(err)
	}
	ds := res.Data
	row := func(est, se float64) []lifts.Test {
		file := "channel,start,end,estimate,se,metric,region\n" +
			"video_spend," + weekOf(ds, 10) + "," + weekOf(ds, 21) + "," + strconv.FormatFloat(est, 'g', -1, 64) + "," + strconv.FormatFloat(se, 'g', -1, 64) + ",queries,R02\n"
		tests, err := lifts.ReadPanel(strings.NewReader(file), "lifts.csv", ds)
		if err != nil {
			t.Fatal(err)
		}
		return tests
	}
	probe := row(1, 1)[0]
	L0, H0, R0 := pinFit(t, ds, probe, nil, 31)
	l0 := slices.Concat(L0...)
	m0, s0 := stat.MeanSD(l0)
	t.Logf("data alone: R02's video lift of queries over 12 weeks %.1f (sd %.1f), log alpha[video] %.4f, log alpha[video,R02] %.4f",
		m0, s0, stat.Mean(slices.Concat(H0...)), stat.Mean(slices.Concat(R0...)))

	// a moderate test, against the data's posterior reweighted by it
	est, se := m0+s0, s0
	L1, H1, _ := pinFit(t, ds, probe, row(est, se), 32)
	w := make([]float64, len(l0))
	sw, sw2 := 0.0, 0.0
	for i, L := range l0 {
		z := (est - L) / se
		w[i] = math.Exp(-0.5 * z * z)
		sw += w[i]
	}
	for i := range w {
		w[i] /= sw
		sw2 += w[i] * w[i]
	}
	// the reweighted draws' effective count: Kish's 1/sum w^2, times the
	// chains' ESS per draw
	neff := 1 / sw2 * mcmc.ESSBulk(L0) / float64(len(l0))
	for _, c := range []struct {
		name      string
		without   [][]float64
		with      [][]float64
		tolerance float64
	}{{"lift", L0, L1, 0}, {"log alpha[video]", H0, H1, 0}} {
		x := slices.Concat(c.without...)
		m, v := 0.0, 0.0
		for i, h := range x {
			m += w[i] * h
		}
		for i, h := range x {
			v += w[i] * (h - m) * (h - m)
		}
		got := stat.Mean(slices.Concat(c.with...))
		tol := 4 * math.Hypot(mcmc.MCSEMean(c.with), math.Sqrt(v/neff))
		t.Logf("%s with the test %.5g, the data's draws reweighted %.5g (tolerance %.2g, reweighted effective draws %.0f)", c.name, got, m, tol, neff)
		if math.Abs(got-m) > tol {
			t.Errorf("%s: with the test %.5g, the reweighted posterior %.5g, beyond 4 Monte Carlo errors (%.2g)", c.name, got, m, tol)
		}
	}

	// a tight test pins the region
	est, se = m0+3*s0, s0/20
	L2, H2, R2 := pinFit(t, ds, probe, row(est, se), 33)
	l2 := slices.Concat(L2...)
	prec := 1/(s0*s0) + 1/(se*se)
	wantMean, wantSD := (m0/(s0*s0)+est/(se*se))/prec, 1/math.Sqrt(prec)
	gotMean, gotSD := stat.MeanSD(l2)
	t.Logf("tight test %.1f (se %.2f): lift %.2f (sd %.3f), conjugate normal %.2f (sd %.3f)", est, se, gotMean, gotSD, wantMean, wantSD)
	if math.Abs(gotMean-wantMean) > 0.5*se+4*mcmc.MCSEMean(L2) || gotSD > 1.3*wantSD || gotSD < 0.7*wantSD {
		t.Errorf("tight test: lift %.3f (sd %.3f), want about %.3f (sd %.3f)", gotMean, gotSD, wantMean, wantSD)
	}
	dh := stat.Mean(slices.Concat(H2...)) - stat.Mean(slices.Concat(H0...))
	dr := stat.Mean(slices.Concat(R2...)) - stat.Mean(slices.Concat(R0...))
	t.Logf("tight test moves log alpha[video,R02] by %.4f and the median log alpha[video] by %.4f", dr, dh)
	if !(dr > 0) || !(dh > 4*math.Hypot(mcmc.MCSEMean(H2), mcmc.MCSEMean(H0))) || !(dh < dr) {
		t.Errorf("tight test: region's log coefficient moved %.4f, the median's %.4f; want the median to move the same way, less", dr, dh)
	}
}
