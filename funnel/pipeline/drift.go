package pipeline

import (
	"sort"
	"time"

	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/stat"
	"spillway/funnel/window"
)

// DriftWeek is the posterior of one drifting coefficient's multiplier
// exp(f(t)) in one week: how effective the channel was that week relative to
// its average over the data (1).
type DriftWeek struct {
	Channel string
	// Path is what the coefficient drives: "via_search" (the upper-funnel
	// channel's lift of queries, alpha), "direct" (delta) or "controlled"
	// (paid search's own effect, beta).
	Path           string
	Week           time.Time
	Mean, Q05, Q95 float64
}

// Paths of DriftWeek.
const (
	DriftViaSearch  = "via_search"
	DriftDirect     = "direct"
	DriftControlled = "controlled"
)

// driftPath is one drifting coefficient and its multiplier per draw.
type driftPath struct {
	col, path string
	draws     [][]float64 // [draw][week]
}

// driftPaths returns every drifting coefficient's weekly multipliers, by
// channel in the data's order (upper funnel via search, then direct, then
// paid search).
func (f *Fitted) driftPaths() []driftPath {
	return driftPathsOf(f.Data, [2]*model.Stage{f.Stages[0], f.Stages[1]}, [2]*mcmc.Fit{f.Fits[0], f.Fits[1]})
}

// driftPathsOf reads the multipliers from the demand and outcome fits'
// draws through their stages' layouts: a draw's first Layout().Len()
// values are the national-shaped part (all of a national draw; a region
// panel's base, where the drift, shared by the regions, sits).
func driftPathsOf(sc *model.Scaled, stages [2]*model.Stage, fits [2]*mcmc.Fit) []driftPath {
	var out []driftPath
	add := func(k int, col, path string) {
		st := stages[k]
		if st == nil || fits[k] == nil {
			return
		}
		j := st.ChannelIndex(col)
		l := st.Layout()
		if j < 0 || !l.Channels()[j].Drift.Has() {
			return
		}
		var draws [][]float64 // [draw][week]
		for _, c := range fits[k].Chains {
			r, _ := c.Draws.Dims()
			for i := 0; i < r; i++ {
				draws = append(draws, l.View(c.Draws.RawRowView(i)[:l.Len()]).Multiplier(make([]float64, sc.T), j))
			}
		}
		out = append(out, driftPath{col, path, draws})
	}
	for _, col := range sc.UpperNames {
		add(0, col, DriftViaSearch)
		add(1, col, DriftDirect)
	}
	for _, col := range sc.SearchNames {
		add(1, col, DriftControlled)
	}
	return out
}

// Drifts returns every drifting coefficient's weekly multiplier, by
// channel in the data's order (upper funnel via search, then direct, then
// paid search), week by week; nil when nothing drifts.
func (f *Fitted) Drifts() []DriftWeek { return drifts(f.driftPaths(), f.Data) }

func drifts(paths []driftPath, sc *model.Scaled) []DriftWeek {
	var out []DriftWeek
	for _, dp := range paths {
		col, path, draws := dp.col, dp.path, dp.draws
		w := make([]float64, len(draws))
		for t := 0; t < sc.T; t++ {
			for d := range draws {
				w[d] = draws[d][t]
			}
			m := stat.Mean(w)
			sort.Float64s(w)
			out = append(out, DriftWeek{Channel: col, Path: path, Week: sc.Weeks[t], Mean: m, Q05: stat.Quantile(w, 0.05), Q95: stat.Quantile(w, 0.95)})
		}
	}
	return out
}

// DriftChange says whether a drifting coefficient's effectiveness changed
// over the data: its mean multiplier in the last full quarter against the
// first, per draw.
type DriftChange struct {
	Channel, Path string
	// First and Last name the first and last quarters with at least
	// FullQuarter weeks of data.
	First, Last string
	// Ratio summarises the last quarter's mean multiplier over the first's:
	// its posterior mean and 90% interval.
	Mean, Q05, Q95 float64
	// Up and Down are the posterior probabilities that effectiveness rose
	// or fell by more than Material (10%) from the first quarter to the
	// last: P(ratio > 1.1) and P(ratio < 1/1.1).
	Up, Down float64
	// Peak and Trough name the quarters with the highest and the lowest
	// posterior mean multiplier, PeakMean and TroughMean those means.
	Peak, Trough         string
	PeakMean, TroughMean float64
}

// FullQuarter is the fewest weeks of a quarter DriftChanges compares.
const FullQuarter = 12

// Material is the relative change in effectiveness DriftChange calls
// material: 10%.
const Material = 0.1

// DriftChanges returns, for every drifting coefficient, how its
// effectiveness moved between the first and the last full quarter; nil
// when nothing drifts or the data hold fewer than two full quarters.
func (f *Fitted) DriftChanges() []DriftChange { return driftChanges(f.driftPaths(), f.Data.Weeks) }

func driftChanges(paths []driftPath, weeks []time.Time) []DriftChange {
	var qs []window.Window
	for _, q := range window.Quarters(weeks)[1:] {
		if q.Weeks() >= FullQuarter {
			qs = append(qs, q)
		}
	}
	if len(qs) < 2 {
		return nil
	}
	first, last := qs[0], qs[len(qs)-1]
	mean := func(m []float64, q window.Window) float64 { return stat.Mean(m[q.From : q.To+1]) }
	var out []DriftChange
	for _, dp := range paths {
		c := DriftChange{Channel: dp.col, Path: dp.path, First: first.Name, Last: last.Name}
		ratio := make([]float64, len(dp.draws))
		for d, m := range dp.draws {
			ratio[d] = mean(m, last) / mean(m, first)
			if ratio[d] > 1+Material {
				c.Up++
			}
			if ratio[d] < 1/(1+Material) {
				c.Down++
			}
		}
		n := float64(len(ratio))
		c.Up, c.Down = c.Up/n, c.Down/n
		c.Mean = stat.Mean(ratio)
		sort.Float64s(ratio)
		c.Q05, c.Q95 = stat.Quantile(ratio, 0.05), stat.Quantile(ratio, 0.95)
		for i, q := range qs {
			s := 0.0
			for _, m := range dp.draws {
				s += mean(m, q)
			}
			s /= n
			if i == 0 || s > c.PeakMean {
				c.Peak, c.PeakMean = q.Name, s
			}
			if i == 0 || s < c.TroughMean {
				c.Trough, c.TroughMean = q.Name, s
			}
		}
		out = append(out, c)
	}
	return out
}
