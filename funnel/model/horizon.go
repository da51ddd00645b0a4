package model

import (
	"fmt"
	"math"
)

// SeasonAt returns the seasonal regressors of week index i (0-based, week
// t = i+1 of DESIGN.md): cos(2 pi t/P), cos(4 pi t/P), sin(2 pi t/P),
// sin(4 pi t/P), the regressors of c[1], c[2], d[1], d[2].
func SeasonAt(i int) [4]float64 {
	t := float64(i + 1)
	w := 2 * math.Pi * t / SeasonPeriod
	return [4]float64{math.Cos(w), math.Cos(2 * w), math.Sin(w), math.Sin(2 * w)}
}

// Continue returns the series of st's regressors over weeks 0..weeks-1
// (weeks >= sc.T), st built from sc. In the data's weeks each is the data's
// own series (not copied when weeks == sc.T). Past the data's last week
// the trend continues on the line ScaleTrain drew (tau is 1 at the last
// training week), the seasons continue, every control sits at its mean (0
// standardised) and the queries are NaN: they are unknown there, and
// whoever runs the model forward supplies them.
func (sc *Scaled) Continue(st *Stage, weeks int) ([][]float64, error) {
	if weeks < sc.T {
		return nil, fmt.Errorf("model: cannot continue %d weeks of data to %d", sc.T, weeks)
	}
	last := sc.T - 1 // the last training week: tau is 1 there
	if sc.Mask != nil {
		for i, m := range sc.Mask {
			if !m {
				last = i
			}
		}
	}
	out := make([][]float64, len(st.Regressors))
	for i, r := range st.Regressors {
		if weeks == sc.T {
			out[i] = r.X
			continue
		}
		x := make([]float64, weeks)
		copy(x, r.X)
		var at func(t int) float64
		switch {
		case same(r.X, sc.Tau):
			at = func(t int) float64 {
				if last > 0 {
					return float64(t) / float64(last)
				}
				return 0
			}
		case same(r.X, sc.Queries):
			at = func(int) float64 { return math.NaN() }
		default:
			for k := range sc.Season {
				if same(r.X, sc.Season[k]) {
					at = func(t int) float64 { return SeasonAt(t)[k] }
				}
			}
			for k := range sc.Controls {
				if same(r.X, sc.Controls[k]) {
					at = func(int) float64 { return 0 }
				}
			}
		}
		if at == nil {
			return nil, fmt.Errorf("model: regressor %s of the %s stage is not a series of the data; it cannot be continued", r.Name, st.Name)
		}
		for t := sc.T; t < weeks; t++ {
			x[t] = at(t)
		}
		out[i] = x
	}
	return out, nil
}

// same reports whether a and b are the same series (one backing array):
// the stages hold the scaled data's own series as regressors.
func same(a, b []float64) bool {
	return len(a) > 0 && len(a) == len(b) && &a[0] == &b[0]
}
