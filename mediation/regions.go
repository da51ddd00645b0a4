package mediation

import (
	"fmt"

	"spillway/funnel/model"
	"spillway/funnel/window"
)

// PanelInputs are what the split of a region panel needs: the panel's
// scaled data, its three compiled panels and their paired draws (row d of
// each pairs with row d of the others), in the panels' own parameter order.
type PanelInputs struct {
	Data                   *model.PanelScaled
	Demand, Outcome, Naive *model.Panel
	DemandDraws            Draws
	OutcomeDraws           Draws
	NaiveDraws             Draws // may be empty
}

// RegionResult is one region's effects, in that region's absolute units.
type RegionResult struct {
	Region string
	*Result
}

// PanelResult holds each region's effects and their sum over regions.
type PanelResult struct {
	Regions []RegionResult
	// Total sums the regions draw by draw: every effect in outcome units is
	// the sum of the regions' (each in its own scale), the mediated and
	// borrowed shares are the ratios of those sums, spend is summed.
	Total *Result
}

// Region returns the named view of region g of the inputs: the region's
// scaled data, stages and draws in the national shape (model.PanelLayout
// Region), which Split, Sensitivities and the other national computations
// take unchanged.
func (in *PanelInputs) Region(g int) (*Inputs, error) {
	out := &Inputs{Data: in.Data.Scaled[g], Demand: in.Demand.Stages[g], Outcome: in.Outcome.Stages[g]}
	var err error
	if out.DemandDraws, err = project(in.Demand, in.DemandDraws, g, "demand"); err != nil {
		return nil, err
	}
	if out.OutcomeDraws, err = project(in.Outcome, in.OutcomeDraws, g, "outcome"); err != nil {
		return nil, err
	}
	if in.Naive != nil && len(in.NaiveDraws.Rows) > 0 {
		out.Naive = in.Naive.Stages[g]
		if out.NaiveDraws, err = project(in.Naive, in.NaiveDraws, g, "naive"); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// project returns region g's draws of panel p in the national shape.
func project(p *model.Panel, d Draws, g int, stage string) (Draws, error) {
	l := p.Layout()
	if err := d.check(l.Names(), stage); err != nil {
		return Draws{}, err
	}
	out := Draws{Names: p.Stages[g].Names(), Rows: make([][]float64, len(d.Rows))}
	n := l.Base().Len()
	buf := make([]float64, n*len(d.Rows))
	for i, r := range d.Rows {
		out.Rows[i] = l.Region(buf[i*n:(i+1)*n:(i+1)*n], r, g)
	}
	return out, nil
}

// SplitPanel computes every region's effects for each window by
// counterfactual simulation (Split on the region's own data and draws) and
// their sum over regions.
func SplitPanel(in *PanelInputs, windows []window.Window) (*PanelResult, error) {
	if len(in.Data.Scaled) != len(in.Demand.Stages) || len(in.Data.Scaled) != len(in.Outcome.Stages) {
		return nil, fmt.Errorf("mediation: the panel's data and stages have different regions")
	}
	var regions []RegionResult
	for g, name := range in.Data.Regions {
		rin, err := in.Region(g)
		if err != nil {
			return nil, err
		}
		r, err := Split(rin, windows)
		if err != nil {
			return nil, fmt.Errorf("region %s: %w", name, err)
		}
		regions = append(regions, RegionResult{Region: name, Result: r})
	}
	return SumRegions(regions)
}

// SumRegions returns the regions' results with their sum (PanelResult
// Total). Every region must list the same effects in the same order, with
// as many draws.
func SumRegions(regions []RegionResult) (*PanelResult, error) {
	if len(regions) == 0 {
		return nil, fmt.Errorf("mediation: no regions to sum")
	}
	first := regions[0].Result
	tot := &Result{}
	sum := func(get func(*Result) []Effect) ([]Effect, error) {
		base := get(first)
		out := make([]Effect, len(base))
		for i, e := range base {
			out[i] = Effect{Channel: e.Channel, Path: e.Path, Window: e.Window, Draws: make([]float64, len(e.Draws))}
			for _, r := range regions {
				es := get(r.Result)
				if len(es) != len(base) || es[i].Channel != e.Channel || es[i].Path != e.Path || es[i].Window != e.Window || len(es[i].Draws) != len(e.Draws) {
					return nil, fmt.Errorf("mediation: region %s's effects do not match region %s's", r.Region, regions[0].Region)
				}
				out[i].Spend += es[i].Spend
				for d, v := range es[i].Draws {
					out[i].Draws[d] += v
				}
			}
		}
		return out, nil
	}
	var err error
	if tot.Effects, err = sum(func(r *Result) []Effect { return r.Effects }); err != nil {
		return nil, err
	}
	if tot.Borrowed, err = sum(func(r *Result) []Effect { return r.Borrowed }); err != nil {
		return nil, err
	}
	// the shares are ratios of the sums, not sums of ratios
	find := func(es []Effect, ch, path, win string) []float64 {
		for _, e := range es {
			if e.Channel == ch && e.Path == path && e.Window == win {
				return e.Draws
			}
		}
		return nil
	}
	for i, e := range tot.Effects {
		if e.Path != "mediated_share" {
			continue
		}
		via, all := find(tot.Effects, e.Channel, "via_search", e.Window), find(tot.Effects, e.Channel, "total", e.Window)
		for d := range e.Draws {
			tot.Effects[i].Draws[d] = via[d] / all[d]
		}
	}
	for i, e := range tot.Borrowed {
		if e.Path != "borrowed_share" {
			continue
		}
		ctl, app := find(tot.Borrowed, e.Channel, "controlled", e.Window), find(tot.Borrowed, e.Channel, "apparent", e.Window)
		for d := range e.Draws {
			tot.Borrowed[i].Draws[d] = (app[d] - ctl[d]) / app[d]
		}
	}
	tot.Weekly = make([][2][][]float64, len(first.Weekly))
	for c := range first.Weekly {
		for p := 0; p < 2; p++ {
			rows := make([][]float64, len(first.Weekly[c][p]))
			for d := range rows {
				row := make([]float64, len(first.Weekly[c][p][d]))
				for _, r := range regions {
					for t, v := range r.Weekly[c][p][d] {
						row[t] += v
					}
				}
				rows[d] = row
			}
			tot.Weekly[c][p] = rows
		}
	}
	return &PanelResult{Regions: regions, Total: tot}, nil
}
