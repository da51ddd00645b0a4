package pipeline

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"spillway/funnel/lifts"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/mediation"
)

// PanelFitted holds the three fits of a region panel (DESIGN.md "Region
// panel").
type PanelFitted struct {
	Data   *model.PanelScaled
	Panels [3]*model.Panel
	Fits   [3]*mcmc.Fit
	// Coords are the sampling coordinates each stage used (chosen from
	// the data before sampling).
	Coords [3]*model.Coords
	// Wall is each stage's wall time in seconds.
	Wall [3]float64
	// Tests are the lift tests fitted as data and Lifts their terms, bound
	// to the joint target they were sampled in (FitPanelLifts); none
	// without.
	Tests    []lifts.Test
	Lifts    []*model.PanelLiftTest
	options  model.Options
	settings mcmc.Settings
}

// FitPanel runs the region model's three stages (demand, outcome, naive)
// with settings s, as Fit does for one series: chains in parallel, stages
// one after another, stage k with seed s.Seed + k, a zero TargetAccept
// meaning PanelOutcomeAccept for the outcome and naive stages and
// DefaultTargetAccept for the demand stage. hook may be nil. With an upper
// channel's drift tied across its two paths (DriftTies) the demand and
// outcome panels are one joint fit, as FitPanelLifts fits them.
func FitPanel(ctx context.Context, ps *model.PanelScaled, o model.Options, s mcmc.Settings, hook StageHook) (*PanelFitted, error) {
	panels, err := model.PanelStages(ps, o)
	if err != nil {
		return nil, err
	}
	if len(panelTies(panels, o)) > 0 {
		return fitPanelLifts(ctx, ps, o, nil, s, hook, true)
	}
	f := &PanelFitted{Data: ps, Panels: panels}
	for k, p := range panels {
		if p.Coords == nil {
			if p.Coords, err = model.ChooseCoordinates(p); err != nil {
				return nil, fmt.Errorf("%s stage: %w", p.Name, err)
			}
		}
		f.Coords[k] = p.Coords
		tg, err := p.Target()
		if err != nil {
			return nil, fmt.Errorf("%s stage: %w", p.Name, err)
		}
		if f.Fits[k], f.Wall[k], err = run(ctx, tg, PanelStart(tg, panelSettings(s, k, regressesOutcome(k))), hook, p.Name); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// Inputs pairs the fits' draws for the split by region.
func (f *PanelFitted) Inputs() *mediation.PanelInputs {
	in := &mediation.PanelInputs{Data: f.Data, Demand: f.Panels[0], Outcome: f.Panels[1], Naive: f.Panels[2],
		DemandDraws: mediation.FromFit(f.Fits[0]), OutcomeDraws: mediation.FromFit(f.Fits[1])}
	if f.Fits[2] != nil {
		in.NaiveDraws = mediation.FromFit(f.Fits[2])
	}
	return in
}

// AssemblePanel is the PanelFitted of a region panel whose stages' chains
// were sampled apart (each as FitPanel samples it with Settings.Only) and
// put together in chain order: the panels rebuilt from ps and o, each
// stage's draws checked against its panel's parameters.
func AssemblePanel(ps *model.PanelScaled, o model.Options, fits [3]*mcmc.Fit, wall [3]float64) (*PanelFitted, error) {
	return AssemblePanelLifts(ps, o, nil, mcmc.Settings{}, fits, wall)
}

// AssemblePanelLifts is AssemblePanel for a fit with lift tests (as
// FitPanelLifts samples it with settings s, which CheckLifts' refits
// reuse): the tests' terms bound as the joint fit binds them.
func AssemblePanelLifts(ps *model.PanelScaled, o model.Options, tests []lifts.Test, s mcmc.Settings, fits [3]*mcmc.Fit, wall [3]float64) (*PanelFitted, error) {
	panels, err := model.PanelStages(ps, o)
	if err != nil {
		return nil, err
	}
	for k, p := range panels {
		if got, want := fits[k].Names, p.Names(); !slices.Equal(got, want) {
			return nil, fmt.Errorf("%s stage: parameters %v do not match the region panel's %v", p.Name, got, want)
		}
	}
	f := &PanelFitted{Data: ps, Panels: panels, Fits: fits, Wall: wall, Tests: tests, options: o, settings: s}
	if len(tests) > 0 {
		if _, err := f.bindLifts(); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// PanelStart returns s with the panel's start (unless s has its own
// metric or initial point): the warm-up's initial metric from the
// least-squares errors behind the coordinates (model.PanelTarget.StartMetric)
// and each chain's initial point drawn around the least-squares point
// (StartPoint), uniform within two of those sds on every coordinate, so
// the chains start apart, as R-hat needs, but near the posterior's bulk.
// Chain c's draw uses its own stream of the seed, so a chain sampled alone
// (Settings.Only) starts where it would in the whole run. On the 40-region
// demand stage the sampler's usual start (identity metric, uniform in
// (-2, 2)) spent 72,000 gradients per chain on its first 100 warm-up
// iterations (step 0.002, 67 trees at the maximum depth).
func PanelStart(tg startTarget, s mcmc.Settings) mcmc.Settings {
	if s.InvMetric != nil || s.Init != nil {
		return s
	}
	m := tg.StartMetric()
	x0 := make([]float64, tg.Dim())
	if m == nil || !tg.StartPoint(x0) {
		return s
	}
	s.InvMetric = m
	seed := s.Seed
	s.Init = func(chain int, dst []float64) bool {
		rng := rand.New(rand.NewPCG(seed, startStream+uint64(chain)))
		ev := tg.Clone()
		grad := make([]float64, len(dst))
		for try := 0; try < mcmc.InitTries; try++ {
			for i := range dst {
				dst[i] = x0[i] + (4*rng.Float64()-2)*math.Sqrt(m[i])
			}
			if lp := ev.LogProbGrad(grad, dst); !math.IsNaN(lp) && !math.IsInf(lp, 0) {
				return true
			}
		}
		copy(dst, x0)
		return true
	}
	return s
}

// startTarget is a panel target, or panels joined by lift tests, that
// offers the sampler a start.
type startTarget interface {
	mcmc.Target
	StartMetric() []float64
	StartPoint(dst []float64) bool
}

// startStream offsets the streams of the chains' initial points from the
// chains' own (rand.NewPCG(seed, chain), mcmc.Run).
const startStream = 1 << 40
