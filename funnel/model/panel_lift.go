package model

import (
	"fmt"
	"math"
)

// PanelLiftTest is a lift test on a region panel, a term of a PanelJoint
// target. The test removed the channel's spend in weeks Start..End (indices
// into the data, inclusive), the carryover of earlier spend kept, in the
// regions it covers, and measured the metric summed over those weeks and
// regions falling by Estimate, with standard error SE. Each region's lift
// L[g] is LiftTest's, in region g's scaled units and with region g's
// coefficients (theta[c,g], gamma[g]) and the shared transforms; the model's
// value of the test is
//
//	L = sum_g Weights[g] L[g],
//
// Weights[g] region g's scale of the metric divided by the unit Estimate and
// SE are given in (a test in one region: weight 1 there, 0 elsewhere, the
// estimate in that region's scaled units; a national test: every region's
// mean over the sum of the regions' means, the estimate in units of that
// sum). The term is log Normal(Estimate | L, SE). Regions of weight 0 are
// left out; a region without spend in the window adds nothing (removing no
// spend changes nothing). An outcome test of an upper-funnel channel needs
// the demand and the outcome panel in one PanelJoint; a queries test the
// demand panel alone; a paid-search channel takes outcome tests.
type PanelLiftTest struct {
	Column       string
	Metric       LiftMetric
	Start, End   int
	Estimate, SE float64
	Weights      []float64
	// Demand and Outcome are the PanelJoint's parts holding the demand and
	// the outcome panel (as LiftTest's).
	Demand, Outcome int

	regs []panelLiftRegion
	// the coefficients that vary by region, in the parts' targets: the
	// channel's in the demand panel (qc) and in the outcome panel (yc), and
	// gamma (gc); each index into PanelTarget.coefs, -1 when not used
	qc, yc, gc int
	// the base layouts' slots, for Lift on draws
	dl, ol       *PanelLayout
	qslot, yslot int // the channel's coefficient in a region's national-shaped draw
	gslot        int // gamma's
	vd, vo       []float64
}

// panelLiftRegion is one region's part of a test: its weight and its paths.
type panelLiftRegion struct {
	g    int
	w    float64
	q, y *liftPath
}

// bindPanel finds the channel in the panels the metric involves.
func (l *PanelLiftTest) bindPanel(parts []*PanelTarget) error {
	bad := func(f string, args ...any) error {
		return fmt.Errorf("lift test of %s: "+f, append([]any{l.Column}, args...)...)
	}
	part := func(k int) (*PanelTarget, error) {
		if k < 0 || k >= len(parts) {
			return nil, bad("no panel %d", k)
		}
		return parts[k], nil
	}
	// coef returns the channel's index in the panel's stages and its
	// coefficient's index in the target's coefs
	coef := func(t *PanelTarget) (int, int) {
		j := t.p.Stages[0].ChannelIndex(l.Column)
		if j < 0 {
			return -1, -1
		}
		for i, c := range t.coefs {
			if c.ch == t.chans[j] {
				return j, i
			}
		}
		return -1, -1
	}
	gammaCoef := func(t *PanelTarget) int {
		for i, c := range t.coefs {
			if c.ch == nil {
				return i
			}
		}
		return -1
	}
	var dem, out *PanelTarget
	jq, jy := -1, -1
	l.qc, l.yc, l.gc = -1, -1, -1
	switch l.Metric {
	case LiftQueries:
		var err error
		if dem, err = part(l.Demand); err != nil {
			return err
		}
		if jq, l.qc = coef(dem); jq < 0 {
			return bad("the %s panel has no such channel", dem.p.Name)
		}
	case LiftOutcome:
		var err error
		if out, err = part(l.Outcome); err != nil {
			return err
		}
		if jy, l.yc = coef(out); jy < 0 {
			return bad("the %s panel has no such channel", out.p.Name)
		}
		if d, err := part(l.Demand); err == nil && l.Demand != l.Outcome && d.p.Stages[0].ChannelIndex(l.Column) >= 0 {
			if l.gc = gammaCoef(out); l.gc < 0 {
				return bad("the %s panel has no query term", out.p.Name)
			}
			dem = d
			jq, l.qc = coef(dem)
		}
	default:
		return bad("unknown metric %d", l.Metric)
	}
	ref := out
	if ref == nil {
		ref = dem
	}
	G, T := ref.G, ref.T
	switch {
	case len(l.Weights) != G:
		return bad("%d weights for %d regions", len(l.Weights), G)
	case dem != nil && out != nil && (dem.G != out.G || dem.T != out.T):
		return bad("the panels cover different regions or weeks")
	case l.Start < 0 || l.End >= T || l.Start > l.End:
		return bad("weeks %d to %d are not within 0 to %d", l.Start, l.End, T-1)
	case !(l.SE > 0) || math.IsInf(l.SE, 0):
		return bad("the standard error must be a number > 0")
	case math.IsNaN(l.Estimate) || math.IsInf(l.Estimate, 0):
		return bad("the estimate must be a number")
	}
	path := func(t *PanelTarget, j, g int) *liftPath {
		p := &liftPath{slots: t.lay.base.Channels()[j], x: t.p.Stages[g].Channels[j].X}
		if newMeasuredInput(p.slots, p.x) != nil {
			return nil // the region model has none (PanelStages)
		}
		if d := p.slots.Drift; d.Has() {
			// the multiplier all regions share, from the base layout's slots
			p.sm = newSmoothEval(d.Basis, d.SD, d.Len, d.Z)
		}
		p.alloc()
		return p
	}
	l.regs = nil
	spend := 0.0
	for g, w := range l.Weights {
		if math.IsNaN(w) || w < 0 || math.IsInf(w, 0) {
			return bad("region %d's weight %v is not a number >= 0", g, w)
		}
		if w == 0 {
			continue
		}
		r := panelLiftRegion{g: g, w: w}
		if dem != nil {
			if r.q = path(dem, jq, g); r.q == nil {
				return bad("a measured channel is not part of the region model")
			}
		}
		if out != nil {
			if r.y = path(out, jy, g); r.y == nil {
				return bad("a measured channel is not part of the region model")
			}
		}
		x := r.path().x
		s := 0.0
		for t := l.Start; t <= l.End; t++ {
			s += x[t]
		}
		if s > 0 {
			spend += s
			l.regs = append(l.regs, r)
		}
	}
	if !(spend > 0) {
		return bad("no spend in weeks %d to %d in the regions tested", l.Start, l.End)
	}
	l.dl, l.ol, l.qslot, l.yslot, l.gslot = nil, nil, -1, -1, -1
	if dem != nil {
		l.dl = dem.lay
		l.qslot = dem.lay.base.Channels()[jq].Coef
		l.vd = make([]float64, dem.lay.base.Len())
	}
	if out != nil {
		l.ol = out.lay
		l.yslot = out.lay.base.Channels()[jy].Coef
		l.gslot = out.lay.base.GammaSlot()
		l.vo = make([]float64, out.lay.base.Len())
	}
	return nil
}

func (r *panelLiftRegion) path() *liftPath {
	if r.y != nil {
		return r.y
	}
	return r.q
}

// clonePanel returns a bound copy with its own scratch.
func (l *PanelLiftTest) clonePanel() *PanelLiftTest {
	c := *l
	c.regs = make([]panelLiftRegion, len(l.regs))
	for i, r := range l.regs {
		c.regs[i] = panelLiftRegion{g: r.g, w: r.w, q: r.q.clone(), y: r.y.clone()}
	}
	if l.vd != nil {
		c.vd = make([]float64, len(l.vd))
	}
	if l.vo != nil {
		c.vo = make([]float64, len(l.vo))
	}
	return &c
}

// logDensity returns log Normal(Estimate | L, SE) up to a constant at the
// parts' decoded values and, with grad, adds its gradient: in each region's
// coefficients to their data gradient (panelCoef.g, before the hierarchy
// pulls it back to the sampling coordinates) and in the shared transforms
// to the natural gradient.
func (l *PanelLiftTest) logDensity(parts []*PanelTarget, grad bool) float64 {
	var dem, out *PanelTarget
	if l.qc >= 0 {
		dem = parts[l.Demand]
	}
	if l.yc >= 0 {
		out = parts[l.Outcome]
	}
	L := 0.0
	for i := range l.regs {
		r := &l.regs[i]
		if r.q != nil {
			r.q.diff(dem.nat, l.Start, l.End)
			lq := dem.coefs[l.qc].v[r.g] * r.q.d[0]
			if l.gc >= 0 {
				lq *= out.coefs[l.gc].v[r.g]
			}
			L += r.w * lq
		}
		if r.y != nil {
			r.y.diff(out.nat, l.Start, l.End)
			L += r.w * out.coefs[l.yc].v[r.g] * r.y.d[0]
		}
	}
	z := (l.Estimate - L) / l.SE
	if !grad {
		return -0.5 * z * z
	}
	rr := z / l.SE // d lp/dL
	for i := range l.regs {
		r := &l.regs[i]
		g := r.g
		rg := rr * r.w
		if r.q != nil {
			qc := dem.coefs[l.qc]
			alpha, dq := qc.v[g], r.q.d[0]
			k := rg // d lp / d (alpha dq)
			if l.gc >= 0 {
				gc := out.coefs[l.gc]
				gc.g[g] += rg * alpha * dq
				k *= gc.v[g]
			}
			qc.g[g] += k * dq
			r.q.transformGrad(dem.gn, k*alpha)
			r.q.driftGrad(dem.gn, dem.nat, k*alpha, l.Start, l.End)
		}
		if r.y != nil {
			yc := out.coefs[l.yc]
			yc.g[g] += rg * r.y.d[0]
			r.y.transformGrad(out.gn, rg*yc.v[g])
			r.y.driftGrad(out.gn, out.nat, rg*yc.v[g], l.Start, l.End)
		}
	}
	return -0.5 * z * z
}

// transformGrad adds r d(p.d[0])/d(lam, K, S) to g, after diff.
func (p *liftPath) transformGrad(g []float64, r float64) {
	if p.slots.Linear() {
		return
	}
	g[p.slots.Lam] += r * p.d[1]
	g[p.slots.K] += r * p.d[2]
	g[p.slots.S] += r * p.d[3]
}

// driftGrad adds r d(p.d[0])/d f(t), pulled back to the drift's natural
// values, to g, after diff (nothing when the channel does not drift).
func (p *liftPath) driftGrad(g, nat []float64, r float64, from, to int) {
	if p.sm == nil {
		return
	}
	for t := from; t <= to; t++ {
		p.r[t] = r * p.mult[t] * p.dh[t]
	}
	p.sm.backward(g, nat, p.r, from, to+1)
}

// Lift returns the model's value of the tested quantity (in the unit of
// Estimate) at the constrained panel draws of the demand and the outcome
// panel (either may be nil when the test does not involve it), read region
// by region through PanelLayout.Region. It uses the test's scratch: one
// goroutine per test (Clone).
func (l *PanelLiftTest) Lift(demand, outcome []float64) float64 {
	L := 0.0
	for i := range l.regs {
		r := &l.regs[i]
		if r.q != nil {
			v := l.dl.Region(l.vd, demand, r.g)
			r.q.diff(v, l.Start, l.End)
			lq := v[l.qslot] * r.q.d[0]
			if l.gc >= 0 {
				lq *= l.ol.Region(l.vo, outcome, r.g)[l.gslot]
			}
			L += r.w * lq
		}
		if r.y != nil {
			v := l.ol.Region(l.vo, outcome, r.g)
			r.y.diff(v, l.Start, l.End)
			L += r.w * v[l.yslot] * r.y.d[0]
		}
	}
	return L
}

// Clone returns a bound copy with its own scratch (for Lift).
func (l *PanelLiftTest) Clone() *PanelLiftTest { return l.clonePanel() }

// Regions returns the regions the test covers (weight above 0 and spend in
// the window), in order.
func (l *PanelLiftTest) Regions() []int {
	out := make([]int, len(l.regs))
	for i, r := range l.regs {
		out[i] = r.g
	}
	return out
}
