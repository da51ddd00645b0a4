package model

import (
	"fmt"
	"math"

	"spillway/funnel/data"
	"spillway/funnel/transform"
)

// PriorBreak is the default prior of a measurement break's log factor,
// log kappa ~ Normal(0, 0.5): a factor between 0.38 and 2.7 with 95%
// probability, centred on "the two measurements agree".
var PriorBreak = Prior{Normal, 0, 0.5}

// PriorLatent is the prior of a latent error z[t] of exposure observed
// with error: the standard normal of a non-centred parameterisation.
var PriorLatent = Prior{Normal, 0, 1}

// Break is a known change in how a channel's exposure is measured (a vendor
// or method change) at week At (0-based, At >= 1): the exposure of the weeks
// before At is multiplied by kappa = exp(Param) before the adstock, so the
// old measurement is put on the new one's scale, and the data, not an
// assumption, say how the two compare. The newest measurement is the
// reference: weeks from At on, and every plan after the data, are taken as
// reported. Each stage learns its own factor (log_break_alpha[col] in the
// demand stage, log_break_delta[col] in the outcome stage), which keeps the
// stages' posteriors apart and so fitted separately; the model is then a
// little looser than one with a shared factor.
type Break struct {
	At    int
	Param Param
}

// breakName returns the parameter name of the log factor of channel col's
// break on the path whose coefficient is coef ("alpha", "delta").
func breakName(coef, col string) string { return "log_break_" + coef + "[" + col + "]" }

// Error is exposure observed with multiplicative error (errors in
// variables): observed x[t] = true x[t] exp(e[t]), e[t] ~ Normal(0, SD^2)
// independently by week, SD stated by the user. The true exposure of each
// week with exposure, x[t] exp(-SD z[t]), is latent, sampled non-centred
// with z[t] ~ Normal(0, 1), one parameter per such week (Params, in the
// order of Weeks), so the intervals carry the doubt about the exposure. As
// with a break, each stage has its own latent weeks.
type Error struct {
	SD     float64
	Weeks  []int // weeks with exposure > 0, the ones with a latent value
	Params []Param
}

// errorName returns the parameter name of the latent error of week t
// (0-based) of channel col's exposure on the path whose coefficient is
// coef.
func errorName(coef, col string, t int) string {
	return fmt.Sprintf("xerr_%s[%s,%d]", coef, col, t+1)
}

// measureParams returns the parameters of channel c's exposure measurement,
// in draw order: a break's log factor, the latent errors, then the
// frequency curve's Kf and Sf.
func (c *Channel) measureParams() []*Param {
	var out []*Param
	if c.Break != nil {
		out = append(out, &c.Break.Param)
	}
	if c.Error != nil {
		for i := range c.Error.Params {
			out = append(out, &c.Error.Params[i])
		}
	}
	if c.Freq != nil {
		out = append(out, &c.Freq.Params[0], &c.Freq.Params[1])
	}
	return out
}

// measure sets m's measurement from v, the channel's measureParams values
// in order, and returns how many it read.
func (c *Channel) measure(m *Media, v []float64) int {
	k := 0
	if c.Break != nil {
		m.Before, m.Factor = c.Break.At, math.Exp(v[k])
		k++
	}
	if e := c.Error; e != nil {
		m.ErrSD, m.ErrWeeks, m.ErrZ = e.SD, e.Weeks, v[k:k+len(e.Weeks)]
		k += len(e.Weeks)
	}
	if f := c.Freq; f != nil {
		m.Freq, m.FreqAfter, m.FreqK, m.FreqS = f.F, f.After, v[k], v[k+1]
		k += 2
	}
	return k
}

// measuredTerm is a media channel whose exposure is measured with doubt:
// coef * H(adstock(x~; lam); K, S) on the input
//
//	x~[t] = x[t] kappa^[t < at] exp(-sd z[t])
//
// with kappa = exp(nat[kb]) a measurement break's factor (kb < 0: none) and
// z[t] the latent errors (nat[zk+i] for week weeks[i]; sd 0: none). It is a
// channelTerm running on x~ (its x points at the scratch xs), which gives
// the gradient in coef, lam, K and S; the gradient in the input comes back
// through the adstock, which is linear in x~: with r[t] = d lp/d a[t],
// d lp/d x~[t] = (1 - lam) sum_{u >= t} lam^(u-t) r[u], one backward
// recursion. Then d x~[t]/d log kappa = x~[t] before the break and
// d x~[t]/d z[t] = -sd x~[t].
type measuredTerm struct {
	*channelTerm
	x0    []float64 // the observed scaled exposure
	at    int       // first week of the new measurement (0: no break)
	kb    int       // position of log kappa, -1
	sd    float64   // the error's sd (0: none)
	zk    int       // position of the first latent error
	weeks []int     // weeks with a latent error
	fk    int       // position of Kf (Sf next), -1: no frequency
	freq  []float64 // the frequency of each week
	xs    []float64 // x~, what the channel term reads
	dh    []float64 // dH/da
	gx    []float64 // scratch: d lp/d x~
}

func newMeasuredTerm(ch *channelTerm, at, kb int, sd float64, zk int, weeks []int, fk int, freq []float64) *measuredTerm {
	if ch.linear || kb >= 0 && (at < 1 || at >= len(ch.x)) || fk >= 0 && len(freq) != len(ch.x) {
		panic("model: a measured exposure needs a saturating channel, a break a week inside the data after its first, a frequency every week")
	}
	m := &measuredTerm{channelTerm: ch, x0: ch.x, at: at, kb: kb, sd: sd, zk: zk, weeks: weeks, fk: fk, freq: freq}
	m.alloc()
	return m
}

func (m *measuredTerm) alloc() {
	T := len(m.x0)
	m.xs, m.dh, m.gx = make([]float64, T), make([]float64, T), make([]float64, T)
	m.channelTerm.x = m.xs
}

func (m *measuredTerm) clone() predictor {
	c := *m
	c.channelTerm = m.channelTerm.clone().(*channelTerm)
	c.alloc()
	return &c
}

// input writes x~ at the natural values v into xs.
func (m *measuredTerm) input(v []float64) {
	copy(m.xs, m.x0)
	if m.kb >= 0 {
		kappa := math.Exp(v[m.kb])
		for t := range m.at {
			m.xs[t] *= kappa
		}
	}
	if m.sd > 0 {
		for i, t := range m.weeks {
			m.xs[t] *= math.Exp(-m.sd * v[m.zk+i])
		}
	}
	if m.fk >= 0 {
		k, s := v[m.fk], v[m.fk+1]
		for t, f := range m.freq {
			g, _, _ := freqGain(f, k, s)
			m.xs[t] *= g
		}
	}
}

func (m *measuredTerm) prepare(nat []float64, grad bool) bool {
	m.input(nat)
	ok := m.channelTerm.prepare(nat, grad)
	if grad {
		s := nat[m.k[3]]
		for t, h := range m.h {
			m.dh[t] = 0
			if a := m.a[t]; a > 0 {
				m.dh[t] = s * h * (1 - h) / a
			}
		}
	}
	return ok
}

func (m *measuredTerm) backward(g, nat, w []float64, sw, gmu float64) {
	m.channelTerm.backward(g, nat, w, sw, gmu)
	b, lam := nat[m.k[0]], nat[m.k[1]]
	off := 0.0
	if m.centred {
		off = (sw + gmu) / float64(len(w))
	}
	u := 0.0
	for t := len(w) - 1; t >= 0; t-- {
		u = b*(w[t]-off)*m.dh[t] + lam*u
		m.gx[t] = (1 - lam) * u * m.xs[t] // d lp/d log x~[t]
	}
	if m.kb >= 0 {
		s := 0.0
		for t := range m.at {
			s += m.gx[t]
		}
		g[m.kb] += s
	}
	for i, t := range m.weeks {
		g[m.zk+i] -= m.sd * m.gx[t]
	}
	if m.fk >= 0 {
		k, s := nat[m.fk], nat[m.fk+1]
		var sk, ss float64
		for t, f := range m.freq {
			_, dk, ds := freqGain(f, k, s)
			sk += m.gx[t] * dk
			ss += m.gx[t] * ds
		}
		g[m.fk] += sk
		g[m.fk+1] += ss
	}
}

// unconstrain writes the coefficient's sampling coordinate at the natural
// values v (the response run on x~) and returns what shift would.
func (m *measuredTerm) unconstrain(dst, v []float64, par []param) float64 {
	m.input(v)
	return m.channelTerm.unconstrain(dst, v, par)
}

var _ predictor = (*measuredTerm)(nil)

// measured returns m's input series for the exposure x observed from the
// data's first week: x with the weeks before a measurement break times the
// break's factor and each week with a latent error times exp(-ErrSD z),
// written into dst; x itself when the channel has neither. Weeks past the
// data are taken as given.
func (m Media) measured(dst, x []float64) []float64 {
	if m.Before <= 0 && m.ErrSD == 0 && m.Freq == nil {
		return x
	}
	dst = resizeTo(dst, len(x))
	copy(dst, x)
	if m.Freq != nil {
		for t := range dst {
			g, _, _ := freqGain(m.freqAt(t), m.FreqK, m.FreqS)
			dst[t] *= g
		}
	}
	for t := range min(m.Before, len(x)) {
		dst[t] *= m.Factor
	}
	if m.ErrSD > 0 {
		for i, t := range m.ErrWeeks {
			if t < len(x) {
				dst[t] *= math.Exp(-m.ErrSD * m.ErrZ[i])
			}
		}
	}
	return dst
}

// responseMeasured is Response for a channel whose exposure is measured
// with a break or an error: x from the data's first week, through
// measured first.
func (m Media) responseMeasured(dst, x []float64) []float64 {
	dst = m.measured(dst, x)
	if m.Linear {
		return dst
	}
	transform.Adstock(dst, dst, m.Lam)
	for i, a := range dst {
		dst[i] = transform.Hill(a, m.K, m.S)
	}
	return dst
}

// useExposure makes the upper-funnel channels with an exposure column run
// on it: Upper[c] becomes the exposure over its mean over the training
// weeks with exposure > 0, and UpperScale[c] the spend that buys one such
// unit at the latest cost per unit (CostPerUnit over the training data's
// last RecentWeeks weeks with spend, from the channel's break on).
func (sc *Scaled) useExposure(s data.Series, spec data.Spec, in func(int) bool) {
	n := len(s.Upper)
	sc.RawExposure, sc.ExposureScale = make([][]float64, n), make([]float64, n)
	for c, x := range s.Exposure {
		if _, ok := spec.ExposureOf(spec.Upper[c]); !ok || x == nil {
			continue
		}
		sum, k := 0.0, 0
		for t, v := range x {
			if in(t) && v > 0 {
				sum += v
				k++
			}
		}
		d := sum / float64(k)
		sc.RawExposure[c], sc.ExposureScale[c] = x, d
		sc.Upper[c] = scaled(x, d)
		if m, _ := spec.ExposureOf(spec.Upper[c]); m.Error > 0 {
			if sc.Errors == nil {
				sc.Errors = make([]float64, n)
			}
			sc.Errors[c] = m.Error
		}
		if at := spec.BreakWeek(spec.Upper[c], sc.Weeks); at > 0 {
			if sc.Breaks == nil {
				sc.Breaks = make([]int, n)
			}
			sc.Breaks[c] = at
		}
		// the cost per unit of the latest RecentWeeks weeks with spend
		last, from, n := -1, sc.T-1, 0
		for t := sc.T - 1; t >= sc.BreakAt(c) && n < RecentWeeks; t-- {
			if in(t) && s.Upper[c][t] > 0 {
				if last < 0 {
					last = t
				}
				from = t
				n++
			}
		}
		if last < 0 {
			last = sc.T - 1
		}
		sc.UpperScale[c] = sc.costPerUnit(c, from, last, in)
		if m, _ := spec.ExposureOf(spec.Upper[c]); m.Frequency != "" && s.Frequency != nil && s.Frequency[c] != nil {
			if sc.Freq == nil {
				sc.Freq, sc.FreqRecent = make([][]float64, n), make([]float64, n)
			}
			sc.Freq[c] = s.Frequency[c]
			imp, reach := 0.0, 0.0
			for t := from; t <= last; t++ {
				if in(t) {
					imp += x[t] * s.Frequency[c][t]
					reach += x[t]
				}
			}
			sc.FreqRecent[c] = imp / reach
		}
	}
}

// RecentWeeks is the number of latest weeks with spend whose cost per unit
// converts spend into exposure for response curves and marginal returns
// (a quarter; this tool's choice): when the cost per unit moves, the
// latest price is the one a decision faces.
const RecentWeeks = 13

// Exposed reports whether upper-funnel channel c runs on an exposure column.
func (sc *Scaled) Exposed(c int) bool {
	return sc.RawExposure != nil && sc.RawExposure[c] != nil
}

// ErrorSD returns the sd of upper-funnel channel c's exposure error, on the
// log scale (0 when it is taken as measured).
func (sc *Scaled) ErrorSD(c int) float64 {
	if sc.Errors == nil {
		return 0
	}
	return sc.Errors[c]
}

// BreakAt returns upper-funnel channel c's measurement break week (0 when
// it has none).
func (sc *Scaled) BreakAt(c int) int {
	if sc.Breaks == nil {
		return 0
	}
	return sc.Breaks[c]
}

// CostPerUnit returns the spend that buys one unit of upper-funnel channel
// c's input (Upper[c]) at the cost per unit of weeks from..to: total spend
// over total scaled exposure in the weeks of from..to that have both, and
// from the channel's measurement break on (the newest measurement, which
// plans are in; weeks before it are left out, and if none are left, the
// weeks from the break to the data's end are used). For a channel that
// runs on spend it is UpperScale[c]. This is the one rule by which every
// what-if turns spend into exposure: a budget plan at the cost per unit of
// its pattern's weeks, response curves and marginal returns at the latest
// (UpperScale: the last RecentWeeks weeks with spend); a counterfactual that scales
// the data's spend scales each week's own exposure, at that week's own
// cost per unit.
func (sc *Scaled) CostPerUnit(c, from, to int) float64 {
	if !sc.Exposed(c) {
		return sc.UpperScale[c]
	}
	return sc.costPerUnit(c, from, to, func(int) bool { return true })
}

func (sc *Scaled) costPerUnit(c, from, to int, in func(int) bool) float64 {
	from = max(from, sc.BreakAt(c))
	if from > to {
		from, to = sc.BreakAt(c), sc.T-1
	}
	spend, units := 0.0, 0.0
	for t := from; t <= to; t++ {
		if s, x := sc.RawUpper[c][t], sc.Upper[c][t]; in(t) && s > 0 && x > 0 {
			spend += s
			units += x
		}
	}
	if units == 0 {
		return sc.UpperScale[c]
	}
	return spend / units
}
