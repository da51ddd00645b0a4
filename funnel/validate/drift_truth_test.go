package validate

import (
	"math"
	"testing"

	"spillway/funnel/forward"
	"spillway/funnel/model"
)

// TestTruthWithDrift checks that a truth given for the default model
// (truth.json) becomes a draw of a sweep's drift and moving-baseline
// stages that simulates the same data: the expected queries and outcome of
// every week are the default model's at the truth, exactly with drifting
// coefficients (multipliers of 1), and within the projection's departure
// (below 0.2% of the scaled series) with the trend line carried into a
// moving baseline; the coefficients keep their values.
func TestTruthWithDrift(t *testing.T) {
	in, truth := testScenario(t, 21)
	in.Truth = truth
	means := func(o model.Options) (m, n []float64, v1, v2 []float64, st [2]*model.Stage) {
		in.Options = o
		sw, err := New(in, recoverySettings(1, 5))
		if err != nil {
			t.Fatal(err)
		}
		v1, v2, err = sw.gen.draw(0, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		sim, err := forward.New(sw.base, sw.stages[0], sw.stages[1])
		if err != nil {
			t.Fatal(err)
		}
		var run forward.Run
		sim.Fit(&run, sim.Draw(v1, v2))
		return append([]float64(nil), run.Queries...), append([]float64(nil), run.Outcome...), v1, v2, sw.stages
	}
	m0, n0, d1, d2, s0 := means(model.Options{})
	all := map[string]bool{"video_spend": true, "audio_spend": true, "search_spend": true}
	for _, c := range []struct {
		name string
		o    model.Options
		tol  float64
	}{
		{"every channel drifting", model.Options{Drift: all}, 1e-12},
		{"moving baseline", model.Options{Baseline: model.BaselineSmooth}, 2e-3},
		{"both", model.Options{Drift: all, Baseline: model.BaselineSmooth}, 2e-3},
	} {
		m, n, v1, v2, st := means(c.o)
		worst := 0.0
		for i := range m {
			worst = math.Max(worst, math.Max(math.Abs(m[i]-m0[i]), math.Abs(n[i]-n0[i])))
		}
		t.Logf("%s: largest difference of a week's expected queries or outcome %.2g (scaled units)", c.name, worst)
		if worst > c.tol {
			t.Errorf("%s: the carried truth's expected series differ from the default model's by up to %.3g", c.name, worst)
		}
		// the coefficients and gamma are the truth's
		for k, pair := range [2][2][]float64{{d1, v1}, {d2, v2}} {
			p0, p := s0[k].Layout().View(pair[0]), st[k].Layout().View(pair[1])
			for j := range s0[k].Channels {
				if a, b := p0.ChannelAt(j), p.ChannelAt(j); a.Coef != b.Coef || a.Lam != b.Lam || a.K != b.K || a.S != b.S {
					t.Errorf("%s: %s channel %d: %+v, the truth %+v", c.name, st[k].Name, j, b, a)
				}
			}
			if k == 1 && p0.Gamma() != p.Gamma() {
				t.Errorf("%s: gamma %g, the truth %g", c.name, p.Gamma(), p0.Gamma())
			}
		}
	}
}
