package model

import (
	"math"

	"spillway/funnel/mcmc"
)

// Target is a compiled Stage: an mcmc.Target on the unconstrained space.
// Its log density is the sum of the stage's terms (doc.go).
type Target struct {
	st      *Stage
	T       int
	dim     int
	par     []param // the prior terms, in Names() order
	mu      int
	sigma   int
	terms   []predictor // the linear predictor's terms: regressors, then channels
	shear   *trendShear // the trend's slope sampled as the total slope, with drift; nil otherwise
	lik     observation // the weekly likelihood
	centred bool
	plain   bool

	nat, gnat []float64 // natural values and gradients, len(par)
	n, w      []float64 // linear predictor and d lp/d n, len T
}

var _ mcmc.Target = (*Target)(nil)

func (t *Target) alloc() {
	t.lik = newNormalLik(t.st.Y, t.st.Mask, t.sigma)
	t.nat = make([]float64, len(t.par))
	t.gnat = make([]float64, len(t.par))
	t.n = make([]float64, t.T)
	t.w = make([]float64, t.T)
}

// Dim returns the number of free (sampled) parameters.
func (t *Target) Dim() int { return t.dim }

// Names returns the constrained parameter names (fixed ones included).
func (t *Target) Names() []string { return t.st.Names() }

// Stage returns the stage the target was compiled from.
func (t *Target) Stage() *Stage { return t.st }

// Clone returns an independent copy with its own scratch buffers.
func (t *Target) Clone() mcmc.Target { return t.clone() }

func (t *Target) clone() *Target {
	c := *t
	c.terms = make([]predictor, len(t.terms))
	for i, term := range t.terms {
		c.terms[i] = term.clone()
	}
	if t.shear != nil {
		c.shear = t.shear.clone(c.terms)
	}
	c.alloc()
	return &c
}

// LogProbGrad returns the log posterior density at x (up to a constant) and
// writes its gradient into grad.
func (t *Target) LogProbGrad(grad, x []float64) float64 {
	if len(x) != t.dim || len(grad) != t.dim {
		panic("model: dimension mismatch")
	}
	lp, ok := t.eval(x, true)
	if !ok {
		return math.Inf(-1)
	}
	return t.finish(grad, lp)
}

// LogProb returns the log posterior density at x without its gradient.
func (t *Target) LogProb(x []float64) float64 {
	if len(x) != t.dim {
		panic("model: dimension mismatch")
	}
	lp, ok := t.eval(x, false)
	if !ok {
		return math.Inf(-1)
	}
	return t.finish(nil, lp)
}

// decode fills t.nat with the natural values at the unconstrained x (the
// intercept's slot holds the centred intercept m0, not mu) and prepares
// every term. It returns false where the density is not defined.
func (t *Target) decode(x []float64, grad bool) bool {
	for i := range t.par {
		t.nat[i] = t.par[i].value(x)
	}
	ok := true
	for _, term := range t.terms {
		ok = term.prepare(t.nat, grad) && ok
	}
	if t.shear != nil && ok {
		t.shear.apply(t.nat)
	}
	return ok
}

// eval is the first half of an evaluation: the natural values, the linear
// predictor, the likelihood and the priors. With grad, t.gnat then holds the
// gradient with respect to the natural values, to which terms that tie
// stages together may add before finish. It returns false where the density
// is not defined.
func (t *Target) eval(x []float64, grad bool) (float64, bool) {
	nat, g := t.nat, t.gnat
	ok := t.decode(x, grad)
	for _, v := range nat {
		if notFinite(v) {
			return 0, false
		}
	}
	if !ok {
		return 0, false
	}
	for i := range g {
		g[i] = 0
	}
	m0 := nat[t.mu]
	mu := m0 // the DESIGN.md intercept
	for i := range t.n {
		t.n[i] = m0
	}
	for _, term := range t.terms {
		mu -= term.forward(t.n, nat)
	}
	lp, sw := t.lik.logLik(t.w, t.n, nat, g, grad)
	// the intercept's prior acts on mu, a function of the other parameters
	lpm, gmu := t.par[t.mu].prior.LogPdf(mu)
	lp += lpm
	if grad {
		g[t.mu] += sw + gmu // d mu / d m0 = 1
		for _, term := range t.terms {
			term.backward(g, nat, t.w, sw, gmu)
		}
	}
	for i := range t.par {
		p := &t.par[i]
		if i == t.mu || p.free < 0 {
			continue
		}
		l, d := p.prior.LogPdf(nat[i])
		lp += l
		if grad {
			g[i] += d
		}
	}
	if grad && t.shear != nil {
		t.shear.backward(g, nat)
	}
	return lp, true
}

// finish is the second half of an evaluation: unless grad is nil, the chain
// rule from t.gnat to the sampling coordinates into grad; and the
// log-Jacobians of the transforms, added to lp.
func (t *Target) finish(grad []float64, lp float64) float64 {
	if notFinite(lp) {
		return math.Inf(-1)
	}
	nat, g := t.nat, t.gnat
	for i := range t.par {
		p := &t.par[i]
		if p.free < 0 {
			continue
		}
		if grad != nil {
			grad[p.free] = p.chainGrad(g[i], nat[i])
		}
		if p.sup != Real {
			lp += p.logJac(nat[i])
		}
	}
	for _, term := range t.terms {
		lp = term.pullback(grad, g, nat, lp)
	}
	return lp
}

// Constrain writes the DESIGN.md parameter values at the unconstrained x into
// dst (len(Names())) and returns it.
func (t *Target) Constrain(dst, x []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(t.par))
	}
	t.decode(x, true)
	copy(dst, t.nat)
	mu := t.nat[t.mu]
	if t.centred {
		for _, term := range t.terms {
			mu -= term.shift(t.nat)
		}
	}
	dst[t.mu] = mu
	return dst
}

// Unconstrain writes the unconstrained point of the DESIGN.md parameter
// values v (len(Names())) into dst and returns it: the inverse of Constrain.
func (t *Target) Unconstrain(dst, v []float64) []float64 {
	if dst == nil {
		dst = make([]float64, t.dim)
	}
	for i := range t.par {
		if p := &t.par[i]; p.free >= 0 {
			dst[p.free] = p.unconstrain(v[i])
		}
	}
	if t.plain {
		return dst
	}
	// rescaled coefficients and the centred intercept
	m0 := v[t.mu]
	for _, term := range t.terms {
		m0 += term.unconstrain(dst, v, t.par)
	}
	if p := t.par[t.mu]; p.free >= 0 {
		dst[p.free] = m0
	}
	if t.shear != nil {
		dst[t.par[t.shear.k].free] += t.shear.at(v)
	}
	return dst
}
