package model

import (
	"fmt"
	"math"

	"spillway/funnel/mcmc"
	"spillway/funnel/stat"
	"spillway/funnel/transform"
)

// Regressor is a term coef * X[t] of a stage's linear predictor.
type Regressor struct {
	Name  string // parameter name, e.g. "b_q" or "gamma"
	X     []float64
	Prior Prior
	// Default is the support of the default prior; a user prior of another
	// family may change it (a normal prior frees the sign).
	Default Support
}

// Channel is a media term coef * H(adstock(X; lam); K, S), or coef * X[t]
// when Linear.
type Channel struct {
	Column string    // the data column, e.g. "video_spend"
	X      []float64 // scaled spend
	// Names of the coefficient, retention, half-saturation and shape
	// parameters, e.g. "alpha[video_spend]", "lam[video_spend]", ...
	Coef, Lam, K, S string
	// Priors of coef, lam, K, S in that order.
	Priors [4]Prior
	Linear bool
}

// Stage is one regression of the model: Y[t] ~ Normal(n[t], sigma) with
// n[t] = mu + sum_i Regressors[i] + sum_j Channels[j].
type Stage struct {
	Name       string // "demand", "outcome" or "naive"
	Y          []float64
	Intercept  string
	MuPrior    Prior
	Regressors []Regressor
	Channels   []Channel
	Sigma      string
	SigmaPrior Prior
	Plain      bool // sample in the direct coordinates (no centring, no coefficient rescaling)
	// Mask, if not nil, marks weeks left out of the likelihood.
	Mask []bool
}

// Names returns the stage's constrained parameter names in draw order:
// intercept, regressors, each channel's coef, lam, K, S (coef only when
// linear), sigma.
func (s *Stage) Names() []string {
	names := []string{s.Intercept}
	for _, r := range s.Regressors {
		names = append(names, r.Name)
	}
	for _, c := range s.Channels {
		if c.Linear {
			names = append(names, c.Coef)
		} else {
			names = append(names, c.Coef, c.Lam, c.K, c.S)
		}
	}
	return append(names, s.Sigma)
}

// SetPrior replaces the prior of the named parameter and reports whether the
// stage has it.
func (s *Stage) SetPrior(name string, p Prior) bool {
	switch name {
	case s.Intercept:
		s.MuPrior = p
		return true
	case s.Sigma:
		s.SigmaPrior = p
		return true
	}
	for i := range s.Regressors {
		if s.Regressors[i].Name == name {
			s.Regressors[i].Prior = p
			return true
		}
	}
	for i := range s.Channels {
		c := &s.Channels[i]
		for k, n := range []string{c.Coef, c.Lam, c.K, c.S} {
			if n == name && (k == 0 || !c.Linear) {
				c.Priors[k] = p
				return true
			}
		}
	}
	return false
}

// Target compiles the stage into a sampler target. It returns an error when a
// prior does not fit its parameter (a beta prior on a coefficient, say).
func (s *Stage) Target() (*Target, error) {
	t := &Target{st: s, T: len(s.Y)}
	coefficient := map[string]bool{}
	for _, r := range s.Regressors {
		coefficient[r.Name] = true
	}
	for _, c := range s.Channels {
		coefficient[c.Coef] = true
	}
	add := func(name string, p Prior, def Support) (int, error) {
		if err := p.Check(); err != nil {
			return 0, fmt.Errorf("prior for %s: %v", name, err)
		}
		sup := p.Support(def)
		if p.Family == Flat && coefficient[name] {
			sup = Real // a flat prior on a coefficient frees its sign
		}
		if def == UnitInterval && sup != UnitInterval || def != UnitInterval && sup == UnitInterval {
			return 0, fmt.Errorf("prior for %s: %s does not fit a parameter on %s", name, p.Family, supportName(def))
		}
		if p.Family == Fixed && !inSupport(p.P1, sup) {
			return 0, fmt.Errorf("prior for %s: fixed value %g is outside %s", name, p.P1, supportName(sup))
		}
		if def == PositiveReal && sup == Real && (name == s.Sigma) {
			return 0, fmt.Errorf("prior for %s: a scale needs a positive prior", name)
		}
		k := len(t.par)
		pp := param{name: name, prior: p, sup: sup, free: -1}
		if p.Family != Fixed {
			pp.free = t.dim
			t.dim++
		}
		t.par = append(t.par, pp)
		return k, nil
	}
	var err error
	if t.mu, err = add(s.Intercept, s.MuPrior, Real); err != nil {
		return nil, err
	}
	t.centred = !s.Plain && t.par[t.mu].free >= 0
	for _, r := range s.Regressors {
		k, err := add(r.Name, r.Prior, r.Default)
		if err != nil {
			return nil, err
		}
		bar := 0.0
		if t.centred {
			bar = stat.Mean(r.X)
		}
		t.reg = append(t.reg, regTerm{k: k, x: r.X, bar: bar})
	}
	for _, c := range s.Channels {
		ch := chanTerm{x: c.X, linear: c.Linear, abar: stat.Mean(c.X)}
		if ch.k[0], err = add(c.Coef, c.Priors[0], PositiveReal); err != nil {
			return nil, err
		}
		if !c.Linear {
			for i, n := range []string{c.Lam, c.K, c.S} {
				def := PositiveReal
				if i == 0 {
					def = UnitInterval
				}
				if ch.k[i+1], err = add(n, c.Priors[i+1], def); err != nil {
					return nil, err
				}
			}
			T := len(c.X)
			ch.a, ch.da = make([]float64, T), make([]float64, T)
			ch.h, ch.hl, ch.hk, ch.hs = make([]float64, T), make([]float64, T), make([]float64, T), make([]float64, T)
		}
		t.ch = append(t.ch, ch)
	}
	if t.sigma, err = add(s.Sigma, s.SigmaPrior, PositiveReal); err != nil {
		return nil, err
	}
	if t.par[t.sigma].prior.Family == Fixed && t.par[t.sigma].prior.P1 <= 0 {
		return nil, fmt.Errorf("prior for %s: fixed value must be > 0", s.Sigma)
	}
	t.alloc()
	return t, nil
}

func inSupport(x float64, s Support) bool {
	switch s {
	case PositiveReal:
		return x > 0
	case UnitInterval:
		return x > 0 && x < 1
	}
	return true
}

func supportName(s Support) string {
	switch s {
	case PositiveReal:
		return "x > 0"
	case UnitInterval:
		return "(0, 1)"
	}
	return "the real line"
}

type param struct {
	name  string
	prior Prior
	sup   Support
	free  int // index in the unconstrained vector, -1 when fixed
}

type regTerm struct {
	k   int
	x   []float64
	bar float64 // centring constant (0 when not centred)
}

type chanTerm struct {
	k      [4]int // parameter indices of coef, lam, K, S
	x      []float64
	linear bool
	abar   float64 // mean scaled spend: the reference level of the coefficient
	// scratch, len T
	a, da, h, hl, hk, hs      []float64
	hbar, hlbar, hkbar, hsbar float64
	href, hrefK, hrefS        float64
}

// Target is a compiled Stage: an mcmc.Target on the unconstrained space.
type Target struct {
	st      *Stage
	T       int
	dim     int
	par     []param
	mu      int
	sigma   int
	reg     []regTerm
	ch      []chanTerm
	centred bool

	nObs      int       // weeks in the likelihood (not masked)
	nat, gnat []float64 // natural values and gradients, len(par)
	n, w      []float64 // linear predictor and scaled residuals, len T
}

var _ mcmc.Target = (*Target)(nil)

func (t *Target) alloc() {
	t.nObs = t.T
	for _, m := range t.st.Mask {
		if m {
			t.nObs--
		}
	}
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
func (t *Target) Clone() mcmc.Target {
	c := *t
	c.reg = append([]regTerm(nil), t.reg...)
	c.ch = make([]chanTerm, len(t.ch))
	for i, ch := range t.ch {
		c.ch[i] = ch
		if !ch.linear {
			T := t.T
			c.ch[i].a, c.ch[i].da = make([]float64, T), make([]float64, T)
			c.ch[i].h, c.ch[i].hl, c.ch[i].hk, c.ch[i].hs = make([]float64, T), make([]float64, T), make([]float64, T), make([]float64, T)
		}
	}
	c.alloc()
	return &c
}

// decode fills t.nat from the unconstrained x (the intercept slot holds the
// centred intercept m0 until the end of the likelihood pass), and computes
// each channel's transformed series.
func (t *Target) decode(x []float64, wantGrad bool) {
	for i, p := range t.par {
		if p.free < 0 {
			t.nat[i] = p.prior.P1
			continue
		}
		u := x[p.free]
		switch p.sup {
		case PositiveReal:
			t.nat[i] = math.Exp(u)
		case UnitInterval:
			t.nat[i] = 1 / (1 + math.Exp(-u))
		default:
			t.nat[i] = u
		}
	}
	for j := range t.ch {
		c := &t.ch[j]
		if c.linear {
			c.href = 1
			if !t.st.Plain {
				c.href = c.abar
			}
			c.hrefK, c.hrefS = 0, 0
			c.hbar = stat.Mean(c.x)
			continue
		}
		lam, k, s := t.nat[c.k[1]], t.nat[c.k[2]], t.nat[c.k[3]]
		if !wantGrad {
			transform.Adstock(c.a, c.x, lam)
			sh := 0.0
			for i, a := range c.a {
				c.h[i] = transform.Hill(a, k, s)
				sh += c.h[i]
			}
			c.hbar = sh / float64(t.T)
			c.href = 1
			if !t.st.Plain {
				c.href = transform.Hill(c.abar, k, s)
			}
			continue
		}
		transform.AdstockGrad(c.a, c.da, c.x, lam)
		// transform.HillGrad inlined with the per-channel constants hoisted:
		// one log, one exp and two divisions per week (the hot loop).
		var sh, shl, shk, shs float64
		logK, invK := math.Log(k), 1/k
		for i, a := range c.a {
			if a <= 0 {
				c.h[i], c.hl[i], c.hk[i], c.hs[i] = 0, 0, 0, 0
				continue
			}
			la := math.Log(a) - logK
			r := math.Exp(s * la)
			if r > 1e300 {
				c.h[i], c.hl[i], c.hk[i], c.hs[i] = 1, 0, 0, 0
				sh++
				continue
			}
			inv := 1 / (1 + r)
			h := r * inv
			w := h * inv // H(1-H)
			sw := s * w
			c.h[i], c.hl[i], c.hk[i], c.hs[i] = h, sw/a*c.da[i], -sw*invK, w*la
			sh += h
			shl += c.hl[i]
			shk += c.hk[i]
			shs += c.hs[i]
		}
		T := float64(t.T)
		c.hbar, c.hlbar, c.hkbar, c.hsbar = sh/T, shl/T, shk/T, shs/T
		if t.st.Plain {
			c.href, c.hrefK, c.hrefS = 1, 0, 0
		} else {
			c.href, _, c.hrefK, c.hrefS = transform.HillGrad(c.abar, k, s)
		}
	}
	// the coefficient slot holds the rescaled coefficient: divide by href
	for j := range t.ch {
		c := &t.ch[j]
		if t.par[c.k[0]].free >= 0 {
			t.nat[c.k[0]] /= c.href
		}
	}
}

// LogProbGrad returns the log posterior density at x (up to a constant) and
// writes its gradient into grad.
func (t *Target) LogProbGrad(grad, x []float64) float64 {
	if len(x) != t.dim || len(grad) != t.dim {
		panic("model: dimension mismatch")
	}
	return t.logProb(grad, x)
}

// LogProb returns the log posterior density at x without its gradient.
func (t *Target) LogProb(x []float64) float64 {
	if len(x) != t.dim {
		panic("model: dimension mismatch")
	}
	return t.logProb(nil, x)
}

// logProb computes the log density, and its gradient into grad unless grad
// is nil.
func (t *Target) logProb(grad, x []float64) float64 {
	wantGrad := grad != nil
	t.decode(x, wantGrad)
	for _, v := range t.nat {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return math.Inf(-1)
		}
	}
	for j := range t.ch {
		if t.ch[j].href <= 0 || math.IsNaN(t.ch[j].href) {
			return math.Inf(-1)
		}
	}
	nat, g := t.nat, t.gnat
	for i := range g {
		g[i] = 0
	}
	m0 := nat[t.mu]
	mu := m0 // the DESIGN.md intercept
	for i := range t.n {
		t.n[i] = m0
	}
	for _, r := range t.reg {
		b := nat[r.k]
		mu -= b * r.bar
		for i, v := range r.x {
			t.n[i] += b * (v - r.bar)
		}
	}
	for j := range t.ch {
		c := &t.ch[j]
		b := nat[c.k[0]]
		hs := c.h
		if c.linear {
			hs = c.x
		}
		cb := 0.0
		if t.centred {
			cb = c.hbar
		}
		mu -= b * cb
		for i, h := range hs {
			t.n[i] += b * (h - cb)
		}
	}
	sigma := nat[t.sigma]
	inv2 := 1 / (sigma * sigma)
	ss := 0.0
	sw := 0.0
	mask := t.st.Mask
	for i, y := range t.st.Y {
		if mask != nil && mask[i] {
			t.w[i] = 0
			continue
		}
		e := y - t.n[i]
		ss += e * e
		t.w[i] = e * inv2
		sw += t.w[i]
	}
	lp := -float64(t.nObs)*math.Log(sigma) - 0.5*ss*inv2
	if !wantGrad {
		lpm, _ := t.par[t.mu].prior.LogPdf(mu)
		lp += lpm
		for i, p := range t.par {
			if i == t.mu || p.free < 0 {
				continue
			}
			l, _ := p.prior.LogPdf(nat[i])
			lp += l
			switch p.sup {
			case PositiveReal:
				lp += math.Log(nat[i])
			case UnitInterval:
				lp += math.Log(nat[i]) + math.Log1p(-nat[i])
			}
		}
		for j := range t.ch {
			c := &t.ch[j]
			if pc := t.par[c.k[0]]; pc.free >= 0 && pc.sup == Real && !t.st.Plain {
				lp -= math.Log(c.href)
			}
		}
		if math.IsNaN(lp) {
			return math.Inf(-1)
		}
		return lp
	}
	g[t.sigma] += -float64(t.nObs)/sigma + ss*inv2/sigma

	// priors; the intercept prior acts on mu, a function of the others
	lpm, gmu := t.par[t.mu].prior.LogPdf(mu)
	lp += lpm
	g[t.mu] += sw + gmu // d mu / d m0 = 1
	for _, r := range t.reg {
		s := 0.0
		for i, v := range r.x {
			s += t.w[i] * (v - r.bar)
		}
		g[r.k] += s - gmu*r.bar
	}
	for j := range t.ch {
		c := &t.ch[j]
		b := nat[c.k[0]]
		cb := 0.0
		if t.centred {
			cb = 1
		}
		if c.linear {
			s := 0.0
			for i, v := range c.x {
				s += t.w[i] * (v - cb*c.hbar)
			}
			g[c.k[0]] += s - gmu*cb*c.hbar
			continue
		}
		var s0, sl, sk, ss2 float64
		for i := range c.h {
			w := t.w[i]
			s0 += w * c.h[i]
			sl += w * c.hl[i]
			sk += w * c.hk[i]
			ss2 += w * c.hs[i]
		}
		g[c.k[0]] += s0 - cb*c.hbar*sw - gmu*cb*c.hbar
		g[c.k[1]] += b * (sl - cb*c.hlbar*sw - gmu*cb*c.hlbar)
		g[c.k[2]] += b * (sk - cb*c.hkbar*sw - gmu*cb*c.hkbar)
		g[c.k[3]] += b * (ss2 - cb*c.hsbar*sw - gmu*cb*c.hsbar)
	}
	for i, p := range t.par {
		if i == t.mu || p.free < 0 {
			continue
		}
		l, d := p.prior.LogPdf(nat[i])
		lp += l
		g[i] += d
	}
	if math.IsNaN(lp) || math.IsInf(lp, 0) {
		return math.Inf(-1)
	}
	// chain rule to the unconstrained coordinates, with log-Jacobians
	for i, p := range t.par {
		if p.free < 0 {
			continue
		}
		v := nat[i]
		switch p.sup {
		case PositiveReal:
			grad[p.free] = g[i]*v + 1
			lp += math.Log(v)
		case UnitInterval:
			grad[p.free] = g[i]*v*(1-v) + 1 - 2*v
			lp += math.Log(v) + math.Log1p(-v)
		default:
			grad[p.free] = g[i]
		}
	}
	// coefficient rescaling: coef = g(u)/href(K, S). The loop above treated
	// coef as a function of u alone; add its dependence on K and S, and the
	// Jacobian term -log href.
	if !t.st.Plain {
		for j := range t.ch {
			c := &t.ch[j]
			pc := t.par[c.k[0]]
			if pc.free < 0 {
				continue
			}
			if pc.sup == Real {
				grad[pc.free] /= c.href // d coef/du = 1/href
			}
			if pc.sup == Real {
				lp -= math.Log(c.href) // log |d coef/du|; for a positive coef log coef already holds it
			}
			if c.linear {
				continue
			}
			b := nat[c.k[0]]
			for q, dref := range [2]float64{c.hrefK, c.hrefS} {
				pk := t.par[c.k[q+2]]
				if pk.free < 0 {
					continue
				}
				v := nat[c.k[q+2]] // K or S, positive
				// d coef/dv = -coef dref/href; d(-log href)/dv = -dref/href
				grad[pk.free] += (-g[c.k[0]]*b*dref/c.href - dref/c.href) * v
			}
		}
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
		for _, r := range t.reg {
			mu -= t.nat[r.k] * r.bar
		}
		for j := range t.ch {
			mu -= t.nat[t.ch[j].k[0]] * t.ch[j].hbar
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
	for i, p := range t.par {
		if p.free < 0 {
			continue
		}
		x := v[i]
		switch p.sup {
		case PositiveReal:
			dst[p.free] = math.Log(x)
		case UnitInterval:
			dst[p.free] = math.Log(x / (1 - x))
		default:
			dst[p.free] = x
		}
	}
	if t.st.Plain {
		return dst
	}
	// rescaled coefficients and the centred intercept
	m0 := v[t.mu]
	for _, r := range t.reg {
		if t.centred {
			m0 += v[r.k] * r.bar
		}
	}
	for j := range t.ch {
		c := &t.ch[j]
		href, hbar := c.abar, stat.Mean(c.x)
		if !c.linear {
			a := transform.Adstock(nil, c.x, v[c.k[1]])
			s := 0.0
			for _, ai := range a {
				s += transform.Hill(ai, v[c.k[2]], v[c.k[3]])
			}
			hbar = s / float64(len(a))
			href = transform.Hill(c.abar, v[c.k[2]], v[c.k[3]])
		}
		if t.centred {
			m0 += v[c.k[0]] * hbar
		}
		pc := t.par[c.k[0]]
		if pc.free >= 0 {
			u := v[c.k[0]] * href
			if pc.sup == PositiveReal {
				dst[pc.free] = math.Log(u)
			} else {
				dst[pc.free] = u
			}
		}
	}
	if p := t.par[t.mu]; p.free >= 0 {
		dst[p.free] = m0
	}
	return dst
}

// Predict writes the linear predictor n[t] (scaled units) at the constrained
// parameter values v (in Names() order) into dst and returns it; a nil dst
// allocates.
func (s *Stage) Predict(dst, v []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(s.Y))
	}
	k := 0
	for i := range dst {
		dst[i] = v[0]
	}
	k++
	for _, r := range s.Regressors {
		b := v[k]
		k++
		for i, x := range r.X {
			dst[i] += b * x
		}
	}
	var a []float64
	for _, c := range s.Channels {
		b := v[k]
		if c.Linear {
			k++
			for i, x := range c.X {
				dst[i] += b * x
			}
			continue
		}
		a = transform.Adstock(resizeTo(a, len(c.X)), c.X, v[k+1])
		for i, ai := range a {
			dst[i] += b * transform.Hill(ai, v[k+2], v[k+3])
		}
		k += 4
	}
	return dst
}

// Response writes coef-free channel response H(adstock(x; lam); K, S) of
// channel j at constrained values v into dst (x itself for a linear
// channel) and returns dst and the coefficient. x is any spend series in the
// channel's scaled units (e.g. a counterfactual).
func (s *Stage) Response(dst []float64, j int, v, x []float64) ([]float64, float64) {
	k := 1 + len(s.Regressors)
	for _, c := range s.Channels[:j] {
		if c.Linear {
			k++
		} else {
			k += 4
		}
	}
	dst = resizeTo(dst, len(x))
	if s.Channels[j].Linear {
		copy(dst, x)
		return dst, v[k]
	}
	transform.Adstock(dst, x, v[k+1])
	for i, ai := range dst {
		dst[i] = transform.Hill(ai, v[k+2], v[k+3])
	}
	return dst, v[k]
}

// ChannelIndex returns the index of the channel of data column col, or -1.
func (s *Stage) ChannelIndex(col string) int {
	for j, c := range s.Channels {
		if c.Column == col {
			return j
		}
	}
	return -1
}

func resizeTo(x []float64, n int) []float64 {
	if cap(x) >= n {
		return x[:n]
	}
	return make([]float64, n)
}
