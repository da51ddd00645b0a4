package pipeline

import (
	"math"
	"testing"

	"spillway/funnel/forward"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/mediation"
)

// TestLiftMeasuredForward checks that a lift test of a channel whose
// exposure is measured with doubt (exposure-break: a break before the
// test's weeks; exposure-error: latent errors; reach-frequency: a
// frequency curve), on the outcome and on the queries, asks the model the
// same question as the one forward simulator: at the true parameters, the
// lift term's value (model.LiftTest.Lift) equals the drop in expected
// outcome (both paths) or queries over the test's weeks when
// funnel/forward runs the channel's spend with those weeks removed
// (forward.Without), the exposure they bought going with it.
func TestLiftMeasuredForward(t *testing.T) {
	for _, name := range []string{"exposure-break", "exposure-error", "reach-frequency"} {
		s, err := scenario.Named(name, 3, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		res, err := s.Simulate()
		if err != nil {
			t.Fatal(err)
		}
		sc := model.Scale(res.Data.National(), s.Roles())
		st1, err := model.Demand(sc, model.Options{})
		if err != nil {
			t.Fatal(err)
		}
		st2, err := model.Outcome(sc, model.Options{})
		if err != nil {
			t.Fatal(err)
		}
		d1, err := mediation.Point(st1.Names(), res.Demand)
		if err != nil {
			t.Fatal(err)
		}
		d2, err := mediation.Point(st2.Names(), res.Outcome)
		if err != nil {
			t.Fatal(err)
		}
		v1, v2 := d1.Rows[0], d2.Rows[0]
		c := 0 // video
		from, to := 0, 0
		for w := 79; w < sc.T; w++ { // the first flight after the break (week 78), its carryover from before it
			if sc.Upper[c][w] > 0 {
				from = w
				break
			}
		}
		for to = from; to+1 < sc.T && sc.Upper[c][to+1] > 0; to++ {
		}
		sim, err := forward.New(sc, st1, st2)
		if err != nil {
			t.Fatal(err)
		}
		dr := sim.Draw(v1, v2)
		var with, without forward.Upper
		sim.Upper(&with, dr, c, sc.Upper[c])
		sim.Upper(&without, dr, c, forward.Without(nil, sc.Upper[c], from, to))
		var q, y float64
		for w := from; w <= to; w++ {
			q += with.Lift.At(w) - without.Lift.At(w)
			y += with.Via.At(w) - without.Via.At(w) + with.Direct.At(w) - without.Direct.At(w)
		}
		y /= sc.OutcomeScale
		for _, m := range []model.LiftMetric{model.LiftOutcome, model.LiftQueries} {
			lt := &model.LiftTest{Column: sc.UpperNames[c], Metric: m, Start: from, End: to, Estimate: 1, SE: 1, Demand: 0, Outcome: 1}
			if _, err := model.NewJoint([]*model.Stage{st1, st2}, lt); err != nil {
				t.Fatalf("%s %v: %v", name, m, err)
			}
			got, want := lt.Lift(v1, v2), y
			if m == model.LiftQueries {
				want = q
			}
			t.Logf("%s, %v, weeks %d-%d: lift term %.6g, forward simulator %.6g", name, m, from, to, got, want)
			if !(want > 0) || math.Abs(got-want) > 1e-10*want {
				t.Errorf("%s %v: the lift term gives %v, the forward simulator %v", name, m, got, want)
			}
		}
	}
}
