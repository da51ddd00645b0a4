package mediation

import (
	"fmt"
	"math"
	"math/rand/v2"

	"spillway/funnel/fitfolder"
	"spillway/funnel/forward"

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
// their sum over regions. Only the sum keeps weekly contributions: each
// region's are added to it and dropped as soon as the region is split, so
// memory grows with the regions' effects, not with regions x draws x weeks.
func SplitPanel(in *PanelInputs, windows []window.Window) (*PanelResult, error) {
	var regions []RegionResult
	weekly, err := eachRegion(in, windows, func(name string, r *Result) error {
		regions = append(regions, RegionResult{Region: name, Result: r})
		return nil
	})
	if err != nil {
		return nil, err
	}
	res, err := SumRegions(regions)
	if err != nil {
		return nil, err
	}
	res.Total.Weekly = weekly
	return res, nil
}

// eachRegion splits every region of the panel in turn on its own data and
// draws, adds its weekly contributions to the running sum it returns, and
// hands the region's result, weekly draws dropped, to use.
func eachRegion(in *PanelInputs, windows []window.Window, use func(name string, r *Result) error) ([][2][][]float64, error) {
	if len(in.Data.Scaled) != len(in.Demand.Stages) || len(in.Data.Scaled) != len(in.Outcome.Stages) {
		return nil, fmt.Errorf("mediation: the panel's data and stages have different regions")
	}
	var weekly [][2][][]float64
	for g, name := range in.Data.Regions {
		rin, err := in.Region(g)
		if err != nil {
			return nil, err
		}
		r, err := Split(rin, windows)
		if err != nil {
			return nil, fmt.Errorf("region %s: %w", name, err)
		}
		weekly = addWeekly(weekly, r.Weekly)
		r.Weekly = nil
		if err := use(name, r); err != nil {
			return nil, err
		}
	}
	return weekly, nil
}

// addWeekly adds src's weekly contributions to dst's (a copy of src when
// dst is nil) and returns dst.
func addWeekly(dst, src [][2][][]float64) [][2][][]float64 {
	if src == nil {
		return dst
	}
	if dst == nil {
		dst = make([][2][][]float64, len(src))
		for c := range src {
			for p := range 2 {
				dst[c][p] = make([][]float64, len(src[c][p]))
				for d, row := range src[c][p] {
					dst[c][p][d] = make([]float64, len(row))
				}
			}
		}
	}
	for c := range src {
		for p := range 2 {
			for d, row := range src[c][p] {
				for t, v := range row {
					dst[c][p][d][t] += v
				}
			}
		}
	}
	return dst
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
			tot.Borrowed[i].Draws[d] = BorrowedShare(app[d], ctl[d])
		}
	}
	for _, r := range regions {
		tot.Weekly = addWeekly(tot.Weekly, r.Weekly)
	}
	return &PanelResult{Regions: regions, Total: tot}, nil
}

// The review tables of a panel's sum over regions (sensitivity.csv,
// fitted.csv, curves.csv, returns.csv): each region runs through the same
// forward simulator on its own data and projected draws, and the regions
// are added draw by draw in absolute units before any summary, so an
// interval of the sum is the sum's, not a sum of intervals.

// SensitivitiesPanel returns Sensitivities of the sum over regions: the
// via-search effect of every region under each rho, added draw by draw; the
// rho at which the sum's posterior mean reaches zero comes from the summed
// closed form.
func SensitivitiesPanel(in *PanelInputs, rhos []float64) ([]Sensitivity, error) {
	var out []Sensitivity
	for g, name := range in.Data.Regions {
		rin, err := in.Region(g)
		if err != nil {
			return nil, err
		}
		ss, err := Sensitivities(rin, rhos)
		if err != nil {
			return nil, fmt.Errorf("region %s: %w", name, err)
		}
		if out == nil {
			out = ss
			continue
		}
		for c := range out {
			for i, row := range ss[c].Draws {
				for d, v := range row {
					out[c].Draws[i][d] += v
				}
			}
			out[c].p += ss[c].p
			out[c].q += ss[c].q
		}
	}
	for c := range out {
		out[c].Zero = zeroOf(out[c].p, out[c].q)
	}
	return out, nil
}

// FittedPanel returns Fitted of the sum over regions: observed, expected
// and predictive series added over regions per draw. Region g's noise of
// stage k comes from the PCG stream (seed, 2 + 2g + k).
func FittedPanel(in *PanelInputs, seed uint64) ([]fitfolder.Fitted, error) {
	sc0 := in.Data.Scaled[0]
	acc := newFittedSum(sc0.T, len(in.DemandDraws.Rows))
	for g, name := range in.Data.Regions {
		rin, err := in.Region(g)
		if err != nil {
			return nil, err
		}
		s := uint64(2 + 2*g)
		if err := acc.add(rin, [2]*rand.Rand{rand.New(rand.NewPCG(seed, s)), rand.New(rand.NewPCG(seed, s+1))}); err != nil {
			return nil, fmt.Errorf("region %s: %w", name, err)
		}
	}
	return acc.rows(sc0.Weeks), nil
}

// panelSpend is one channel's spend summed over regions: the largest and
// the mean weekly sum, and each region's share of the total (0 for a region
// that never runs it).
type panelSpend struct {
	max, current float64
	share        []float64
}

func spendOf(in *PanelInputs, raw func(sc *model.Scaled) []float64) panelSpend {
	sc0 := in.Data.Scaled[0]
	week := make([]float64, sc0.T)
	byRegion := make([]float64, len(in.Data.Scaled))
	for g, sc := range in.Data.Scaled {
		for t, v := range raw(sc) {
			week[t] += v
			byRegion[g] += v
		}
	}
	var s panelSpend
	total := 0.0
	for _, v := range week {
		s.max = math.Max(s.max, v)
		total += v
	}
	s.current = total / float64(sc0.T)
	s.share = make([]float64, len(byRegion))
	if total > 0 {
		for g, v := range byRegion {
			s.share[g] = v / total
		}
	}
	return s
}

// CurvesPanel returns Curves of the sum over regions: on a grid of weekly
// spend summed over regions, from zero to twice its largest week, each
// region receives its share of the channel's spend over the data, and the
// regions' steady responses are added per draw.
func CurvesPanel(in *PanelInputs, points int) ([]fitfolder.Curve, error) {
	sc0 := in.Data.Scaled[0]
	nd := len(in.DemandDraws.Rows)
	nu, ns := len(sc0.UpperNames), len(sc0.SearchNames)
	upper, search := make([]panelSpend, nu), make([]panelSpend, ns)
	via, dir := make([][][]float64, nu), make([][][]float64, nu) // [channel][point][draw]
	for c := range upper {
		upper[c] = spendOf(in, func(sc *model.Scaled) []float64 { return sc.RawUpper[c] })
		via[c], dir[c] = grid(points, nd), grid(points, nd)
	}
	ctl := make([][][]float64, ns)
	for k := range search {
		search[k] = spendOf(in, func(sc *model.Scaled) []float64 { return sc.RawSearch[k] })
		ctl[k] = grid(points, nd)
	}
	for g, name := range in.Data.Regions {
		rin, err := in.Region(g)
		if err != nil {
			return nil, err
		}
		sc := rin.Data
		sim, err := forward.New(sc, rin.Demand, rin.Outcome)
		if err != nil {
			return nil, fmt.Errorf("region %s: %w", name, err)
		}
		draws := make([]forward.Draw, nd)
		for d := range draws {
			draws[d] = sim.Draw(rin.DemandDraws.Rows[d], rin.OutcomeDraws.Rows[d])
		}
		for c, sp := range upper {
			if !(sp.share[g] > 0) {
				continue
			}
			for i := range points {
				x := 2 * sp.max * float64(i) / float64(points-1) * sp.share[g] / sc.UpperScale[c]
				for d, dr := range draws {
					v, w := sim.Steady(dr, c, x)
					via[c][i][d] += v
					dir[c][i][d] += w
				}
			}
		}
		for k, sp := range search {
			if !(sp.share[g] > 0) {
				continue
			}
			for i := range points {
				x := 2 * sp.max * float64(i) / float64(points-1) * sp.share[g] / sc.SearchScale[k]
				for d, dr := range draws {
					ctl[k][i][d] += sim.SteadySearch(dr, k, x)
				}
			}
		}
	}
	var out []fitfolder.Curve
	tot := make([]float64, nd)
	for c, col := range sc0.UpperNames {
		for i := range points {
			for d := range tot {
				tot[d] = via[c][i][d] + dir[c][i][d]
			}
			spend := 2 * upper[c].max * float64(i) / float64(points-1)
			for _, p := range []struct {
				name string
				x    []float64
			}{{"direct", dir[c][i]}, {"via_search", via[c][i]}, {"total", tot}} {
				s := Summarise(p.x)
				out = append(out, fitfolder.Curve{Channel: col, Path: p.name, WeeklySpend: spend, Mean: s.Mean, Q05: s.Q05, Q95: s.Q95, CurrentWeeklySpend: upper[c].current})
			}
		}
	}
	for k, col := range sc0.SearchNames {
		for i := range points {
			s := Summarise(ctl[k][i])
			spend := 2 * search[k].max * float64(i) / float64(points-1)
			out = append(out, fitfolder.Curve{Channel: col, Path: "controlled", WeeklySpend: spend, Mean: s.Mean, Q05: s.Q05, Q95: s.Q95, CurrentWeeklySpend: search[k].current})
		}
	}
	return out, nil
}

func grid(points, nd int) [][]float64 {
	out := make([][]float64, points)
	for i := range out {
		out[i] = make([]float64, nd)
	}
	return out
}

// ReturnsPanel returns Returns of the sum over regions: the return on spend
// and cost per incremental outcome of total (PanelResult Total), and the
// marginal return at the current weekly spend when every region's spend on
// the channel moves by the same fraction: per draw, the regions' changes in
// steady weekly outcome added, per unit of the summed change in spend.
func ReturnsPanel(in *PanelInputs, total *Result) ([]fitfolder.Return, error) {
	out := spendReturns(total)
	sc0 := in.Data.Scaled[0]
	nd := len(in.DemandDraws.Rows)
	spend := make([]panelSpend, len(sc0.UpperNames))
	marg := make([][]float64, len(spend))
	for c := range spend {
		spend[c] = spendOf(in, func(sc *model.Scaled) []float64 { return sc.RawUpper[c] })
		marg[c] = make([]float64, nd)
	}
	for g, name := range in.Data.Regions {
		rin, err := in.Region(g)
		if err != nil {
			return nil, err
		}
		sc := rin.Data
		sim, err := forward.New(sc, rin.Demand, rin.Outcome)
		if err != nil {
			return nil, fmt.Errorf("region %s: %w", name, err)
		}
		for c, sp := range spend {
			cur := sp.current * sp.share[g] // the region's mean weekly spend
			if !(cur > 0) {
				continue
			}
			lo, hi := (1-marginalStep)*cur/sc.UpperScale[c], (1+marginalStep)*cur/sc.UpperScale[c]
			for d := range nd {
				dr := sim.Draw(rin.DemandDraws.Rows[d], rin.OutcomeDraws.Rows[d])
				v1, d1 := sim.Steady(dr, c, lo)
				v2, d2 := sim.Steady(dr, c, hi)
				marg[c][d] += (v2 + d2) - (v1 + d1)
			}
		}
	}
	for c, col := range sc0.UpperNames {
		cur := spend[c].current
		if !(cur > 0) {
			continue
		}
		for d := range marg[c] {
			marg[c][d] /= 2 * marginalStep * cur
		}
		s := Summarise(marg[c])
		out = append(out, fitfolder.Return{Channel: col, Window: "all", Measure: MarginalReturn,
			Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95})
	}
	return out, nil
}

// PanelTables are a panel's split for its files: the sum over regions, the
// region tables, and per region only the draws RegionDifferences reads.
type PanelTables struct {
	// Total is PanelResult's Total.
	Total *Result
	// Effects and Borrowed are RegionEffectsTable and RegionBorrowedTable.
	Effects  []fitfolder.RegionEffect
	Borrowed []fitfolder.RegionBorrowed
	// Differences is RegionDifferences against Total.
	Differences []fitfolder.RegionDifference
}

// SplitPanelTables is SplitPanel made into its tables region by region:
// each region's rows are made as soon as it is split, it is added to the
// running sum, and of its draws only the upper channels' via-search and
// total effects are kept until RegionDifferences has compared it with the
// sum. For 40 to 200 regions and thousands of draws this keeps about a
// third of the per-region draws SplitPanel keeps (and no weekly draws).
func SplitPanelTables(in *PanelInputs, windows []window.Window) (*PanelTables, error) {
	out := &PanelTables{}
	var kept []*Result
	weekly, err := eachRegion(in, windows, func(name string, r *Result) error {
		one := []string{name}
		out.Effects = append(out.Effects, RegionEffectsTable(one, []*Result{r})...)
		out.Borrowed = append(out.Borrowed, RegionBorrowedTable(one, []*Result{r})...)
		if out.Total == nil {
			s, err := SumRegions([]RegionResult{{name, r}})
			if err != nil {
				return err
			}
			out.Total = s.Total
		} else {
			s, err := SumRegions([]RegionResult{{"", out.Total}, {name, r}})
			if err != nil {
				return err
			}
			out.Total = s.Total
		}
		lean := &Result{}
		for _, e := range r.Effects {
			if e.Path == "via_search" || e.Path == "total" {
				lean.Effects = append(lean.Effects, e)
			}
		}
		kept = append(kept, lean)
		return nil
	})
	if err != nil {
		return nil, err
	}
	out.Total.Weekly = weekly
	if out.Differences, err = RegionDifferences(in.Data.Regions, kept, out.Total); err != nil {
		return nil, err
	}
	return out, nil
}
