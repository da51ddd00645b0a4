package pipeline

import (
	"context"
	"fmt"

	"spillway/funnel/lifts"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
)

// FitPanelLifts is FitPanel with lift tests as data, as FitLifts is Fit: a
// test of the outcome ties the demand and the outcome panel (region g's
// via search needs alpha[c,g] and gamma[g]), as does an upper channel's
// two paths' drift (DriftTies, on the multiplier every region shares), so
// the two are then fitted as one joint target (model.PanelJoint) with
// every test and tie; with tests of the
// queries alone, the demand panel is fitted with them and the outcome panel
// on its own; the naive panel always on its own. The joint fit uses seed
// s.Seed and its wall time is the demand stage's (the outcome's is 0); its
// draws are split back into one fit per panel, paired by index. No tests:
// FitPanel itself.
func FitPanelLifts(ctx context.Context, ps *model.PanelScaled, o model.Options, tests []lifts.Test, s mcmc.Settings, hook StageHook) (*PanelFitted, error) {
	if len(tests) == 0 {
		return FitPanel(ctx, ps, o, s, hook)
	}
	return fitPanelLifts(ctx, ps, o, tests, s, hook, true)
}

// FitPanelStages is FitPanelLifts without the naive panel (Fits[2] is
// nil), as FitStages is FitLifts: the demand and outcome panels with the
// lift tests, for refits that need only the two (validation). Unlike
// FitPanelLifts it always binds the tests' joint target, so callers without
// tests should use FitPanel.
func FitPanelStages(ctx context.Context, ps *model.PanelScaled, o model.Options, tests []lifts.Test, s mcmc.Settings, hook StageHook) (*PanelFitted, error) {
	return fitPanelLifts(ctx, ps, o, tests, s, hook, false)
}

// fitPanelLifts is FitPanelLifts with or without the naive panel (Fits[2]
// nil without).
func fitPanelLifts(ctx context.Context, ps *model.PanelScaled, o model.Options, tests []lifts.Test, s mcmc.Settings, hook StageHook, naive bool) (*PanelFitted, error) {
	panels, err := model.PanelStages(ps, o)
	if err != nil {
		return nil, err
	}
	f := &PanelFitted{Data: ps, Panels: panels, Tests: tests, options: o, settings: s}
	for k, p := range panels {
		if p.Coords, err = model.ChooseCoordinates(p); err != nil {
			return nil, fmt.Errorf("%s stage: %w", p.Name, err)
		}
		f.Coords[k] = p.Coords
	}
	j, err := f.bindLifts()
	if err != nil {
		return nil, err
	}
	n := len(j.Names())
	joint := 1
	if n != len(panels[0].Names()) {
		joint = 2
	}
	name := "demand"
	if joint == 2 {
		name = "demand and outcome"
	}
	fit, wall, err := run(ctx, j, PanelStart(j, panelSettings(s, 0, joint == 2)), hook, name)
	if err != nil {
		return nil, err
	}
	n0 := len(panels[0].Names())
	f.Fits[0], f.Wall[0] = columns(fit, 0, n0), wall
	if joint == 2 {
		f.Fits[1] = columns(fit, n0, n)
	}
	last := 3
	if !naive {
		last = 2
	}
	for k := joint; k < last; k++ {
		tg, err := panels[k].Target()
		if err != nil {
			return nil, fmt.Errorf("%s stage: %w", panels[k].Name, err)
		}
		if f.Fits[k], f.Wall[k], err = run(ctx, tg, PanelStart(tg, panelSettings(s, k, regressesOutcome(k))), hook, panels[k].Name); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// bindLifts sets f.Lifts, the terms of f.Tests, bound to the panels in the
// joint target they are sampled in: the demand panel, and the outcome panel
// too when a test of the outcome or a drift tie ties them (the ties join
// the target, PanelJoint.Tie). It returns that target.
func (f *PanelFitted) bindLifts() (*model.PanelJoint, error) {
	joint := []*model.Panel{f.Panels[0]}
	ties := panelTies(f.Panels, f.options)
	for _, t := range f.Tests {
		if t.Metric == model.LiftOutcome {
			joint = append(joint, f.Panels[1])
			break
		}
	}
	if len(ties) > 0 && len(joint) == 1 {
		joint = append(joint, f.Panels[1])
	}
	f.Lifts = nil
	for _, t := range f.Tests {
		f.Lifts = append(f.Lifts, t.PanelTerm(f.Data, 0, 1))
	}
	j, err := model.NewPanelJoint(joint, f.Lifts...)
	if err != nil {
		return nil, err
	}
	return j, j.Tie(ties...)
}

// panelTies are DriftTies of the panels' shared drifts: the multiplier
// every region shares, tied as nationally (PanelJoint.Tie).
func panelTies(panels [3]*model.Panel, o model.Options) []*model.DriftTie {
	return DriftTies(panels[0].Stages[0], panels[1].Stages[0], o)
}

// CheckLifts is Fitted.CheckLifts for a region panel fitted with lift
// tests (FitPanelLifts or AssemblePanelLifts): each test beside the model's
// posterior of the same quantity (in the metric's units: the region's for a
// test in one region, the sum over the regions for a national test), left
// out by Pareto-smoothed importance weights or, above MaxParetoK, by a refit
// of the demand and outcome panels without it.
func (f *PanelFitted) CheckLifts(ctx context.Context, hook StageHook) ([]LiftCheck, error) {
	return checkEach(f.Tests, f.settings, func(i int) []float64 { return f.liftDraws(f, i) },
		func(rest []lifts.Test, set mcmc.Settings, i int) ([]float64, error) {
			g, err := fitPanelLifts(ctx, f.Data, f.options, rest, set, hook, false)
			if err != nil {
				return nil, err
			}
			return f.liftDraws(g, i), nil
		})
}

// liftDraws returns test i's lift (the metric's units) under every paired
// draw of g's demand and outcome fits; g has f's panels (f itself, or a
// refit).
func (f *PanelFitted) liftDraws(g *PanelFitted, i int) []float64 {
	unit := f.Tests[i].PanelUnit(f.Data)
	term := f.Lifts[i].Clone()
	return pairedLifts(g.Fits[0], g.Fits[1], unit, term.Lift)
}
