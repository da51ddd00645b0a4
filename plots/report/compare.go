package report

import (
	"fmt"
	"math"
	"slices"

	"spillway/funnel/fitfolder"
	"spillway/funnel/stat"
)

// Change is the difference of one effect between two windows, computed
// draw by draw from effect_draws.csv (the same posterior draw in both
// windows), so that its interval reflects the parameters the windows share.
// Values are in outcome units, or fractions for the mediated share.
type Change struct {
	Channel, Path string
	// Window and Base are the windows compared: Change = Window − Base.
	Window, Base string
	// Mean, Q05 and Q95 summarise the per-draw differences.
	Mean, Q05, Q95 float64
	// BaseMean is the posterior mean in Base, for relative changes.
	BaseMean float64
	// Draws is the number of paired draws.
	Draws int
}

// ExcludesZero reports whether the 90% interval of the change lies wholly
// above or below zero.
func (c Change) ExcludesZero() bool { return c.Q05 > 0 || c.Q95 < 0 }

// Relative returns the change as a fraction of the base window's mean
// (NaN when that is zero).
func (c Change) Relative() float64 {
	if c.BaseMean == 0 {
		return math.NaN()
	}
	return c.Mean / c.BaseMean
}

// pairedDraws returns the values of the draws two series share, in draw
// order. It is an error when their draw numbers differ: the windows must
// come from the same posterior.
func pairedDraws(a, b fitfolder.DrawSeries) (va, vb []float64, err error) {
	if !slices.Equal(a.Draw, b.Draw) {
		return nil, nil, fmt.Errorf("the two windows have different posterior draws (%d and %d); rerun spillway split", len(a.Draw), len(b.Draw))
	}
	return a.Value, b.Value, nil
}

// Compare returns the change of channel's effect through path ("direct",
// "via_search", "total" or "mediated_share") from window base to window.
// The mediated share is computed per draw as via_search / total in each
// window. The error says which draws are missing.
func Compare(f *fitfolder.Fit, channel, path, window, base string) (Change, error) {
	c := Change{Channel: channel, Path: path, Window: window, Base: base}
	get := func(p, w string) (fitfolder.DrawSeries, error) {
		s, ok := f.EffectDraws[fitfolder.DrawKey{Channel: channel, Path: p, Window: w}]
		if !ok || len(s.Value) == 0 {
			return s, fmt.Errorf("effect_draws.csv has no draws for %s %s in window %s", channel, p, w)
		}
		return s, nil
	}
	var va, vb []float64
	if path == fitfolder.PathMediatedShare {
		share := func(w string) (fitfolder.DrawSeries, error) {
			via, err := get(fitfolder.PathViaSearch, w)
			if err != nil {
				return via, err
			}
			tot, err := get(fitfolder.PathTotal, w)
			if err != nil {
				return tot, err
			}
			v, t, err := pairedDraws(via, tot)
			if err != nil {
				return via, err
			}
			out := fitfolder.DrawSeries{Draw: via.Draw, Value: make([]float64, len(v))}
			for i := range v {
				out.Value[i] = v[i] / t[i]
			}
			return out, nil
		}
		a, err := share(window)
		if err != nil {
			return c, err
		}
		b, err := share(base)
		if err != nil {
			return c, err
		}
		if va, vb, err = pairedDraws(a, b); err != nil {
			return c, err
		}
	} else {
		a, err := get(path, window)
		if err != nil {
			return c, err
		}
		b, err := get(path, base)
		if err != nil {
			return c, err
		}
		if va, vb, err = pairedDraws(a, b); err != nil {
			return c, err
		}
	}
	d := make([]float64, len(va))
	for i := range va {
		d[i] = va[i] - vb[i]
	}
	c.Draws = len(d)
	c.Mean = stat.Mean(d)
	c.BaseMean = stat.Mean(vb)
	slices.Sort(d)
	c.Q05, c.Q95 = stat.Quantile(d, 0.05), stat.Quantile(d, 0.95)
	return c, nil
}
