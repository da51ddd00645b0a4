package allocate

import (
	"context"
	"errors"
	"math"
	"sync"
	"testing"

	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
	"spillway/funnel/scenario"
	"spillway/funnel/window"
	"spillway/mediation"
)

// demoFit fits the built-in demo (the demo scenario with the demo's seed,
// 156 weeks) once per test binary with the default settings: 4 chains x
// (1000 + 1000), 4,000 paired draws.
var demoFit = sync.OnceValues(func() (*demoFitted, error) {
	return fitWorld("demo", 1, nil, mcmc.Settings{Seed: 1})
})

// longFit fits the demo's model on four years of data with less noise in
// the outcome (sigma_y 0.02 instead of 0.03), where paid search's curve is
// better identified: 4 chains x (500 + 500).
var longFit = sync.OnceValues(func() (*demoFitted, error) {
	return fitWorld("demo", 1, func(s *scenario.Scenario) {
		s.Weeks = 208
		s.P.SigmaY = 0.02
	}, mcmc.Settings{Seed: 1, Warmup: 500, Draws: 500})
})

func fitWorld(name string, seed uint64, edit func(*scenario.Scenario), set mcmc.Settings) (*demoFitted, error) {
	w, err := simulate(name, seed, model.Options{}, edit)
	if err != nil {
		return nil, err
	}
	f, err := pipeline.Fit(context.Background(), w.sc, model.Options{}, set, nil)
	if err != nil {
		return nil, err
	}
	return &demoFitted{world: w, split: f.Inputs()}, nil
}

type demoFitted struct {
	*world
	split *mediation.Inputs
}

// TestTruth plans a scenario from its fit and from its true parameters and
// compares them through the true model (the same simulator, run on the
// true parameters as a single draw). The scenario is the demo's model with
// four years of data and less outcome noise (longFit); on the demo itself
// (three years) the posterior of paid search's controlled curve is too wide
// for these checks: its mean is about twice the truth, and the plan keeps
// paid search where the truth would cut it.
//   - the fitted plan's true gain over the current plan is close to the
//     true optimum's: at least two thirds of it (the posterior's
//     uncertainty about paid search's curve costs the rest; with this seed
//     the plan recovers 76%);
//   - the fitted plan's 90% interval of the gain covers its true gain;
//   - money leaves paid search, as the truth's own optimum does, although
//     paid search's apparent return per unit (what a model without the
//     query term credits, DESIGN.md's omitted-variable identity) is the
//     highest of all channels: the plan follows its controlled return.
func TestTruth(t *testing.T) {
	if testing.Short() {
		t.Skip("fits the demo")
	}
	fit, err := longFit()
	if err != nil {
		t.Fatal(err)
	}
	truth := mustNew(t, fit.inputs(t, 1), Settings{})
	planned := mustOptimise(t, mustNew(t, FromSplit(fit.split), Settings{}))
	best := mustOptimise(t, truth)
	got, err := truth.Evaluate(plannedOf(planned))
	if err != nil {
		t.Fatal(err)
	}
	trueGain, bestGain := got.Gain.Mean, best.Gain.Mean
	t.Logf("fitted plan %v: predicted gain %.1f [%.1f, %.1f], P(beats current) %.3f; true gain %.1f", plannedOf(planned),
		planned.Gain.Mean, planned.Gain.Q05, planned.Gain.Q95, planned.PBeats, trueGain)
	t.Logf("true optimum %v: gain %.1f; current %v", plannedOf(best), bestGain, truth.Current())
	if trueGain < 2*bestGain/3 {
		t.Errorf("the fitted plan's true gain %.1f is below two thirds of the true optimum's %.1f", trueGain, bestGain)
	}
	if trueGain < planned.Gain.Q05 || trueGain > planned.Gain.Q95 {
		t.Errorf("the fitted plan's true gain %.1f is outside its 90%% interval [%.1f, %.1f]", trueGain, planned.Gain.Q05, planned.Gain.Q95)
	}
	// paid search: apparent and controlled return per unit in the truth,
	// against the upper-funnel channels' total return per unit
	tr, err := fit.truthSplit()
	if err != nil {
		t.Fatal(err)
	}
	s := len(truth.names) - 1
	for _, e := range tr.Effects {
		if e.Path == "total" && e.Window == "all" && e.Draws[0]/e.Spend >= tr.apparent {
			t.Fatalf("in this scenario paid search's apparent return %.5f should beat %s's %.5f", tr.apparent, e.Channel, e.Draws[0]/e.Spend)
		}
	}
	t.Logf("paid search per unit: apparent %.5f, controlled %.5f", tr.apparent, tr.controlled)
	if best.Channels[s].Planned >= best.Channels[s].Current {
		t.Fatalf("the true optimum keeps paid search at %.0f (current %.0f): the scenario does not test the point", best.Channels[s].Planned, best.Channels[s].Current)
	}
	if planned.Channels[s].Planned >= planned.Channels[s].Current {
		t.Errorf("the fitted plan moves paid search from %.0f to %.0f, as its apparent return would; its controlled return says less", planned.Channels[s].Current, planned.Channels[s].Planned)
	}
}

type truthSplit struct {
	*mediation.Result
	apparent, controlled float64 // paid search, per unit of spend
}

// truthSplit is the split of the demo's truth (mediation.Split on the true
// parameters).
func (f *demoFitted) truthSplit() (*truthSplit, error) {
	in, err := f.draws(1)
	if err != nil {
		return nil, err
	}
	r, err := mediation.Split(&mediation.Inputs{Data: f.sc, Demand: f.demand, Outcome: f.outcome,
		DemandDraws: in.DemandDraws, OutcomeDraws: in.OutcomeDraws}, window.Quarters(f.sc.Weeks)[:1])
	if err != nil {
		return nil, err
	}
	out := &truthSplit{Result: r}
	for _, b := range r.Borrowed {
		switch b.Path {
		case "apparent":
			out.apparent = b.Draws[0] / b.Spend
		case "controlled":
			out.controlled = b.Draws[0] / b.Spend
		}
	}
	if math.IsNaN(out.apparent) || out.apparent == 0 {
		return nil, errors.New("the truth's split has no paid search")
	}
	return out, nil
}

// BenchmarkDemo plans the demo (4,000 draws, three channels, 13 weeks):
// building the problem (each draw's carryover) and optimising it, with the
// plan's evaluation. It reports the number of whole-plan evaluations and
// the CPU seconds per plan (user and system, every core), which on a
// loaded machine say more than the wall time: divided by the cores, they
// are the wall time the plan would take on an idle machine.
func BenchmarkDemo(b *testing.B) {
	fit, err := demoFit()
	if err != nil {
		b.Fatal(err)
	}
	in := FromSplit(fit.split)
	var r *Result
	cpu0 := cpuSeconds()
	for b.Loop() {
		p, err := New(in, Settings{})
		if err != nil {
			b.Fatal(err)
		}
		if r, err = p.Optimise(); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric((cpuSeconds()-cpu0)/float64(b.N), "cpu_s/op")
	b.ReportMetric(r.Stats.Evaluations, "evaluations")
	b.ReportMetric(float64(len(in.DemandDraws.Rows)), "draws")
}
