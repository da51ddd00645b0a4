package model

import (
	"fmt"
	"math"
	"math/rand/v2"

	"spillway/funnel/transform"
	"spillway/funnel/window"
)

// ReturnPath is the path a stated return covers.
type ReturnPath int

// The paths a return prior may state.
const (
	ReturnTotal     ReturnPath = iota // via search and direct together
	ReturnViaSearch                   // through branded queries (gamma alpha)
	ReturnDirect                      // straight to the outcome (delta)
)

func (p ReturnPath) String() string {
	switch p {
	case ReturnViaSearch:
		return "via_search"
	case ReturnDirect:
		return "direct"
	}
	return "total"
}

// ReturnMeasure is the quantity a return prior is stated on.
type ReturnMeasure int

// The measures a return prior may state.
const (
	// ReturnOnSpend is the path's incremental outcome per Per units of the
	// channel's spend in the window (the return on spend of returns.csv,
	// times Per).
	ReturnOnSpend ReturnMeasure = iota
	// Incremental is the path's incremental outcome itself, in the
	// outcome's units.
	Incremental
)

func (m ReturnMeasure) String() string {
	if m == Incremental {
		return "incremental"
	}
	return "return_on_spend"
}

// z95 is the standard normal's 95% quantile: a lognormal's 90% range is
// exp(mu ± z95 sigma).
const z95 = 1.6448536269514722

// ReturnPrior is a stated prior on an upper-funnel channel's return over a
// window, one path or both: lognormal, log R ~ Normal(Mu, Sigma), R in the
// user's units (Measure). R is what mediation.Split computes for the path
// in that window: with x' the channel's spend with the window's weeks set
// to zero (the carryover of earlier spend kept) and the sum running from
// the window's first week to the data's last (the carryover into later
// weeks counted),
//
//	u = Scale gamma alpha sum_t m_alpha(t) (Hq(x)[t] - Hq(x')[t])   via search
//	v = Scale delta sum_t m_delta(t) (Hy(x)[t] - Hy(x')[t])          direct
//
// R = u, v or u + v by Path; Scale turns the scaled outcome into the
// stated units (mean(y), divided by the window's raw spend over Per for a
// return on spend).
//
// It becomes the prior of the coefficients it covers, conditional on every
// other parameter at its own prior: the coefficient (alpha for via
// search, delta for direct, both for the total) is the stated return
// divided by what the rest of the draw gives a unit coefficient, a change
// of variables with its Jacobian. For one path,
//
//	p(alpha | rest) = p_R(u) du/dalpha = p_R(u) u / alpha.
//
// For the total, (alpha, delta) comes from (R, w), w = u / R the mediated
// share, uniform on (0, 1) a priori: p(alpha, delta | rest) =
// p_R(R) p_w(w) |d(R, w)/d(alpha, delta)| = p_R(R) u v / (R alpha delta).
// The implied joint prior is p(rest) p(coefficients | rest): the other
// parameters keep their priors exactly, and R has the stated distribution
// whatever they are, so the prior pushed through the model reproduces the
// stated prior on the return (TestReturnPriorReproduced). The coefficients'
// own prior is replaced (family Conditional). It is a CrossTerm of a Joint
// target of the demand (part Demand) and the outcome stage (part Outcome).
type ReturnPrior struct {
	Column  string
	Path    ReturnPath
	Measure ReturnMeasure
	// Window is the window the return is over, resolved against the
	// data's weeks (From, To).
	Window window.Window
	// Per is the spend unit of a return on spend (1, or 1000 for "per
	// thousand"); 1 for Incremental.
	Per float64
	// Mu and Sigma are the mean and sd of log R.
	Mu, Sigma float64
	// Stated is the prior as the file wrote it (lognormal90 or lognormal
	// and its two numbers), Line the file's line.
	Stated Prior
	Line   int
	// Scale converts the path's effect in scaled outcome units into R.
	Scale float64
	// Spend is the channel's raw spend in the window.
	Spend           float64
	Demand, Outcome int

	q, y  *effectPath // the demand stage's path (via search) and the outcome stage's (direct)
	gamma int
}

// Quantile returns the stated prior's p quantile of R; the 5% and 95%
// quantiles of a lognormal90 are its numbers as written (exp(log x) may
// miss x by a bit).
func (r *ReturnPrior) Quantile(p float64) float64 {
	if r.Stated.Family == LogNormal90 {
		switch p {
		case 0.05:
			return r.Stated.P1
		case 0.95:
			return r.Stated.P2
		}
	}
	return math.Exp(r.Mu + r.Sigma*math.Sqrt2*math.Erfinv(2*p-1))
}

// Mean returns the stated prior's mean of R.
func (r *ReturnPrior) Mean() float64 { return math.Exp(r.Mu + r.Sigma*r.Sigma/2) }

// Name returns the name the file gives the row, e.g. return[video_spend],
// incremental_via_search[audio_spend].
func (r *ReturnPrior) Name() string {
	base := "return"
	if r.Measure == Incremental {
		base = "incremental"
	}
	if r.Path != ReturnTotal {
		base += "_" + r.Path.String()
	}
	return base + "[" + r.Column + "]"
}

// covers reports whether the prior sets alpha (demand) or delta (outcome).
func (r *ReturnPrior) covers(demand bool) bool {
	if demand {
		return r.Path != ReturnDirect
	}
	return r.Path != ReturnViaSearch
}

// lognormalOf returns mu and sigma of the lognormal that a stated prior
// gives: lognormal90 by its 5% and 95% quantiles, lognormal by its mean and
// sd. which says which number is at fault.
func lognormalOf(p Prior) (mu, sigma float64, which int, err error) {
	for i, v := range []float64{p.P1, p.P2} {
		if !(v > 0) || math.IsInf(v, 0) {
			return 0, 0, i + 1, fmt.Errorf("%s takes two numbers > 0", p.Family)
		}
	}
	switch p.Family {
	case LogNormal90:
		if !(p.P2 > p.P1) {
			return 0, 0, 2, fmt.Errorf("lognormal90 takes the 5%% and 95%% quantiles, p1 < p2; got p2 %g <= p1 %g", p.P2, p.P1)
		}
		mu = (math.Log(p.P1) + math.Log(p.P2)) / 2
		sigma = (math.Log(p.P2) - math.Log(p.P1)) / (2 * z95)
	case LogNormal:
		cv := p.P2 / p.P1
		s2 := math.Log1p(cv * cv)
		mu, sigma = math.Log(p.P1)-s2/2, math.Sqrt(s2)
	default:
		return 0, 0, 0, fmt.Errorf("a return takes family lognormal90 (p1, p2 its 5%% and 95%% quantiles) or lognormal (p1, p2 its mean and sd), not %s", p.Family)
	}
	if sigma < 1e-3 {
		return 0, 0, 2, fmt.Errorf("%s: the range is too narrow to sample (sd of the log below 0.001); to hold the return, narrow it less", p.Family)
	}
	return mu, sigma, 0, nil
}

// NewReturnPrior resolves a stated return prior against the data: the
// channel (an upper-funnel column of sc), the window (window.Resolve) and
// the raw spend in it, which must be positive. which says what is at
// fault: 1 the channel, 2 the family, 3 and 4 the numbers, 5 the window,
// 6 Per.
func NewReturnPrior(sc *Scaled, col string, path ReturnPath, m ReturnMeasure, win string, per float64, stated Prior) (r *ReturnPrior, which int, err error) {
	c := -1
	for i, n := range sc.UpperNames {
		if n == col {
			c = i
		}
	}
	if c < 0 {
		return nil, 1, fmt.Errorf("%s is not an upper-funnel column (%v): returns are stated for upper-funnel channels", col, sc.UpperNames)
	}
	mu, sigma, w, err := lognormalOf(stated)
	if err != nil {
		if w > 0 {
			w += 2
		} else {
			w = 2
		}
		return nil, w, err
	}
	wn, err := window.Resolve(win, sc.Weeks)
	if err != nil {
		return nil, 5, err
	}
	spend := 0.0
	for t := wn.From; t <= wn.To; t++ {
		spend += sc.RawUpper[c][t]
	}
	if !(spend > 0) {
		return nil, 5, fmt.Errorf("%s has no spend in window %s: a return needs spend to return on", col, wn.Name)
	}
	r = &ReturnPrior{Column: col, Path: path, Measure: m, Window: wn, Per: 1, Mu: mu, Sigma: sigma,
		Stated: stated, Spend: spend, Scale: sc.OutcomeScale, Demand: 0, Outcome: 1}
	switch m {
	case ReturnOnSpend:
		if per <= 0 || math.IsNaN(per) || math.IsInf(per, 0) {
			return nil, 6, fmt.Errorf("per must be a number of spend units > 0 (e.g. 1000 for a return per thousand spent), not %g", per)
		}
		r.Per = per
		r.Scale = sc.OutcomeScale * per / spend
	case Incremental:
		if per != 1 {
			return nil, 6, fmt.Errorf("per applies to a return on spend; an incremental outcome is in the outcome's units")
		}
	}
	return r, 0, nil
}

var _ CrossTerm = (*ReturnPrior)(nil)

// On returns r restated on sc, a refit's data over the same weeks from
// the same first week (a simulated replicate, spend moved in time, weeks
// left out, or the data cut short): the same stated prior on the return
// over the same weeks, with sc's spend in the window and sc's outcome
// scale. It fails when sc lacks a week of the window, which a fit that ends
// before the window cannot state, or when the channel has no spend in it.
func (r *ReturnPrior) On(sc *Scaled) (*ReturnPrior, error) {
	c := -1
	for i, n := range sc.UpperNames {
		if n == r.Column {
			c = i
		}
	}
	if c < 0 {
		return nil, fmt.Errorf("%s: %s is not an upper-funnel column of the data", r.Name(), r.Column)
	}
	w, ok := r.Window.In(sc.Weeks)
	if !ok || w.From != r.Window.From || w.To != r.Window.To {
		return nil, fmt.Errorf("%s: the data do not hold every week of its window %s", r.Name(), r.Window.Name)
	}
	spend := 0.0
	for t := w.From; t <= w.To; t++ {
		spend += sc.RawUpper[c][t]
	}
	if !(spend > 0) {
		return nil, fmt.Errorf("%s: %s has no spend in window %s", r.Name(), r.Column, w.Name)
	}
	out := r.Term(r.Demand, r.Outcome)
	out.Window, out.Spend, out.Scale = w, spend, sc.OutcomeScale
	if r.Measure == ReturnOnSpend {
		out.Scale = sc.OutcomeScale * r.Per / spend
	}
	return out, nil
}

// effectPath is a channel's part in one stage for a return: its slots,
// spend and scratch for the actual and counterfactual responses from the
// window's first week to the data's last.
type effectPath struct {
	slots ChannelSlots
	x     []float64
	sm    *smoothEval
	meas  *measuredInput // the exposure's measurement, nil when taken as given
	dx    []float64      // scratch: d/d x~ per week of a measured channel
	to    int            // the window's last week in the last diff
	// scratch, len T (as liftPath)
	a, da, ac, dac    []float64
	h, hl, hk, hs     []float64
	hc, hlc, hkc, hsc []float64
	mult, dh, r       []float64
	d                 [4]float64
}

func newEffectPath(pt Point, col string) *effectPath {
	j := pt.Stage.ChannelIndex(col)
	if j < 0 {
		return nil
	}
	p := &effectPath{slots: pt.Layout.Channels()[j], x: pt.Stage.Channels[j].X}
	if d := p.slots.Drift; d.Has() {
		p.sm = newSmoothEval(d.Basis, d.SD, d.Len, d.Z)
	}
	p.meas = newMeasuredInput(p.slots, p.x)
	p.alloc()
	return p
}

func (p *effectPath) alloc() {
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

func (p *effectPath) clone() *effectPath {
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

// diff writes into p.d the sum over weeks from..T-1 of
// m(t) (H(x)[t] - H(x')[t]) and its derivatives in lam, K and S (zero when
// linear), x' the spend with weeks from..to zeroed: the coefficient-free
// effect of the window's spend, its carryover into later weeks included.
func (p *effectPath) diff(v []float64, from, to int) {
	T := len(p.x)
	p.d, p.to = [4]float64{}, to
	if p.sm != nil {
		p.sm.eval(v, from, T)
		for t := from; t < T; t++ {
			p.mult[t] = math.Exp(p.sm.f[t])
		}
	} else {
		for t := from; t < T; t++ {
			p.mult[t] = 1
		}
	}
	if p.slots.Linear() {
		for t := from; t < T; t++ {
			p.dh[t] = 0
			if t <= to {
				p.dh[t] = p.x[t]
			}
			p.d[0] += p.mult[t] * p.dh[t]
		}
		return
	}
	lam := v[p.slots.Lam]
	xs := p.x
	if p.meas != nil {
		xs = p.meas.input(v, T-1) // the measured exposure: x~
	}
	prev, dprev := 0.0, 0.0
	for t := 0; t < T; t++ {
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
	for t := from; t < T; t++ {
		x := 0.0
		if t > to {
			x = xs[t]
		}
		d := prev - x + lam*dprev
		prev = (1-lam)*x + lam*prev
		p.ac[t], p.dac[t] = prev, d
		dprev = d
	}
	k, s := v[p.slots.K], v[p.slots.S]
	transform.HillSeries(p.h[from:], p.hl[from:], p.hk[from:], p.hs[from:], p.a[from:], p.da[from:], k, s)
	transform.HillSeries(p.hc[from:], p.hlc[from:], p.hkc[from:], p.hsc[from:], p.ac[from:], p.dac[from:], k, s)
	for t := from; t < T; t++ {
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
func (p *effectPath) addGrad(g, v []float64, r float64, from int) {
	coef := v[p.slots.Coef]
	g[p.slots.Coef] += r * p.d[0]
	if !p.slots.Linear() {
		g[p.slots.Lam] += r * coef * p.d[1]
		g[p.slots.K] += r * coef * p.d[2]
		g[p.slots.S] += r * coef * p.d[3]
	}
	if p.meas != nil {
		p.measuredGrad(g, v, r*coef, from)
	}
	if p.sm == nil {
		return
	}
	rc := r * coef
	T := len(p.x)
	for t := from; t < T; t++ {
		p.r[t] = rc * p.mult[t] * p.dh[t]
	}
	p.sm.backward(g, v, p.r, from, T)
}

// measuredGrad adds r d(p.d[0])/dv for the measurement parameters of a
// measured channel, after diff (whose window it reads). With H' = dH/da =
// S H (1 - H) / a, x~[u] enters the actual adstock from week u on and the
// counterfactual's unless u is in the window:
//
//	d/d x~[u] = (1 - lam) sum_{t >= max(u, from)} lam^(t-u) m(t) (H'(a[t]) - [u not in window] H'(ac[t]))
//
// two backward recursions.
func (p *effectPath) measuredGrad(g, v []float64, r float64, from int) {
	lam, s := v[p.slots.Lam], v[p.slots.S]
	dhill := func(h, a float64) float64 {
		if a > 0 {
			return s * h * (1 - h) / a
		}
		return 0
	}
	T := len(p.x)
	var u, uc float64
	for t := T - 1; t >= 0; t-- {
		if t >= from {
			u = p.mult[t]*dhill(p.h[t], p.a[t]) + lam*u
			uc = p.mult[t]*dhill(p.hc[t], p.ac[t]) + lam*uc
		} else {
			u, uc = lam*u, lam*uc
		}
		p.dx[t] = (1 - lam) * u
		if !p.inWindow(t, from) {
			p.dx[t] -= (1 - lam) * uc
		}
	}
	p.meas.backward(g, v, p.dx, r, T-1)
}

// inWindow reports whether week t is in the window from..to of the last
// diff: a week from on whose counterfactual input was zero.
func (p *effectPath) inWindow(t, from int) bool { return t >= from && t <= p.to }

// Bind finds the channel in the stages its path involves, and gamma.
func (r *ReturnPrior) Bind(pts []Point) error {
	bad := func(f string, args ...any) error {
		return fmt.Errorf("prior on %s: "+f, append([]any{r.Name()}, args...)...)
	}
	if r.Demand < 0 || r.Demand >= len(pts) || r.Outcome < 0 || r.Outcome >= len(pts) || r.Demand == r.Outcome {
		return bad("needs the demand and the outcome stage")
	}
	dem, out := pts[r.Demand], pts[r.Outcome]
	r.q, r.y, r.gamma = nil, nil, -1
	if r.covers(true) {
		if r.q = newEffectPath(dem, r.Column); r.q == nil {
			return bad("the %s stage has no such channel", dem.Stage.Name)
		}
		if !out.Layout.HasGamma() {
			return bad("the %s stage has no query term", out.Stage.Name)
		}
		r.gamma = out.Layout.GammaSlot()
	}
	if r.covers(false) {
		if r.y = newEffectPath(out, r.Column); r.y == nil {
			return bad("the %s stage has no such channel", out.Stage.Name)
		}
	}
	T := len(r.path().x)
	if r.Window.From < 0 || r.Window.To >= T || r.Window.From > r.Window.To {
		return bad("weeks %d to %d are not within 0 to %d", r.Window.From, r.Window.To, T-1)
	}
	if !(r.Scale > 0) || !(r.Sigma > 0) {
		return bad("needs a scale and a spread > 0")
	}
	return nil
}

func (r *ReturnPrior) path() *effectPath {
	if r.y != nil {
		return r.y
	}
	return r.q
}

// Clone returns a bound copy with its own scratch.
func (r *ReturnPrior) Clone() CrossTerm {
	c := *r
	c.q, c.y = r.q.clone(), r.y.clone()
	return &c
}

// parts returns u and v (0 for a path not covered) and the coefficients,
// after each path's diff.
func (r *ReturnPrior) parts(pts []Point) (u, v, alpha, gamma, delta float64) {
	from, to := r.Window.From, r.Window.To
	if r.q != nil {
		dv := pts[r.Demand].Values
		alpha = dv[r.q.slots.Coef]
		gamma = pts[r.Outcome].Values[r.gamma]
		r.q.diff(dv, from, to)
		u = r.Scale * gamma * alpha * r.q.d[0]
	}
	if r.y != nil {
		ov := pts[r.Outcome].Values
		delta = ov[r.y.slots.Coef]
		r.y.diff(ov, from, to)
		v = r.Scale * delta * r.y.d[0]
	}
	return
}

// LogDensity returns the log of the conditional prior of the covered
// coefficients given the rest (up to a constant) and, with grad, adds its
// gradient to the points'.
func (r *ReturnPrior) LogDensity(pts []Point, grad bool) float64 {
	u, v, alpha, gamma, delta := r.parts(pts)
	var R float64
	switch r.Path {
	case ReturnViaSearch:
		R = u
	case ReturnDirect:
		R = v
	default:
		R = u + v
		if !(u > 0) || !(v > 0) {
			return math.Inf(-1)
		}
	}
	if !(R > 0) {
		return math.Inf(-1)
	}
	z := (math.Log(R) - r.Mu) / r.Sigma
	dR := -z / (r.Sigma * R) // d(-z^2/2)/dR
	var lp, du, dv float64
	switch r.Path {
	case ReturnViaSearch:
		lp = -0.5*z*z - math.Log(alpha)
		du = dR
	case ReturnDirect:
		lp = -0.5*z*z - math.Log(delta)
		dv = dR
	default:
		lp = -0.5*z*z + math.Log(u) + math.Log(v) - 2*math.Log(R) - math.Log(alpha) - math.Log(delta)
		du = dR + 1/u - 2/R
		dv = dR + 1/v - 2/R
	}
	if !grad {
		return lp
	}
	if r.q != nil {
		dem, out := pts[r.Demand], pts[r.Outcome]
		r.q.addGrad(dem.Grad, dem.Values, du*r.Scale*gamma, r.Window.From)
		dem.Grad[r.q.slots.Coef] -= 1 / alpha
		out.Grad[r.gamma] += du * u / gamma
	}
	if r.y != nil {
		out := pts[r.Outcome]
		r.y.addGrad(out.Grad, out.Values, dv*r.Scale, r.Window.From)
		out.Grad[r.y.slots.Coef] -= 1 / delta
	}
	return lp
}

// Value returns R at the constrained draws of the demand and the outcome
// stage, for checks. It uses the term's scratch: one goroutine per
// ReturnPrior (Clone).
func (r *ReturnPrior) Value(demand, outcome []float64) float64 {
	pts := make([]Point, max(r.Demand, r.Outcome)+1)
	pts[r.Demand].Values, pts[r.Outcome].Values = demand, outcome
	u, v, _, _, _ := r.parts(pts)
	return u + v
}

// Draw writes a draw of the covered coefficients from their conditional
// prior into demand and outcome, the stages' constrained draws with every
// other parameter already drawn from its prior: R from the stated
// lognormal, the mediated share w uniform for the total, and each
// coefficient the part of R its path must carry divided by what the draw
// gives a unit coefficient.
func (r *ReturnPrior) Draw(demand, outcome []float64, rng *rand.Rand) {
	R := math.Exp(r.Mu + r.Sigma*rng.NormFloat64())
	w := 1.0
	switch r.Path {
	case ReturnDirect:
		w = 0
	case ReturnTotal:
		w = rng.Float64()
	}
	from, to := r.Window.From, r.Window.To
	if r.q != nil {
		gamma := outcome[r.gamma]
		r.q.diff(demand, from, to)
		demand[r.q.slots.Coef] = w * R / (r.Scale * gamma * r.q.d[0])
	}
	if r.y != nil {
		r.y.diff(outcome, from, to)
		outcome[r.y.slots.Coef] = (1 - w) * R / (r.Scale * r.y.d[0])
	}
}

// ReturnDraws binds the return priors of the demand and the outcome
// stage (Stage.Returns) for Draw, outside a Joint target; nil when there
// are none.
func ReturnDraws(demand, outcome *Stage) ([]*ReturnPrior, error) {
	if len(outcome.Returns) == 0 {
		return nil, nil
	}
	pts := []Point{{Stage: demand, Layout: demand.Layout()}, {Stage: outcome, Layout: outcome.Layout()}}
	var out []*ReturnPrior
	for _, r := range outcome.Returns {
		c := r.Term(0, 1)
		if err := c.Bind(pts); err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, nil
}

// Term returns an unbound copy of r for a Joint target whose demand and
// outcome stages are parts demand and outcome.
func (r *ReturnPrior) Term(demand, outcome int) *ReturnPrior {
	c := *r
	c.Demand, c.Outcome = demand, outcome
	c.q, c.y, c.gamma = nil, nil, -1
	return &c
}

// applyReturns gives the coefficients a return prior covers the
// Conditional family in stage st (demand: alpha, else delta) and records
// the priors on the stage.
func applyReturns(st *Stage, rs []*ReturnPrior, demand bool) error {
	if len(rs) == 0 {
		return nil
	}
	st.Returns = rs
	for _, r := range rs {
		if !r.covers(demand) {
			continue
		}
		if j := st.ChannelIndex(r.Column); j >= 0 {
			st.Channels[j].Params[0].Prior = Prior{Family: Conditional}
		}
	}
	return nil
}
