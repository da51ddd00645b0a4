package allocate

import (
	"sort"

	"spillway/funnel/stat"
)

// objective is the plan's objective over a set of draws, as a function of
// every channel's amount (currency over the plan's weeks).
type objective struct {
	p   *Problem
	idx []int // the draws it averages over
	// quantile 0: the posterior mean of the plan's incremental outcome;
	// otherwise this quantile of the gain over the current plan, paired
	cur [][]float64 // [channel][i] effect at the current amount (quantile)
	// scratch
	x       [][]float64
	f, fh   [][]float64
	gain    []float64
	lastA   []float64
	lastVal float64
	lastMu  []float64 // per-channel mean effect at lastA
}

func newObjective(p *Problem, idx []int) *objective {
	n := len(p.names)
	o := &objective{p: p, idx: idx, x: make([][]float64, n), f: make([][]float64, n), fh: make([][]float64, n),
		gain: make([]float64, len(idx)), lastMu: make([]float64, n)}
	for c := range o.f {
		o.f[c] = make([]float64, len(idx))
		o.fh[c] = make([]float64, len(idx))
	}
	if p.quantile > 0 {
		o.cur = make([][]float64, n)
		for c := range o.cur {
			o.cur[c] = make([]float64, len(idx))
		}
		o.effects(o.cur, amounts(p.curC), nil)
	}
	return o
}

// effects writes each channel's effect per draw at amounts a into dst;
// only channels with mask[c] (all when mask is nil) are computed.
func (o *objective) effects(dst [][]float64, a []float64, mask []bool) {
	e := o.p.eng
	out := make([][]float64, len(a))
	for c, ac := range a {
		if mask != nil && !mask[c] {
			o.x[c] = nil
			continue
		}
		out[c] = dst[c]
		if ac == 0 {
			o.x[c] = nil
			continue
		}
		o.x[c] = e.series(o.x[c], c, ac)
	}
	e.effects(out, o.x, o.idx)
}

// value returns the objective at amounts a.
func (o *objective) value(a []float64) float64 {
	if o.lastA != nil && equal(a, o.lastA) {
		return o.lastVal
	}
	o.effects(o.f, a, nil)
	o.lastA = append(o.lastA[:0], a...)
	o.lastVal = o.reduce(o.f)
	for c := range o.f {
		o.lastMu[c] = meanOf(o.f[c])
	}
	return o.lastVal
}

// reduce turns per-channel, per-draw effects into the objective.
func (o *objective) reduce(f [][]float64) float64 {
	if o.p.quantile == 0 {
		v := 0.0
		for c := range f {
			v += meanOf(f[c])
		}
		return v
	}
	for i := range o.gain {
		g := 0.0
		for c := range f {
			g += f[c][i] - o.cur[c][i]
		}
		o.gain[i] = g
	}
	sort.Float64s(o.gain)
	return stat.Quantile(o.gain, o.p.quantile)
}

// marginal writes into g[c], for each channel with mask[c], the derivative
// of the posterior mean objective in channel c's amount at a, by forward
// differences with step h[c]. Channels are separable, so one simulation
// moves every channel at once.
func (o *objective) marginal(g, a, h []float64, mask []bool) {
	o.value(a)
	ah := make([]float64, len(a))
	for c := range a {
		ah[c] = a[c] + h[c]
	}
	o.effects(o.fh, ah, mask)
	for c := range a {
		if mask[c] {
			g[c] = (meanOf(o.fh[c]) - o.lastMu[c]) / h[c]
		}
	}
}

func equal(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func meanOf(x []float64) float64 { return stat.Mean(x) }
