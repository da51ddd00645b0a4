package validate

import (
	"math"
	"math/rand/v2"
	"testing"

	"spillway/funnel/lifts"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/funnel/stat"
)

// TestSweepLiftTests checks which lift tests each refit of a sweep takes
// (a holdout fit those before its origin, a fit leaving a quarter out
// those outside it) and that a recovery replicate's tests are its own true
// lifts plus Normal(0, se) noise. The true lift is computed here from the
// replicate's parameters by the response functions (model.Media), apart
// from the likelihood term the sweep uses.
func TestSweepLiftTests(t *testing.T) {
	s, err := scenario.Named("demo", 1, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := s.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	tests := []lifts.Test{
		{Channel: "video_spend", Metric: model.LiftOutcome, From: 14, To: 17, Estimate: 800, SE: 100},
		{Channel: "video_spend", Metric: model.LiftQueries, From: 100, To: 103, Estimate: 30000, SE: 5000},
	}
	in := Input{Series: res.Data.National(), Spec: res.Data.Spec, Tool: "test", Truth: &Truth{Demand: res.Demand, Outcome: res.Outcome}, Lifts: tests}
	sw, err := New(in, recoverySettings(1, 1))
	if err != nil {
		t.Fatal(err)
	}
	if n := len(sw.testsBefore(18)); n != 1 {
		t.Errorf("tests before week 18: %d, want 1", n)
	}
	if n := len(sw.testsBefore(17)); n != 0 {
		t.Errorf("tests before week 17: %d, want 0", n)
	}
	if got := sw.testsOutside(12, 15); len(got) != 1 || got[0].From != 100 {
		t.Errorf("tests outside weeks 12-15: %+v, want the second only", got)
	}
	if n := len(sw.testsOutside(0, 10)); n != 2 {
		t.Errorf("tests outside weeks 0-10: %d, want 2", n)
	}

	rng := rand.New(rand.NewPCG(1, 1))
	v1, v2, err := sw.gen.draw(0, rng, nil)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := sw.simulate(sw.gen, v1, v2, rng)
	if err != nil {
		t.Fatal(err)
	}
	// the true lifts from the response functions
	x := rep.sc.Upper[0]
	cf := func(from, to int) []float64 {
		c := append([]float64(nil), x...)
		for i := from; i <= to; i++ {
			c[i] = 0
		}
		return c
	}
	diff := func(m model.Media, from, to int) float64 {
		h, hc := m.Response(nil, x), m.Response(nil, cf(from, to))
		d := 0.0
		for i := from; i <= to; i++ {
			d += h[i] - hc[i]
		}
		return m.Coef * d
	}
	dem, _ := rep.st[0].Layout().View(rep.u1).Channel("video_spend")
	out := rep.st[1].Layout().View(rep.u2)
	dir, _ := out.Channel("video_spend")
	want := []float64{
		rep.sc.OutcomeScale * (out.Gamma()*diff(dem, 14, 17) + diff(dir, 14, 17)),
		rep.sc.QueriesScale * diff(dem, 100, 103),
	}
	dev := [2][]float64{}
	for range 400 {
		sim, err := sw.simulatedTests(rep, rng)
		if err != nil {
			t.Fatal(err)
		}
		for i, st := range sim {
			if st.From != tests[i].From || st.To != tests[i].To || st.SE != tests[i].SE {
				t.Fatalf("simulated test %d: %+v", i, st)
			}
			dev[i] = append(dev[i], (st.Estimate-want[i])/st.SE)
		}
	}
	for i := range dev {
		// standardised noise: mean 0 (se 0.05 over 400 draws), sd 1
		m, sd := stat.Mean(dev[i]), math.Sqrt(stat.Variance(dev[i]))
		t.Logf("test %d: true lift %.4g, simulated estimates: mean deviation %.3f se, sd %.3f se", i, want[i], m, sd)
		if !(want[i] > 0) || math.Abs(m) > 0.2 || math.Abs(sd-1) > 0.12 {
			t.Errorf("test %d: true lift %.4g; estimates deviate by %.3f se on average with sd %.3f se", i, want[i], m, sd)
		}
	}
}
