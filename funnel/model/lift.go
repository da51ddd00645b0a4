package model

import (
	"fmt"

	"spillway/funnel/transform"
)

// LiftTest is the likelihood of a lift test of one upper-funnel channel on
// the outcome, a CrossTerm of a Joint target of the demand and outcome
// stages. The test measured Estimate, with standard error SE, for the
// outcome summed over weeks From..To-1 with the channel's spend as it was
// against Counterfactual (scaled spend, the data's length: zeros in the
// weeks the channel went dark, say), both in the outcome's scaled units
// (y/mean(y)). The model's summed lift over those weeks is
//
//	L = gamma alpha sum_t (Hq(t) - Hq'(t)) + delta sum_t (Hy(t) - Hy'(t)),
//
// via search and direct, with Hq the channel's response in the demand stage
// (its alpha, lam, K, S), Hy in the outcome stage (delta, lam2, K2, S2), and
// ' the counterfactual; the term is log Normal(Estimate | L, SE).
type LiftTest struct {
	Column          string
	Counterfactual  []float64
	From, To        int
	Estimate, SE    float64
	Demand, Outcome int // the joint target's parts holding the two stages

	q, y  liftPath // resolved by Bind
	gamma int
}

// liftPath is the channel's part in one stage: its slots, its spend, and
// scratch for the actual and counterfactual responses.
type liftPath struct {
	slots                ChannelSlots
	x                    []float64
	a, da, h, hl, hk, hs []float64
}

var _ CrossTerm = (*LiftTest)(nil)

// Bind finds the channel in both stages and the outcome stage's gamma.
func (l *LiftTest) Bind(pts []Point) error {
	bad := func(f string, args ...any) error {
		return fmt.Errorf("lift test of %s: "+f, append([]any{l.Column}, args...)...)
	}
	for _, k := range []int{l.Demand, l.Outcome} {
		if k < 0 || k >= len(pts) {
			return bad("no stage %d", k)
		}
	}
	out := pts[l.Outcome].Layout
	if !out.HasGamma() {
		return bad("the %s stage has no query term", pts[l.Outcome].Stage.Name)
	}
	l.gamma = out.GammaSlot()
	for _, p := range []struct {
		path *liftPath
		pt   Point
	}{{&l.q, pts[l.Demand]}, {&l.y, pts[l.Outcome]}} {
		j := p.pt.Stage.ChannelIndex(l.Column)
		if j < 0 {
			return bad("the %s stage has no such channel", p.pt.Stage.Name)
		}
		p.path.slots, p.path.x = p.pt.Layout.Channels()[j], p.pt.Stage.Channels[j].X
	}
	T := len(l.q.x)
	switch {
	case len(l.y.x) != T || len(l.Counterfactual) != T:
		return bad("the counterfactual has %d weeks, the data %d", len(l.Counterfactual), T)
	case l.From < 0 || l.To > T || l.From >= l.To:
		return bad("weeks %d to %d are not within 0 to %d", l.From, l.To-1, T-1)
	case !(l.SE > 0):
		return bad("the standard error must be > 0")
	}
	l.q.alloc()
	l.y.alloc()
	return nil
}

func (p *liftPath) alloc() {
	if p.slots.Linear() {
		return
	}
	T := len(p.x)
	p.a, p.da = make([]float64, T), make([]float64, T)
	p.h, p.hl, p.hk, p.hs = make([]float64, T), make([]float64, T), make([]float64, T), make([]float64, T)
}

// Clone returns a bound copy with its own scratch.
func (l *LiftTest) Clone() CrossTerm {
	c := *l
	c.q.alloc()
	c.y.alloc()
	return &c
}

// LogDensity returns log Normal(Estimate | L, SE) up to a constant and,
// with grad, adds its gradient to the points'.
func (l *LiftTest) LogDensity(pts []Point, grad bool) float64 {
	dem, out := pts[l.Demand], pts[l.Outcome]
	gamma := out.Values[l.gamma]
	alpha, delta := dem.Values[l.q.slots.Coef], out.Values[l.y.slots.Coef]
	dq := l.q.diff(dem.Values, l.Counterfactual, l.From, l.To)
	dy := l.y.diff(out.Values, l.Counterfactual, l.From, l.To)
	z := (l.Estimate - (gamma*alpha*dq[0] + delta*dy[0])) / l.SE
	if grad {
		r := z / l.SE // d lp/dL
		out.Grad[l.gamma] += r * alpha * dq[0]
		l.q.addGrad(dem.Grad, r*gamma, alpha, dq)
		l.y.addGrad(out.Grad, r, delta, dy)
	}
	return -0.5 * z * z
}

// diff returns sum_t over [from, to) of the response to x minus the
// response to cf, and its derivatives in lam, K and S (zero when linear).
func (p *liftPath) diff(v, cf []float64, from, to int) [4]float64 {
	var d [4]float64
	if p.slots.Linear() {
		for t := from; t < to; t++ {
			d[0] += p.x[t] - cf[t]
		}
		return d
	}
	for sign, x := range [2][]float64{p.x, cf} {
		transform.AdstockGrad(p.a, p.da, x, v[p.slots.Lam])
		hillSeries(p.h, p.hl, p.hk, p.hs, p.a, p.da, v[p.slots.K], v[p.slots.S])
		s := 1.0
		if sign == 1 {
			s = -1
		}
		for t := from; t < to; t++ {
			d[0] += s * p.h[t]
			d[1] += s * p.hl[t]
			d[2] += s * p.hk[t]
			d[3] += s * p.hs[t]
		}
	}
	return d
}

// addGrad adds r d/dv (coef d[0]) to g for the path's coefficient and
// transform parameters, with d from diff.
func (p *liftPath) addGrad(g []float64, r, coef float64, d [4]float64) {
	g[p.slots.Coef] += r * d[0]
	if p.slots.Linear() {
		return
	}
	g[p.slots.Lam] += r * coef * d[1]
	g[p.slots.K] += r * coef * d[2]
	g[p.slots.S] += r * coef * d[3]
}
