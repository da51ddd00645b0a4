package model

import (
	"math"
	"spillway/funnel/stat"

	"spillway/funnel/transform"
)

// channelTerm is a media channel, coef * H(adstock(x; lam); K, S), or
// coef * x[t] when linear. Unless the stage is plain, its coefficient is
// sampled as coef * href, the response at mean spend (doc.go), so prepare
// divides it by href and pullback adds href's dependence on K and S.
type channelTerm struct {
	k                      []int // positions of coef, then lam, K, S unless linear
	coefFree, kFree, sFree int   // their sampling coordinates, -1 when fixed
	coefReal               bool  // the coefficient's prior is on the real line
	x                      []float64
	linear, plain          bool
	centred                bool
	// mean scaled spend: the reference level of the coefficient, and the
	// centring constant of a linear channel
	abar float64
	// scratch, len(x): adstock and its derivative in lam; the response and
	// its derivatives in lam, K and S
	a, da, h, hl, hk, hs      []float64
	hbar, hlbar, hkbar, hsbar float64 // their means
	href, hrefK, hrefS        float64 // H(abar; K, S) and its derivatives in K and S
}

func newChannelTerm(c *Channel, k []int, par []param, plain, centred bool) *channelTerm {
	ch := &channelTerm{k: k, x: c.X, linear: c.Linear, plain: plain, centred: centred,
		abar: stat.Mean(c.X), coefFree: par[k[0]].free, coefReal: par[k[0]].sup == Real, kFree: -1, sFree: -1}
	if !c.Linear {
		ch.kFree, ch.sFree = par[k[2]].free, par[k[3]].free
		ch.alloc()
	}
	return ch
}

func (c *channelTerm) alloc() {
	T := len(c.x)
	c.a, c.da = make([]float64, T), make([]float64, T)
	c.h, c.hl, c.hk, c.hs = make([]float64, T), make([]float64, T), make([]float64, T), make([]float64, T)
}

func (c *channelTerm) clone() predictor {
	d := *c
	if !c.linear {
		d.alloc()
	}
	return &d
}

func (c *channelTerm) prepare(nat []float64, grad bool) bool {
	switch {
	case c.linear:
		c.href = 1
		if !c.plain {
			c.href = c.abar
		}
		c.hrefK, c.hrefS = 0, 0
		c.hbar = c.abar
	case grad:
		c.series(nat[c.k[1]], nat[c.k[2]], nat[c.k[3]])
	default:
		c.values(nat[c.k[1]], nat[c.k[2]], nat[c.k[3]])
	}
	if c.coefFree >= 0 {
		nat[c.k[0]] /= c.href
	}
	return c.href > 0 && !math.IsNaN(c.href)
}

// values computes the response series and its mean alone.
func (c *channelTerm) values(lam, k, s float64) {
	transform.Adstock(c.a, c.x, lam)
	sh := 0.0
	for i, a := range c.a {
		c.h[i] = transform.Hill(a, k, s)
		sh += c.h[i]
	}
	c.hbar = sh / float64(len(c.x))
	c.href = 1
	if !c.plain {
		c.href = transform.Hill(c.abar, k, s)
	}
}

// series computes the response series with its derivatives in lam, K and
// S, their means, and href with its derivatives.
func (c *channelTerm) series(lam, k, s float64) {
	transform.AdstockGrad(c.a, c.da, c.x, lam)
	sh, shl, shk, shs := transform.HillSeries(c.h, c.hl, c.hk, c.hs, c.a, c.da, k, s)
	T := float64(len(c.x))
	c.hbar, c.hlbar, c.hkbar, c.hsbar = sh/T, shl/T, shk/T, shs/T
	if c.plain {
		c.href, c.hrefK, c.hrefS = 1, 0, 0
	} else {
		c.href, _, c.hrefK, c.hrefS = transform.HillGrad(c.abar, k, s)
	}
}

func (c *channelTerm) response() []float64 {
	if c.linear {
		return c.x
	}
	return c.h
}

func (c *channelTerm) forward(n, nat []float64) float64 {
	b := nat[c.k[0]]
	cb := 0.0
	if c.centred {
		cb = c.hbar
	}
	for i, h := range c.response() {
		n[i] += b * (h - cb)
	}
	return b * cb
}

func (c *channelTerm) shift(nat []float64) float64 {
	if !c.centred {
		return 0
	}
	return nat[c.k[0]] * c.hbar
}

func (c *channelTerm) backward(g, nat, w []float64, sw, gmu float64) {
	b := nat[c.k[0]]
	cb := 0.0
	if c.centred {
		cb = 1
	}
	if c.linear {
		s := 0.0
		for i, v := range c.x {
			s += w[i] * (v - cb*c.hbar)
		}
		g[c.k[0]] += s - gmu*cb*c.hbar
		return
	}
	var s0, sl, sk, ss float64
	for i := range c.h {
		w := w[i]
		s0 += w * c.h[i]
		sl += w * c.hl[i]
		sk += w * c.hk[i]
		ss += w * c.hs[i]
	}
	g[c.k[0]] += s0 - cb*c.hbar*sw - gmu*cb*c.hbar
	g[c.k[1]] += b * (sl - cb*c.hlbar*sw - gmu*cb*c.hlbar)
	g[c.k[2]] += b * (sk - cb*c.hkbar*sw - gmu*cb*c.hkbar)
	g[c.k[3]] += b * (ss - cb*c.hsbar*sw - gmu*cb*c.hsbar)
}

// pullback: the sampled coefficient is u with coef = g(u)/href(K, S). The
// per-parameter chain rule treated coef as a function of u alone; this adds
// its dependence on K and S and, for a coefficient on the real line, the
// factor 1/href and the Jacobian term -log href (for a positive coefficient
// log coef already holds it).
func (c *channelTerm) pullback(grad, g, nat []float64, lp float64) float64 {
	if c.plain || c.coefFree < 0 {
		return lp
	}
	if c.coefReal {
		if grad != nil {
			grad[c.coefFree] /= c.href // d coef/du = 1/href
		}
		lp -= math.Log(c.href)
	}
	if c.linear || grad == nil {
		return lp
	}
	b := nat[c.k[0]]
	for q, dref := range [2]float64{c.hrefK, c.hrefS} {
		free := c.kFree
		if q == 1 {
			free = c.sFree
		}
		if free < 0 {
			continue
		}
		v := nat[c.k[q+2]] // K or S, positive
		// d coef/dv = -coef dref/href; d(-log href)/dv = -dref/href
		grad[free] += (-g[c.k[0]]*b*dref/c.href - dref/c.href) * v
	}
	return lp
}

// unconstrain writes the sampling coordinate of the coefficient at the
// natural values v into dst and returns coef * hbar, what the centred
// intercept adds back (0 when not centred).
func (c *channelTerm) unconstrain(dst, v []float64, par []param) float64 {
	href, hbar := c.abar, c.abar
	if !c.linear {
		a := transform.Adstock(nil, c.x, v[c.k[1]])
		s := 0.0
		for _, ai := range a {
			s += transform.Hill(ai, v[c.k[2]], v[c.k[3]])
		}
		hbar = s / float64(len(a))
		href = transform.Hill(c.abar, v[c.k[2]], v[c.k[3]])
	}
	if c.coefFree >= 0 {
		dst[c.coefFree] = par[c.k[0]].unconstrain(v[c.k[0]] * href)
	}
	if !c.centred {
		return 0
	}
	return v[c.k[0]] * hbar
}
