package model

import (
	"math"

	"spillway/funnel/stat"
	"spillway/funnel/transform"
)

// driftTerm is a media channel whose coefficient drifts by week:
// coef exp(f(t)) H(adstock(x; lam); K, S) (coef exp(f(t)) x[t] when linear),
// f a smooth function of the week averaging zero over the fitted weeks
// (smooth.go), so coef stays the channel's average effectiveness. The
// multiplier acts in the week the response is observed: spend carried over
// from an earlier week meets the effectiveness of the week it lands in.
//
// It is a channelTerm (the response, its derivatives and the rescaled
// coefficient, unchanged) with its own pass over the weeks: with
// c(t) = exp(f(t)) h(t) it adds coef (c(t) - cbar) to n, and pulls
// w^(t) = w[t] - (sw + gmu)/T (centred) back to the coefficient, the
// transform and, through d c(t)/d f(t) = c(t), to the smooth function.
type driftTerm struct {
	*channelTerm
	sm   *smoothEval
	mult []float64 // exp(f(t))
	r    []float64 // scratch: d lp / d f(t)
	cbar float64   // mean of exp(f(t)) h(t)
}

func newDriftTerm(ch *channelTerm, sm *smoothEval) *driftTerm {
	d := &driftTerm{channelTerm: ch, sm: sm}
	d.alloc()
	return d
}

func (d *driftTerm) alloc() {
	T := len(d.x)
	d.mult, d.r = make([]float64, T), make([]float64, T)
}

func (d *driftTerm) clone() predictor {
	c := *d
	c.channelTerm = d.channelTerm.clone().(*channelTerm)
	c.sm = d.sm.clone()
	c.alloc()
	return &c
}

func (d *driftTerm) prepare(nat []float64, grad bool) bool {
	ok := d.channelTerm.prepare(nat, grad)
	T := len(d.x)
	d.sm.eval(nat, 0, T)
	s := 0.0
	for t, h := range d.response() {
		m := math.Exp(d.sm.f[t])
		d.mult[t] = m
		s += m * h
	}
	d.cbar = s / float64(T)
	return ok && !notFinite(d.cbar)
}

func (d *driftTerm) centre() float64 {
	if d.centred {
		return d.cbar
	}
	return 0
}

func (d *driftTerm) forward(n, nat []float64) float64 {
	b := nat[d.k[0]]
	cb := d.centre()
	for t, h := range d.response() {
		n[t] += b * (d.mult[t]*h - cb)
	}
	return b * cb
}

func (d *driftTerm) shift(nat []float64) float64 { return nat[d.k[0]] * d.centre() }

func (d *driftTerm) backward(g, nat, w []float64, sw, gmu float64) {
	b := nat[d.k[0]]
	off := 0.0
	if d.centred {
		off = (sw + gmu) / float64(len(d.x))
	}
	var s0, sl, sk, ss float64
	if d.linear {
		for t, x := range d.x {
			wm := (w[t] - off) * d.mult[t]
			s0 += wm * x
			d.r[t] = wm * b * x
		}
		g[d.k[0]] += s0
	} else {
		for t, h := range d.h {
			wm := (w[t] - off) * d.mult[t]
			s0 += wm * h
			sl += wm * d.hl[t]
			sk += wm * d.hk[t]
			ss += wm * d.hs[t]
			d.r[t] = wm * b * h
		}
		g[d.k[0]] += s0
		g[d.k[1]] += b * sl
		g[d.k[2]] += b * sk
		g[d.k[3]] += b * ss
	}
	d.sm.backward(g, nat, d.r, 0, len(d.x))
}

// unconstrain writes the coefficient's sampling coordinate at the natural
// values v and returns coef times the mean of exp(f(t)) h(t) (0 when not
// centred).
func (d *driftTerm) unconstrain(dst, v []float64, par []param) float64 {
	d.channelTerm.unconstrain(dst, v, par)
	if !d.centred {
		return 0
	}
	h := d.x
	if !d.linear {
		h = transform.Adstock(nil, d.x, v[d.k[1]])
		for t, a := range h {
			h[t] = transform.Hill(a, v[d.k[2]], v[d.k[3]])
		}
	}
	f := d.sm.full(v)
	s := 0.0
	for t, ht := range h {
		s += math.Exp(f[t]) * ht
	}
	return v[d.k[0]] * s / float64(len(h))
}

// baselineTerm is a baseline that moves: f(t) added to the linear predictor,
// a smooth function of the week averaging zero over the fitted weeks, in
// place of the trend line. With a centred intercept it adds f(t) - fbar
// (fbar its mean over every week, 0 unless some are held out).
type baselineTerm struct {
	sm      *smoothEval
	centred bool
	fbar    float64
	r       []float64
}

func newBaselineTerm(sm *smoothEval, centred bool) *baselineTerm {
	return &baselineTerm{sm: sm, centred: centred, r: make([]float64, sm.b.T)}
}

func (b *baselineTerm) clone() predictor {
	c := *b
	c.sm = b.sm.clone()
	c.r = make([]float64, len(b.r))
	return &c
}

func (b *baselineTerm) prepare(nat []float64, _ bool) bool {
	T := b.sm.b.T
	b.sm.eval(nat, 0, T)
	b.fbar = 0
	if b.centred {
		b.fbar = stat.Mean(b.sm.f)
	}
	return !notFinite(b.fbar)
}

func (b *baselineTerm) forward(n, _ []float64) float64 {
	for t, f := range b.sm.f {
		n[t] += f - b.fbar
	}
	return b.fbar
}

func (b *baselineTerm) shift([]float64) float64 { return b.fbar }

func (b *baselineTerm) backward(g, nat, w []float64, sw, gmu float64) {
	off := 0.0
	if b.centred {
		off = (sw + gmu) / float64(len(w))
	}
	for t := range b.r {
		b.r[t] = w[t] - off
	}
	b.sm.backward(g, nat, b.r, 0, len(b.r))
}

func (b *baselineTerm) pullback(_, _, _ []float64, lp float64) float64 { return lp }

func (b *baselineTerm) unconstrain(_, v []float64, _ []param) float64 {
	if !b.centred {
		return 0
	}
	e := b.sm
	return stat.Mean(e.full(v))
}

var (
	_ predictor = (*driftTerm)(nil)
	_ predictor = (*baselineTerm)(nil)
)
