package mediation

import (
	"math"
	"spillway/funnel/fitfolder"

	"spillway/funnel/forward"
)

// Curves returns the response curves of every upper-funnel channel through
// each path, and of every paid-search channel through its controlled path,
// on a grid of points from zero to twice the channel's largest weekly spend; with constant spend normalised adstock equals the spend, so
// the curve is each path's gain times H(spend; K, S).
func Curves(in *Inputs, points int) ([]fitfolder.Curve, error) {
	sc := in.Data
	sim, err := forward.New(sc, in.Demand, in.Outcome)
	if err != nil {
		return nil, err
	}
	nd := len(in.DemandDraws.Rows)
	draws := make([]forward.Draw, nd)
	for d := range draws {
		draws[d] = sim.Draw(in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d])
	}
	var out []fitfolder.Curve
	for c, col := range sc.UpperNames {
		maxSpend, total := 0.0, 0.0
		for _, v := range sc.RawUpper[c] {
			maxSpend = math.Max(maxSpend, v)
			total += v
		}
		current := total / float64(sc.T)
		via, dir, tot := make([]float64, nd), make([]float64, nd), make([]float64, nd)
		for i := 0; i < points; i++ {
			spend := 2 * maxSpend * float64(i) / float64(points-1)
			x := spend / sc.UpperScale[c]
			for d, dr := range draws {
				via[d], dir[d] = sim.Steady(dr, c, x)
				tot[d] = via[d] + dir[d]
			}
			for _, p := range []struct {
				name string
				x    []float64
			}{{"direct", dir}, {"via_search", via}, {"total", tot}} {
				s := Summarise(p.x)
				out = append(out, fitfolder.Curve{Channel: col, Path: p.name, WeeklySpend: spend, Mean: s.Mean, Q05: s.Q05, Q95: s.Q95, CurrentWeeklySpend: current})
			}
		}
	}
	// paid search's curve is its controlled path: what its spend itself
	// adds, with branded demand held at what it was
	ctl := make([]float64, nd)
	for k, col := range sc.SearchNames {
		maxSpend, total := 0.0, 0.0
		for _, v := range sc.RawSearch[k] {
			maxSpend = math.Max(maxSpend, v)
			total += v
		}
		current := total / float64(sc.T)
		for i := 0; i < points; i++ {
			spend := 2 * maxSpend * float64(i) / float64(points-1)
			x := spend / sc.SearchScale[k]
			for d, dr := range draws {
				ctl[d] = sim.SteadySearch(dr, k, x)
			}
			s := Summarise(ctl)
			out = append(out, fitfolder.Curve{Channel: col, Path: "controlled", WeeklySpend: spend, Mean: s.Mean, Q05: s.Q05, Q95: s.Q95, CurrentWeeklySpend: current})
		}
	}
	return out, nil
}
