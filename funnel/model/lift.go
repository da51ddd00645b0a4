package model

import (
	"fmt"
	"math"

	"spillway/funnel/transform"
)

// LiftMetric is what a lift test measured.
type LiftMetric int

const (
	// LiftOutcome: the outcome, through both paths (via search and direct).
	LiftOutcome LiftMetric = iota
	// LiftQueries: the branded queries, the demand stage alone.
	LiftQueries
)

func (m LiftMetric) String() string {
	if m == LiftQueries {
		return "queries"
	}
	return "outcome"
}

// LiftTest is the likelihood of a lift test of one channel, a CrossTerm of
// a Joint target. The test removed the channel's spend in weeks
// Start..End (indices into the data, inclusive), the carryover of earlier
// spend kept, and measured the metric summed over those same weeks falling
// by Estimate, with standard error SE, both in the metric's scaled units
// (outcome / mean(y) or queries / mean(q)). The model's value of that
// quantity is, with x' the spend with the window zeroed and m(t) a drifting
// coefficient's multiplier (1 when it does not drift),
//
//	queries:  L = alpha sum_t m_alpha(t) (Hq(x)[t] - Hq(x')[t])
//	outcome:  L = gamma alpha sum_t m_alpha(t) (Hq(x)[t] - Hq(x')[t])
//	            + delta sum_t m_delta(t) (Hy(x)[t] - Hy(x')[t])
//
// over t = Start..End, Hq the channel's response in the demand stage (lam,
// K, S), Hy in the outcome stage (lam2, K2, S2); the term is
// log Normal(Estimate | L, SE). An outcome test needs a Joint target of both
// stages (it ties alpha to gamma); a queries test needs the demand stage
// alone. A paid-search channel (in the outcome stage only) takes outcome
// tests: L = beta sum_t m_beta(t) (Hs(x)[t] - Hs(x')[t]).
type LiftTest struct {
	Column       string
	Metric       LiftMetric
	Start, End   int
	Estimate, SE float64
	// Demand and Outcome are the joint target's parts holding the demand
	// and the outcome stage; Outcome is unused by a queries test, Demand by
	// a test of a paid-search channel.
	Demand, Outcome int

	q, y  *liftPath // the paths measured: q through the demand stage, y direct (either may be nil)
	gamma int       // -1 unless the outcome test goes via search
}

// liftPath is the channel's part in one stage: its slots, its spend, and
// scratch for the actual and counterfactual responses over the window.
type liftPath struct {
	slots ChannelSlots
	x     []float64
	sm    *smoothEval    // the drift, nil when the coefficient does not drift
	meas  *measuredInput // the exposure's measurement, nil when taken as given
	dx    []float64      // scratch: d/d x~ per week of a measured channel
	// scratch, len T: adstock of the spend and its derivative in lam, the
	// counterfactual's, responses and their derivatives, and per week the
	// multiplier, the response difference and d lp/d f(t)
	a, da, ac, dac    []float64
	h, hl, hk, hs     []float64
	hc, hlc, hkc, hsc []float64
	mult, dh, r       []float64
	d                 [4]float64 // the last diff
}

var _ CrossTerm = (*LiftTest)(nil)

// Bind finds the channel in the stages the metric involves, and gamma for
// an outcome test that goes via search.
func (l *LiftTest) Bind(pts []Point) error {
	bad := func(f string, args ...any) error {
		return fmt.Errorf("lift test of %s: "+f, append([]any{l.Column}, args...)...)
	}
	part := func(k int) (Point, error) {
		if k < 0 || k >= len(pts) {
			return Point{}, bad("no stage %d", k)
		}
		return pts[k], nil
	}
	path := func(pt Point) *liftPath {
		j := pt.Stage.ChannelIndex(l.Column)
		if j < 0 {
			return nil
		}
		p := &liftPath{slots: pt.Layout.Channels()[j], x: pt.Stage.Channels[j].X}
		if d := p.slots.Drift; d.Has() {
			p.sm = newSmoothEval(d.Basis, d.SD, d.Len, d.Z)
		}
		p.meas = newMeasuredInput(p.slots, p.x)
		p.alloc()
		return p
	}
	l.q, l.y, l.gamma = nil, nil, -1
	switch l.Metric {
	case LiftQueries:
		dem, err := part(l.Demand)
		if err != nil {
			return err
		}
		if l.q = path(dem); l.q == nil {
			return bad("the %s stage has no such channel", dem.Stage.Name)
		}
	case LiftOutcome:
		out, err := part(l.Outcome)
		if err != nil {
			return err
		}
		if l.y = path(out); l.y == nil {
			return bad("the %s stage has no such channel", out.Stage.Name)
		}
		// an upper-funnel channel also works via search
		if dem, err := part(l.Demand); err == nil && l.Demand != l.Outcome && dem.Stage.ChannelIndex(l.Column) >= 0 {
			if !out.Layout.HasGamma() {
				return bad("the %s stage has no query term", out.Stage.Name)
			}
			l.gamma = out.Layout.GammaSlot()
			l.q = path(dem)
		}
	default:
		return bad("unknown metric %d", l.Metric)
	}
	T := -1
	for _, p := range []*liftPath{l.q, l.y} {
		if p == nil {
			continue
		}
		if T >= 0 && len(p.x) != T {
			return bad("the stages cover different weeks")
		}
		T = len(p.x)
	}
	switch {
	case l.Start < 0 || l.End >= T || l.Start > l.End:
		return bad("weeks %d to %d are not within 0 to %d", l.Start, l.End, T-1)
	case !(l.SE > 0) || math.IsInf(l.SE, 0):
		return bad("the standard error must be a number > 0")
	case math.IsNaN(l.Estimate) || math.IsInf(l.Estimate, 0):
		return bad("the estimate must be a number")
	}
	spend := 0.0
	for t := l.Start; t <= l.End; t++ {
		spend += l.path().x[t]
	}
	if !(spend > 0) {
		return bad("no spend in weeks %d to %d", l.Start, l.End)
	}
	return nil
}

// path returns one bound path (the direct one when there are two).
func (l *LiftTest) path() *liftPath {
	if l.y != nil {
		return l.y
	}
	return l.q
}

func (p *liftPath) alloc() {
	T := len(p.x)
	mk := func() []float64 { return make([]float64, T) }
	p.mult, p.dh, p.r = mk(), mk(), mk()
	if p.slots.Linear() {
		return
	}
	if p.meas != nil {
		p.dx = mk()
	}
	p.a, p.da, p.ac, p.dac = mk(), mk(), mk(), mk()
	p.h, p.hl, p.hk, p.hs = mk(), mk(), mk(), mk()
	p.hc, p.hlc, p.hkc, p.hsc = mk(), mk(), mk(), mk()
}

func (p *liftPath) clone() *liftPath {
	if p == nil {
		return nil
	}
	c := *p
	if p.sm != nil {
		c.sm = p.sm.clone()
	}
	c.meas = p.meas.clone()
	c.alloc()
	return &c
}

// Clone returns a bound copy with its own scratch.
func (l *LiftTest) Clone() CrossTerm {
	c := *l
	c.q, c.y = l.q.clone(), l.y.clone()
	return &c
}

// LogDensity returns log Normal(Estimate | L, SE) up to a constant and,
// with grad, adds its gradient to the points'.
func (l *LiftTest) LogDensity(pts []Point, grad bool) float64 {
	L, gamma, alpha := l.value(pts)
	z := (l.Estimate - L) / l.SE
	if grad {
		r := z / l.SE // d lp/dL
		if l.q != nil {
			dem := pts[l.Demand]
			rq := r
			if l.gamma >= 0 {
				pts[l.Outcome].Grad[l.gamma] += r * alpha * l.q.d[0]
				rq *= gamma
			}
			l.q.addGrad(dem.Grad, dem.Values, rq, l.Start, l.End)
		}
		if l.y != nil {
			out := pts[l.Outcome]
			l.y.addGrad(out.Grad, out.Values, r, l.Start, l.End)
		}
	}
	return -0.5 * z * z
}

// value returns the model's lift L at the points' values, and gamma and
// alpha (0 when not used); each path keeps its diff for the gradient.
func (l *LiftTest) value(pts []Point) (L, gamma, alpha float64) {
	if l.q != nil {
		v := pts[l.Demand].Values
		alpha = v[l.q.slots.Coef]
		l.q.diff(v, l.Start, l.End)
		L = alpha * l.q.d[0]
		if l.gamma >= 0 {
			gamma = pts[l.Outcome].Values[l.gamma]
			L *= gamma
		}
	}
	if l.y != nil {
		v := pts[l.Outcome].Values
		l.y.diff(v, l.Start, l.End)
		L += v[l.y.slots.Coef] * l.y.d[0]
	}
	return L, gamma, alpha
}

// Lift returns the model's value of the tested quantity (scaled units) at
// the constrained draws of the demand and the outcome stage (either may be
// nil when the test does not involve it), for posterior checks of the
// test. It uses the test's scratch: one goroutine per LiftTest (Clone).
func (l *LiftTest) Lift(demand, outcome []float64) float64 {
	pts := make([]Point, max(l.Demand, l.Outcome)+1)
	if l.q != nil {
		pts[l.Demand].Values = demand
	}
	if l.y != nil || l.gamma >= 0 {
		pts[l.Outcome].Values = outcome
	}
	L, _, _ := l.value(pts)
	return L
}

// diff writes into p.d the sum over weeks from..to (inclusive) of
// m(t) (H(x)[t] - H(x')[t]) and its derivatives in lam, K and S (zero when
// linear), x' the spend with those weeks zeroed, and keeps m(t) and the
// difference per week.
func (p *liftPath) diff(v []float64, from, to int) {
	p.d = [4]float64{}
	if p.sm != nil {
		p.sm.eval(v, from, to+1)
		for t := from; t <= to; t++ {
			p.mult[t] = math.Exp(p.sm.f[t])
		}
	} else {
		for t := from; t <= to; t++ {
			p.mult[t] = 1
		}
	}
	if p.slots.Linear() {
		// the counterfactual spends nothing in the window
		for t := from; t <= to; t++ {
			p.dh[t] = p.x[t]
			p.d[0] += p.mult[t] * p.x[t]
		}
		return
	}
	lam := v[p.slots.Lam]
	xs := p.x
	if p.meas != nil {
		xs = p.meas.input(v, to) // the measured exposure: x~
	}
	// the spend's adstock up to the window's end; the counterfactual's is
	// the same before the window and decays inside it (no new spend, so
	// no exposure)
	prev, dprev := 0.0, 0.0
	for t := 0; t <= to; t++ {
		x := xs[t]
		d := prev - x + lam*dprev
		prev = (1-lam)*x + lam*prev
		p.a[t], p.da[t] = prev, d
		dprev = d
	}
	prev, dprev = 0, 0
	if from > 0 {
		prev, dprev = p.a[from-1], p.da[from-1]
	}
	for t := from; t <= to; t++ {
		d := prev + lam*dprev
		prev = lam * prev
		p.ac[t], p.dac[t] = prev, d
		dprev = d
	}
	k, s := v[p.slots.K], v[p.slots.S]
	w := to + 1
	transform.HillSeries(p.h[from:w], p.hl[from:w], p.hk[from:w], p.hs[from:w], p.a[from:w], p.da[from:w], k, s)
	transform.HillSeries(p.hc[from:w], p.hlc[from:w], p.hkc[from:w], p.hsc[from:w], p.ac[from:w], p.dac[from:w], k, s)
	for t := from; t <= to; t++ {
		m := p.mult[t]
		p.dh[t] = p.h[t] - p.hc[t]
		p.d[0] += m * p.dh[t]
		p.d[1] += m * (p.hl[t] - p.hlc[t])
		p.d[2] += m * (p.hk[t] - p.hkc[t])
		p.d[3] += m * (p.hs[t] - p.hsc[t])
	}
}

// addGrad adds r d(coef p.d[0])/dv to g for the path's coefficient, its
// transform and its drift, after diff.
func (p *liftPath) addGrad(g, v []float64, r float64, from, to int) {
	coef := v[p.slots.Coef]
	g[p.slots.Coef] += r * p.d[0]
	if !p.slots.Linear() {
		g[p.slots.Lam] += r * coef * p.d[1]
		g[p.slots.K] += r * coef * p.d[2]
		g[p.slots.S] += r * coef * p.d[3]
	}
	if p.meas != nil {
		p.measuredGrad(g, v, r*coef, from, to)
	}
	if p.sm == nil {
		return
	}
	rc := r * coef
	for t := from; t <= to; t++ {
		p.r[t] = rc * p.mult[t] * p.dh[t] // d/d f(t) of coef m(t) dH(t)
	}
	p.sm.backward(g, v, p.r, from, to+1)
}

// measuredGrad adds r d(p.d[0])/dv for the measurement parameters of a
// measured channel, after diff. With H' = dH/da = S H (1 - H) / a, the
// window's sum depends on x~[u] through the actual adstock, for u up to
// the window's end, and through the counterfactual's, for u before the
// window:
//
//	d/d x~[u] = (1 - lam) (sum_{t >= max(u, from)} lam^(t-u) m(t) H'(a[t])
//	           - [u < from] sum_{t >= from} lam^(t-u) m(t) H'(ac[t]))
//
// over t up to the window's end, two backward recursions.
func (p *liftPath) measuredGrad(g, v []float64, r float64, from, to int) {
	lam, s := v[p.slots.Lam], v[p.slots.S]
	dhill := func(h, a float64) float64 {
		if a > 0 {
			return s * h * (1 - h) / a
		}
		return 0
	}
	var u, uc float64
	for t := to; t >= 0; t-- {
		if t >= from {
			u = p.mult[t]*dhill(p.h[t], p.a[t]) + lam*u
			uc = p.mult[t]*dhill(p.hc[t], p.ac[t]) + lam*uc
			p.dx[t] = (1 - lam) * u
		} else {
			u, uc = lam*u, lam*uc
			p.dx[t] = (1 - lam) * (u - uc)
		}
	}
	p.meas.backward(g, v, p.dx, r, to)
}
