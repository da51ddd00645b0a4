package model

import (
	"math"

	"spillway/funnel/data"
	"spillway/funnel/transform"
)

// PriorBreak is the default prior of a measurement break's log factor,
// log kappa ~ Normal(0, 0.5): a factor between 0.44 and 2.7 with 95%
// probability, centred on "the two measurements agree".
var PriorBreak = Prior{Normal, 0, 0.5}

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

// breakTerm is a media channel with a measurement break: coef * H(adstock(
// x_kappa; lam); K, S), x_kappa[t] = kappa x[t] before the break and x[t]
// from it on, kappa = exp(nat[kb]). The adstock is linear in x, so
// a = a_old kappa + a_new and d a/d kappa = a_old, the adstock of the old
// weeks' exposure alone; the response's derivative in kappa is
// dH/da a_old = S H (1 - H) a_old / a. It is a channelTerm running on
// x_kappa (its x points at the scratch xs) with one more parameter.
type breakTerm struct {
	*channelTerm
	x0     []float64 // the observed scaled exposure
	at     int       // first week of the new measurement
	kb     int       // position of log kappa
	xs     []float64 // x_kappa, what the channel term reads
	aold   []float64 // adstock of the old weeks' exposure
	hb     []float64 // d H/d log kappa
	hbbar  float64   // its mean
	kappa  float64
	gkappa float64 // scratch
}

func newBreakTerm(ch *channelTerm, at, kb int) *breakTerm {
	if ch.linear || at < 1 || at >= len(ch.x) {
		panic("model: a measurement break needs a saturating channel and a week inside the data after its first")
	}
	b := &breakTerm{channelTerm: ch, x0: ch.x, at: at, kb: kb}
	b.alloc()
	return b
}

func (b *breakTerm) alloc() {
	T := len(b.x0)
	b.xs, b.aold, b.hb = make([]float64, T), make([]float64, T), make([]float64, T)
	b.channelTerm.x = b.xs
}

func (b *breakTerm) clone() predictor {
	c := *b
	c.channelTerm = b.channelTerm.clone().(*channelTerm)
	c.alloc()
	return &c
}

// scaleOld writes x0 with the weeks before the break times kappa into xs.
func (b *breakTerm) scaleOld(kappa float64) {
	for t, v := range b.x0 {
		if t < b.at {
			v *= kappa
		}
		b.xs[t] = v
	}
}

func (b *breakTerm) prepare(nat []float64, grad bool) bool {
	b.kappa = math.Exp(nat[b.kb])
	b.scaleOld(b.kappa)
	ok := b.channelTerm.prepare(nat, grad)
	if !grad {
		return ok
	}
	// d a/d log kappa = kappa a_old: the adstock of x_kappa's old weeks
	lam, s := nat[b.k[1]], nat[b.k[3]]
	prev, sum := 0.0, 0.0
	for t := range b.xs {
		v := 0.0
		if t < b.at {
			v = b.xs[t]
		}
		prev = (1-lam)*v + lam*prev
		b.aold[t] = prev
		h, a := b.h[t], b.a[t]
		d := 0.0
		if a > 0 {
			d = s * h * (1 - h) / a * prev
		}
		b.hb[t] = d
		sum += d
	}
	b.hbbar = sum / float64(len(b.xs))
	return ok && !notFinite(b.hbbar)
}

func (b *breakTerm) backward(g, nat, w []float64, sw, gmu float64) {
	b.channelTerm.backward(g, nat, w, sw, gmu)
	cb := 0.0
	if b.centred {
		cb = 1
	}
	s := 0.0
	for t, d := range b.hb {
		s += w[t] * d
	}
	g[b.kb] += nat[b.k[0]] * (s - cb*b.hbbar*sw - gmu*cb*b.hbbar)
}

// unconstrain writes the coefficient's sampling coordinate at the natural
// values v (the response run on x_kappa) and returns what shift would.
func (b *breakTerm) unconstrain(dst, v []float64, par []param) float64 {
	b.scaleOld(math.Exp(v[b.kb]))
	return b.channelTerm.unconstrain(dst, v, par)
}

var _ predictor = (*breakTerm)(nil)

// scaleBefore writes x with weeks 0..at-1 multiplied by f into dst and
// returns it (x copied when at is 0); a dst too short is replaced.
func scaleBefore(dst, x []float64, at int, f float64) []float64 {
	dst = resizeTo(dst, len(x))
	for t, v := range x {
		if t < at {
			v *= f
		}
		dst[t] = v
	}
	return dst
}

// measured returns m's input series for the exposure x observed from the
// data's first week: x with the weeks before a measurement break times the
// break's factor (Media.Before, Media.Factor), written into dst, or x itself
// when the channel has no break.
func (m Media) measured(dst, x []float64) []float64 {
	if m.Before <= 0 {
		return x
	}
	return scaleBefore(dst, x, m.Before, m.Factor)
}

// responseBroken is Response for a channel with a measurement break: x
// from the data's first week, the weeks before the break times the factor.
func (m Media) responseBroken(dst, x []float64) []float64 {
	dst = scaleBefore(dst, x, m.Before, m.Factor)
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
		if x == nil {
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
