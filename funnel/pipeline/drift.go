package pipeline

import (
	"sort"
	"time"

	"spillway/funnel/stat"
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

// Drifts returns every drifting coefficient's weekly multiplier, by
// channel in the data's order (upper funnel via search, then direct, then
// paid search), week by week; nil when nothing drifts.
func (f *Fitted) Drifts() []DriftWeek {
	sc := f.Data
	var out []DriftWeek
	add := func(k int, col, path string) {
		st := f.Stages[k]
		j := st.ChannelIndex(col)
		l := st.Layout()
		if j < 0 || !l.Channels()[j].Drift.Has() || f.Fits[k] == nil {
			return
		}
		var draws [][]float64 // [draw][week]
		for _, c := range f.Fits[k].Chains {
			r, _ := c.Draws.Dims()
			for i := 0; i < r; i++ {
				draws = append(draws, l.View(c.Draws.RawRowView(i)).Multiplier(make([]float64, sc.T), j))
			}
		}
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
	for _, col := range sc.UpperNames {
		add(0, col, DriftViaSearch)
		add(1, col, DriftDirect)
	}
	for _, col := range sc.SearchNames {
		add(1, col, DriftControlled)
	}
	return out
}
