package scenario

import (
	"fmt"
	"math"
	"math/rand/v2"
	"time"

	"spillway/funnel/data"
	"spillway/funnel/model"
	"spillway/funnel/window"
	"spillway/mediation"
)

// PanelOptions describe a region panel simulated from DESIGN.md's region
// model around the demo's parameters, in the model's units (each region's
// series divided by its own means): each region with its own flights,
// price and size, each coefficient (alpha, delta, beta, gamma) the demo's
// times exp(tau eta), eta standard normal, and transforms, trend, seasons,
// control and sigma the demo's in every region. Its intercepts are what
// makes its scaled queries and outcome average 1: with per-region scaling
// the model's intercepts are fixed by the data that way, so they differ
// between regions as much as their media's contributions do.
type PanelOptions struct {
	Regions, Weeks int
	Seed           uint64
	// Dark is the number of regions (the last ones) that never run audio.
	Dark int
	// Big makes the first region ten times the size of the others.
	Big bool
	// TauCoef is the spread of every coefficient's log. Zero means 0.2.
	TauCoef float64
	// Scale multiplies the national spend, queries and outcome that the
	// regions share; zero means 1, the demo's. Regions cut from the demo's
	// totals get smaller as their number grows (at 200 regions a median of
	// 11 conversions a week, 4.5 in the smallest), and the whole-number
	// rounding of counts that small adds noise about as large as the
	// model's own, which the model does not have. Scale = Regions/40 keeps
	// every region the size of a 40-region panel's. Populations do not
	// change with it.
	Scale float64
}

// PanelResult is a simulated panel with its truth.
type PanelResult struct {
	*Result
	// Effects holds the true effects of each region and their sum, by the
	// same split as a fit (mediation.SplitPanel's regions on one "draw",
	// the true parameters) over window.Quarters (all, then each quarter).
	Effects *mediation.PanelResult
}

// SimulatePanel draws a region panel. The same options give the same data.
func SimulatePanel(o PanelOptions) (*PanelResult, error) {
	if o.Regions < 1 || o.Dark >= o.Regions && o.Regions > 1 {
		return nil, fmt.Errorf("scenario: a panel of %d regions with %d dark ones", o.Regions, o.Dark)
	}
	if o.TauCoef == 0 {
		o.TauCoef = 0.2
	}
	s, err := Named("demo", o.Seed, o.Weeks, o.Regions)
	if err != nil {
		return nil, err
	}
	rng := rand.New(rand.NewPCG(o.Seed, 0x9a4e1))
	weeks := make([]time.Time, s.Weeks)
	for i := range weeks {
		weeks[i] = s.Start.AddDate(0, 0, 7*i)
	}
	ds := &data.Dataset{Spec: RegionSpec, Weeks: weeks}
	res := &PanelResult{Result: &Result{Data: ds}}
	if o.Scale == 0 {
		o.Scale = 1
	}
	if !(o.Scale > 0) || math.IsInf(o.Scale, 0) {
		return nil, fmt.Errorf("scenario: a panel scaled by %g", o.Scale)
	}
	sizes := make([]float64, o.Regions)
	total := 0.0
	for g := range sizes {
		sizes[g] = math.Exp(0.4 * rng.NormFloat64())
		if o.Big && g == 0 {
			sizes[g] = 10
		}
		total += sizes[g]
	}
	spread := func(c []Channel) []Channel { return scaleCoefs(c, rng, o.TauCoef) }
	for g := 0; g < o.Regions; g++ {
		unit := sizes[g] / total // the region's share of the people
		share := o.Scale * unit
		r := *s
		r.unitMeans = true
		r.VideoLevel, r.AudioLevel, r.SearchLevel = s.VideoLevel*share, s.AudioLevel*share, s.SearchLevel*share
		r.QueryBase, r.OutcomeBase = s.QueryBase*share, s.OutcomeBase*share
		video, audio, price := r.videoSpend(rng), r.audioSpend(rng), r.price(rng)
		if g >= o.Regions-o.Dark {
			audio = make([]float64, s.Weeks)
		}
		p := s.P
		p.Demand, p.Direct = spread(p.Demand), spread(p.Direct)
		p.Gamma *= math.Exp(o.TauCoef * rng.NormFloat64())
		p.Search.Coef *= math.Exp(o.TauCoef * rng.NormFloat64())
		name := fmt.Sprintf("R%02d", g+1)
		pop := math.Round(1e6 * unit * float64(o.Regions))
		reg, dem, out, err := r.region(rng, name, pop, weeks, video, audio, price, p)
		if err != nil {
			return nil, err
		}
		ds.Regions = append(ds.Regions, reg)
		res.Regions = append(res.Regions, Region{Name: name, Population: pop, Demand: dem, Outcome: out})
	}
	if res.Effects, err = res.TrueEffects(window.Quarters(weeks)); err != nil {
		return nil, err
	}
	return res, nil
}

// TrueEffects returns each region's true effects over windows (resolved
// against the data's weeks, window.Quarters) and their sum, through the same split as a fit.
func (r *PanelResult) TrueEffects(windows []window.Window) (*mediation.PanelResult, error) {
	ps, err := model.ScalePanel(r.Data, nil)
	if err != nil {
		return nil, err
	}
	var regions []mediation.RegionResult
	for g, sc := range ps.Scaled {
		st1, err := model.Demand(sc, model.Options{})
		if err != nil {
			return nil, err
		}
		st2, err := model.Outcome(sc, model.Options{})
		if err != nil {
			return nil, err
		}
		d1, err := mediation.Point(st1.Names(), r.Regions[g].Demand)
		if err != nil {
			return nil, err
		}
		d2, err := mediation.Point(st2.Names(), r.Regions[g].Outcome)
		if err != nil {
			return nil, err
		}
		e, err := mediation.Split(&mediation.Inputs{Data: sc, Demand: st1, Outcome: st2, DemandDraws: d1, OutcomeDraws: d2}, windows)
		if err != nil {
			return nil, err
		}
		regions = append(regions, mediation.RegionResult{Region: ps.Regions[g], Result: e})
	}
	return mediation.SumRegions(regions)
}
