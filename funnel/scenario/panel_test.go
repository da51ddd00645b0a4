package scenario

import (
	"math"
	"testing"

	"spillway/funnel/model"
	"spillway/funnel/stat"
)

// TestSimulatePanelIsTheRegionModel checks that a simulated panel follows
// DESIGN.md's region model in the units the model fits in (each region's
// series divided by its own means): every parameter but the intercepts
// and the coefficients (alpha, delta, beta, gamma) is the same in every
// region, and the coefficients' logs spread around the demo's by the
// stated tau. A panel drawn in raw units and then scaled per region gives
// each region its own trend, seasons, control and sigma (divided by that
// region's mean), which the model does not allow.
func TestSimulatePanelIsTheRegionModel(t *testing.T) {
	const G, tau = 60, 0.2
	sim, err := SimulatePanel(PanelOptions{Regions: G, Weeks: 104, Seed: 9, Dark: 6, Big: true})
	if err != nil {
		t.Fatal(err)
	}
	ps, err := model.ScalePanel(sim.Data, nil)
	if err != nil {
		t.Fatal(err)
	}
	demo := demoInModelUnits(t)
	var logs []float64
	for k, build := range []func(*model.Scaled, model.Options) (*model.Stage, error){model.Demand, model.Outcome} {
		for g, sc := range ps.Scaled {
			st, err := build(sc, model.Options{})
			if err != nil {
				t.Fatal(err)
			}
			truth := sim.Regions[g].Demand
			if k == 1 {
				truth = sim.Regions[g].Outcome
			}
			l := st.Layout()
			for i, name := range l.Names() {
				v, want := truth[name], demo[name]
				switch {
				case i == l.InterceptSlot():
				case l.IsCoefficient(i):
					logs = append(logs, math.Log(v/want))
				case math.Abs(v-want) > 1e-2*math.Abs(want):
					// (1%: rounding to whole conversions moves a small
					// region's mean a little; raw-unit draws moved these by
					// up to 40%)
					t.Errorf("region %s: %s is %.5g, the demo's (shared) %.5g", ps.Regions[g], name, v, want)
				}
			}
		}
	}
	// the logs of 7 coefficients x 60 regions: mean 0 and sd tau, each
	// within about 5 standard errors
	m, sd := stat.MeanSD(logs)
	se := tau / math.Sqrt(float64(len(logs)))
	if math.Abs(m) > 5*se || math.Abs(sd-tau) > 5*tau/math.Sqrt(2*float64(len(logs))) {
		t.Errorf("coefficients' logs against the demo's: mean %.4f, sd %.4f over %d; want 0 and %.2f", m, sd, len(logs), tau)
	}
}

// demoInModelUnits is the demo's parameters by name, as a region of a panel
// holds them before its coefficients' spread.
func demoInModelUnits(t *testing.T) map[string]float64 {
	t.Helper()
	sim, err := SimulatePanel(PanelOptions{Regions: 1, Weeks: 60, Seed: 9, TauCoef: 1e-300})
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]float64{}
	for _, m := range []map[string]float64{sim.Regions[0].Demand, sim.Regions[0].Outcome} {
		for k, v := range m {
			out[k] = v
		}
	}
	return out
}

// TestPanelScale: Scale multiplies every region's raw series and changes
// nothing else (the same draws, so each outcome is 5 times the unscaled
// one up to the two roundings to whole numbers, 5 x 0.5 + 0.5), and a scale
// that is not a positive number is refused.
func TestPanelScale(t *testing.T) {
	opts := PanelOptions{Regions: 12, Weeks: 60, Seed: 9, Dark: 2, Big: true}
	one, err := SimulatePanel(opts)
	if err != nil {
		t.Fatal(err)
	}
	opts.Scale = 5
	five, err := SimulatePanel(opts)
	if err != nil {
		t.Fatal(err)
	}
	for g, r := range one.Data.Regions {
		r5 := five.Data.Regions[g]
		for w := range r.Outcome {
			if d := math.Abs(r5.Outcome[w] - 5*r.Outcome[w]); d > 3 {
				t.Fatalf("region %s week %d: outcome %g at scale 5, %g at 1", r.Name, w, r5.Outcome[w], r.Outcome[w])
			}
			if d := math.Abs(r5.Queries[w] - 5*r.Queries[w]); d > 3 {
				t.Fatalf("region %s week %d: queries %g at scale 5, %g at 1", r.Name, w, r5.Queries[w], r.Queries[w])
			}
		}
		if r5.Population != r.Population {
			t.Errorf("region %s: population %g at scale 5, %g at 1", r.Name, r5.Population, r.Population)
		}
		if a, b := five.Regions[g].Outcome["gamma"], one.Regions[g].Outcome["gamma"]; math.Abs(a-b) > 0.01*b {
			t.Errorf("region %s: gamma %g at scale 5, %g at 1", r.Name, a, b)
		}
	}
	for _, bad := range []float64{-1, math.NaN(), math.Inf(1)} {
		opts.Scale = bad
		if _, err := SimulatePanel(opts); err == nil {
			t.Errorf("scale %g accepted", bad)
		}
	}
}
