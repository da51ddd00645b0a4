package pipeline

import (
	"context"
	"fmt"

	"spillway/funnel/lifts"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/mediation"
)

// DefaultTargetAccept is the acceptance rate the step size adapts to in
// this model's fits unless Settings.TargetAccept says otherwise. It is
// higher than the engine's 0.8 (Stan's default): stages in which a channel's
// coefficient is near zero showed a few divergent transitions at 0.8 on
// simulated data and none at 0.9, for 15-45% more leapfrog steps.
const DefaultTargetAccept = 0.9

// PanelOutcomeAccept is the target acceptance of a region panel's outcome
// and naive stages, and of a joint fit that holds the outcome panel, unless
// Settings.TargetAccept says otherwise. On the 40-region benchmark
// (BenchmarkPanelFit, 4 x (1000 + 1000)) the outcome stage had 10
// divergent transitions of 4,000 at 0.9, 8 at 0.95 and 5 at 0.97, nearly
// all where paid search, which runs every week in every region, is near
// saturation (K_s small, S_s large, its coefficient several times its
// median and every intercept low), and none at 0.99, for 2.4 times the
// leapfrog steps (79 per draw at step 0.062). That was one sampler seed:
// on 2026-12-04 four seeds gave 1 to 3 at 0.99 (0.995, warm-up windows at
// 0.9, gave 1, 2 and 33 on three), until the channels' coefficients were
// referenced to the panel's response spread (model.Coords.CoefOwnSpread
// off): then 0 on all four. The naive stage, the same regression without
// the queries, had 1, 11, 0 and 0 on those seeds at 0.9 and 0, 0, 1 and 0
// at 0.99 (78-92 s wall against 51-55 s). The warm-up reaches 0.99 only in
// its terminal window (panelSettings: mcmc.Settings.WarmupAccept at
// DefaultTargetAccept before it), which on that benchmark took 162,279
// warm-up gradients instead of 340,289, with no divergent draw either
// way. The demand stage keeps DefaultTargetAccept: with its intercept mean
// sheared (PanelTarget.meanShear) it had none at 0.9.
const PanelOutcomeAccept = 0.99

// DriftAccept is the target acceptance of a national fit whose target
// holds a drifting coefficient, smooth or with jumps, unless
// Settings.TargetAccept says otherwise. With a smooth drift, on the demo
// with every channel drifting and four lift tests (BenchmarkFitAlone/drift,
// 4 x (1000 + 1000)) and the two paths of each upper channel tied
// (model.DriftTie): 4, 1, 0 and 0 divergent transitions at seeds 1-4 at
// 0.9 (0, 1, 1 and 1 untied), none at seeds 1 and 2 at 0.95, for 4% more
// wall time at seed 1 (38.5 against 36.9 s). With jumps, on the demo with
// every channel drifting with jumps and four lift tests (BenchmarkFitAlone/jumps, 4 x
// (1000 + 1000)), with the jump weights sampled as asinh(2 u)
// (model.HeavyReal): 15 divergent transitions at 0.9 and none at 0.95
// (max R-hat 1.005, least bulk or tail ESS 1,296), for 1.4 times the
// wall time (83.7 against 59.5 s, one run each).
const DriftAccept = 0.95

// StageNames are the three fits in the order they run.
var StageNames = [3]string{"demand", "outcome", "naive"}

// Stages builds the three stages for sc. The naive stage never drifts
// (o.Drift applies to the demand and outcome stages): it is the
// whole-period cross-check of what a model without the query term credits
// to paid search, not a model of the drift; with the query term missing,
// drifting direct effects try to stand in for it, and on the demo with
// every channel drifting that stage took 3.4 times the default naive
// stage's wall time (26 s against 7.6 s), 61-63 leapfrog steps per draw
// against 33-36, and 5 divergent transitions (32 at another seed) against
// none without drift.
func Stages(sc *model.Scaled, o model.Options) ([3]*model.Stage, error) {
	var out [3]*model.Stage
	for i, f := range []func(*model.Scaled, model.Options) (*model.Stage, error){model.Demand, model.Outcome, model.Naive} {
		oi := o
		if i == 2 {
			oi.Drift = nil
		}
		st, err := f(sc, oi)
		if err != nil {
			return out, err
		}
		out[i] = st
	}
	return out, nil
}

// DriftTies returns the ties (model.DriftTie, not bound) of the two paths'
// drifts of every upper-funnel channel drifting in the demand and the
// outcome stage, parts 0 and 1 of their joint target; none with
// o.DriftsApart. A tie makes the two stages one joint fit.
func DriftTies(demand, outcome *model.Stage, o model.Options) []*model.DriftTie {
	if o.DriftsApart {
		return nil
	}
	return model.DriftTies(demand, outcome, 0, 1)
}

// Known reports whether name is a parameter of any of the stages.
func Known(st [3]*model.Stage) func(string) bool {
	names := map[string]bool{}
	for _, s := range st {
		for _, n := range s.Names() {
			names[n] = true
		}
	}
	return func(n string) bool { return names[n] }
}

// CheckPrior returns the model.PriorCheck of the stages: a parameter
// exists if some stage has it, and a prior must fit it in every stage
// that has it.
func CheckPrior(st [3]*model.Stage) model.PriorCheck {
	return func(name string, p model.Prior) (has bool, which int, err error) {
		for _, s := range st {
			h, w, err := s.CheckPrior(name, p)
			if err != nil {
				return true, w, err
			}
			has = has || h
		}
		return has, 0, nil
	}
}

// Fitted holds the three fits.
type Fitted struct {
	Data   *model.Scaled
	Stages [3]*model.Stage
	Fits   [3]*mcmc.Fit
	// Wall is each stage's wall time in seconds, warm-up and sampling of all
	// chains as the user waits for it.
	Wall [3]float64
	// Tests are the lift tests fitted as data (FitLifts), and Lifts their
	// terms in the likelihood, bound to the stages; nil without tests.
	Tests []lifts.Test
	Lifts []*model.LiftTest
	// options and settings of a FitLifts fit, for the refits that leave a
	// lift test out (CheckLifts) and the prior draws of jumps fitted apart
	// (Inputs)
	options  model.Options
	settings mcmc.Settings
}

// StageHook is called before each stage starts; it may return a progress
// recorder for the stage and a function to call when the stage ends (either
// may be nil).
type StageHook func(stage string) (mcmc.Recorder, func())

// Fit runs the three stages with settings s (chains in parallel, stages one
// after another). Stage k uses seed s.Seed + k so the fits draw independent
// streams; a zero s.TargetAccept means DefaultTargetAccept (DriftAccept for
// a target holding a drift). hook may be nil.
//
// With return priors (o.Returns), or an upper-funnel channel whose two
// paths drift (DriftTies), the demand and the outcome stage are
// fitted as one joint target with the priors and the ties as its cross
// terms, as FitLifts does.
func Fit(ctx context.Context, sc *model.Scaled, o model.Options, s mcmc.Settings, hook StageHook) (*Fitted, error) {
	st, err := Stages(sc, o)
	if err != nil {
		return nil, err
	}
	if len(o.Returns) > 0 || len(DriftTies(st[0], st[1], o)) > 0 {
		return fitLifts(ctx, sc, o, nil, s, hook, true)
	}
	f := &Fitted{Data: sc, Stages: st}
	for k, stage := range st {
		tg, err := stage.Target()
		if err != nil {
			return nil, fmt.Errorf("%s stage: %w", stage.Name, err)
		}
		if f.Fits[k], f.Wall[k], err = run(ctx, tg, settings(s, k, stage), hook, stage.Name); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// Inputs pairs the fits' draws for the effect split.
func (f *Fitted) Inputs() *mediation.Inputs {
	in := Pair(f.Data, f.Stages, f.Fits)
	in.DriftsApart = f.options.DriftsApart
	return in
}

// Pair builds the split's inputs from stages and their fits (e.g. read back
// from a fit folder).
func Pair(sc *model.Scaled, st [3]*model.Stage, fits [3]*mcmc.Fit) *mediation.Inputs {
	in := &mediation.Inputs{Data: sc, Demand: st[0], Outcome: st[1], Naive: st[2],
		DemandDraws: mediation.FromFit(fits[0]), OutcomeDraws: mediation.FromFit(fits[1])}
	if fits[2] != nil {
		in.NaiveDraws = mediation.FromFit(fits[2])
	}
	return in
}
