package model

import (
	"fmt"
	"math"

	"spillway/funnel/stat"
)

// Param is one named parameter of a stage with its prior.
type Param struct {
	Name  string // e.g. "alpha[video_spend]"
	Prior Prior
	// Default is the support of the default prior; a user prior of another
	// family may change it (a normal prior frees a coefficient's sign).
	Default Support
}

// Regressor is a term coef * X[t] of a stage's linear predictor.
type Regressor struct {
	Name  string // parameter name, e.g. "b_q" or "gamma"
	X     []float64
	Prior Prior
	// Default is the support of the default prior; a user prior of another
	// family may change it (a normal prior frees the sign).
	Default Support
	// Trend marks the trend line (X is tau): with drifting coefficients its
	// slope is sampled as the total slope (drift_trend.go).
	Trend bool
}

// Channel is a media term coef * H(adstock(X; lam); K, S), or coef * X[t]
// when Linear.
type Channel struct {
	Column string    // the data column, e.g. "video_spend"
	X      []float64 // scaled spend
	Linear bool
	// Params are the channel's parameters in draw order: the coefficient,
	// then, unless Linear, retention, half-saturation and shape.
	Params []Param
	// Drift, if not nil, makes the coefficient drift by week: coef
	// exp(f(t)), f this smooth function (drift.go). Its parameters come
	// after sigma in the stage's draws.
	Drift *Smooth
	// Break, if not nil, is a measurement break in the channel's exposure
	// (exposure.go). Its log factor comes last in the stage's draws, after
	// the smooth functions' parameters.
	Break *Break
	// Error, if not nil, says the channel's exposure is observed with
	// error (exposure.go). Its latent errors follow the break's factor.
	Error *Error
	// Freq, if not nil, says X is the channel's reach and gives its
	// frequency (reach.go). Its Kf and Sf follow the latent errors.
	Freq *Frequency
}

// mediaParams returns a channel's parameters named coef[col], lam[col],
// K[col], S[col] with the default priors of DESIGN.md (the coefficient
// alone when linear).
func mediaParams(col, coef, lam, k, s string, linear bool) []Param {
	p := []Param{{Name: coef + "[" + col + "]", Prior: PriorCoef, Default: PositiveReal}}
	if linear {
		return p
	}
	return append(p,
		Param{Name: lam + "[" + col + "]", Prior: PriorRetain, Default: UnitInterval},
		Param{Name: k + "[" + col + "]", Prior: PriorHalfSat, Default: PositiveReal},
		Param{Name: s + "[" + col + "]", Prior: PriorShape, Default: PositiveReal})
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
	// Baseline, if not nil, is a baseline that moves: a smooth function of
	// the week added to the linear predictor (drift.go). Its parameters come
	// after sigma, before the channels' drifts.
	Baseline *Smooth
	// Returns are the stated return priors of the demand and the outcome
	// stage (retprior.go): the coefficients they cover carry the
	// Conditional family here, and their prior is the return prior's term
	// in a Joint target of both stages. Nil without return priors.
	Returns []*ReturnPrior
}

// Names returns the stage's constrained parameter names in draw order:
// intercept, regressors, each channel's parameters (coef, lam, K, S; coef
// only when linear), sigma, then the moving baseline's parameters and each
// drifting channel's (sd, length-scale, weights), if any.
func (s *Stage) Names() []string {
	names := []string{s.Intercept}
	for _, r := range s.Regressors {
		names = append(names, r.Name)
	}
	for _, c := range s.Channels {
		for _, p := range c.Params {
			names = append(names, p.Name)
		}
	}
	names = append(names, s.Sigma)
	for _, sm := range s.smooths() {
		for _, p := range sm.Params {
			names = append(names, p.Name)
		}
	}
	for i := range s.Channels {
		for _, p := range s.Channels[i].measureParams() {
			names = append(names, p.Name)
		}
	}
	return names
}

// smooths returns the stage's smooth functions in draw order: the
// baseline, then each drifting channel's.
func (s *Stage) smooths() []*Smooth {
	var out []*Smooth
	if s.Baseline != nil {
		out = append(out, s.Baseline)
	}
	for _, c := range s.Channels {
		if c.Drift != nil {
			out = append(out, c.Drift)
		}
	}
	return out
}

// SetPrior replaces the prior of the named parameter and reports whether the
// stage has it.
func (s *Stage) SetPrior(name string, p Prior) bool {
	q := s.prior(name)
	if q != nil {
		*q = p
	}
	return q != nil
}

// prior returns where the prior of the named parameter is kept, or nil
// when the stage has no such parameter.
func (s *Stage) prior(name string) *Prior {
	switch name {
	case s.Intercept:
		return &s.MuPrior
	case s.Sigma:
		return &s.SigmaPrior
	}
	for i := range s.Regressors {
		if s.Regressors[i].Name == name {
			return &s.Regressors[i].Prior
		}
	}
	for i := range s.Channels {
		for k := range s.Channels[i].Params {
			if q := &s.Channels[i].Params[k]; q.Name == name {
				return &q.Prior
			}
		}
	}
	for _, sm := range s.smooths() {
		for k := range sm.Params {
			if q := &sm.Params[k]; q.Name == name {
				return &q.Prior
			}
		}
	}
	for i := range s.Channels {
		for _, q := range s.Channels[i].measureParams() {
			if q.Name == name {
				return &q.Prior
			}
		}
	}
	return nil
}

// Predict writes the linear predictor n[t] (scaled units) at the constrained
// parameter values v (in Names() order) into dst and returns it; a nil dst
// allocates.
func (s *Stage) Predict(dst, v []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(s.Y))
	}
	for i := range dst {
		dst[i] = v[0]
	}
	k := 1
	for _, r := range s.Regressors {
		b := v[k]
		k++
		for i, x := range r.X {
			dst[i] += b * x
		}
	}
	var h, mult []float64
	sk := k + 1 // past the channels and sigma: the smooths' parameters
	for _, c := range s.Channels {
		sk += len(c.Params)
	}
	bk := sk // past the smooths: the exposures' measurement parameters
	for _, sm := range s.smooths() {
		bk += len(sm.Params)
	}
	if b := s.Baseline; b != nil {
		f := b.Eval(nil, v[sk:])
		sk += len(b.Params)
		for i, fi := range f {
			dst[i] += fi
		}
	}
	for _, c := range s.Channels {
		m := media(c, v[k:])
		k += len(c.Params)
		bk += c.measure(&m, v[bk:])
		h = m.Response(h, c.X)
		if c.Drift == nil {
			for i, hi := range h {
				dst[i] += m.Coef * hi
			}
			continue
		}
		mult = c.Drift.Eval(mult, v[sk:])
		sk += len(c.Drift.Params)
		for i, hi := range h {
			dst[i] += m.Coef * math.Exp(mult[i]) * hi
		}
	}
	return dst
}

// Response writes coef-free channel response H(adstock(x; lam); K, S) of
// channel j at constrained values v into dst (x itself for a linear
// channel) and returns dst and the coefficient. x is any spend series in the
// channel's scaled units (e.g. a counterfactual).
func (s *Stage) Response(dst []float64, j int, v, x []float64) ([]float64, float64) {
	m := s.Layout().View(v).ChannelAt(j)
	return m.Response(dst, x), m.Coef
}

// media returns the parameters of channel c from v, which starts at its
// coefficient.
func media(c Channel, v []float64) Media {
	m := Media{Coef: v[0], Linear: c.Linear}
	if !c.Linear {
		m.Lam, m.K, m.S = v[1], v[2], v[3]
	}
	return m
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

// CheckPrior reports whether the stage has a parameter called name and,
// if so, whether prior p fits it: its numbers are valid for the family
// (Prior.CheckAt), the family's support suits the parameter (no beta on a
// coefficient, no positive-only family on the intercept, which the sampler
// moves on the real line, a positive prior on a scale), and a fixed value
// lies in the support. which says what is at fault: 0 the family, 1 P1,
// 2 P2. Target runs the same checks.
func (s *Stage) CheckPrior(name string, p Prior) (has bool, which int, err error) {
	def, coef, ok := s.support(name)
	if !ok {
		return false, 0, nil
	}
	_, which, err = s.fit(name, p, def, coef)
	return true, which, err
}

// support returns the default support of the named parameter and whether
// it is a coefficient of a regressor or channel.
func (s *Stage) support(name string) (def Support, coefficient, ok bool) {
	switch name {
	case s.Intercept:
		return Real, false, true
	case s.Sigma:
		return PositiveReal, false, true
	}
	for _, r := range s.Regressors {
		if r.Name == name {
			return r.Default, true, true
		}
	}
	for _, c := range s.Channels {
		for k, q := range c.Params {
			if q.Name == name {
				return q.Default, k == 0, true
			}
		}
	}
	for _, sm := range s.smooths() {
		for _, q := range sm.Params {
			if q.Name == name {
				return q.Default, false, true
			}
		}
	}
	for i := range s.Channels {
		for _, q := range s.Channels[i].measureParams() {
			if q.Name == name {
				return q.Default, false, true
			}
		}
	}
	return 0, false, false
}

// fit checks prior p for the parameter name with default support def and
// returns the support it gives the parameter; which is as in CheckPrior.
func (s *Stage) fit(name string, p Prior, def Support, coefficient bool) (sup Support, which int, err error) {
	if w, err := p.CheckAt(); err != nil {
		return 0, w, fmt.Errorf("prior for %s: %v", name, err)
	}
	sup = p.Support(def)
	if p.Family == Flat && coefficient {
		sup = Real // a flat prior on a coefficient frees its sign
	}
	switch {
	case def == UnitInterval && sup != UnitInterval || def != UnitInterval && sup == UnitInterval:
		return 0, 0, fmt.Errorf("prior for %s: %s does not fit a parameter on %s", name, p.Family, supportName(def))
	case name == s.Intercept && sup != Real:
		return 0, 0, fmt.Errorf("prior for %s: the intercept lies on the real line (the sampler moves it there); %s allows only %s: use normal, flat or fixed", name, p.Family, supportName(sup))
	case p.Family == Fixed && !inSupport(p.P1, sup):
		return 0, 1, fmt.Errorf("prior for %s: fixed value %g is outside %s", name, p.P1, supportName(sup))
	case def == PositiveReal && sup == Real && (name == s.Sigma || s.smoothScale(name)):
		return 0, 0, fmt.Errorf("prior for %s: a scale needs a positive prior (halfnormal, gamma, jeffreys, flat or fixed above 0), not %s", name, p.Family)
	}
	return sup, 0, nil
}

// Target compiles the stage into a sampler target: its log density is the
// sum of the terms doc.go lists. It returns an error when a prior does not
// fit its parameter (a beta prior on a coefficient, say).
func (s *Stage) Target() (*Target, error) {
	t := &Target{st: s, T: len(s.Y), plain: s.Plain}
	coefficient := map[string]bool{}
	for _, r := range s.Regressors {
		coefficient[r.Name] = true
	}
	for _, c := range s.Channels {
		coefficient[c.Params[0].Name] = true
	}
	add := func(name string, p Prior, def Support) (int, error) {
		sup, _, err := s.fit(name, p, def, coefficient[name])
		if err != nil {
			return 0, err
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
		t.terms = append(t.terms, &regressorTerm{k: k, x: r.X, bar: bar})
	}
	for i := range s.Channels {
		c := &s.Channels[i]
		if len(c.Params) != 1 && (c.Linear || len(c.Params) != 4) {
			panic("model: a channel has a coefficient, and lam, K, S unless linear")
		}
		k := make([]int, len(c.Params))
		for q, p := range c.Params {
			if k[q], err = add(p.Name, p.Prior, p.Default); err != nil {
				return nil, err
			}
		}
		t.terms = append(t.terms, newChannelTerm(c, k, t.par, s.Plain, t.centred))
	}
	if t.sigma, err = add(s.Sigma, s.SigmaPrior, PositiveReal); err != nil {
		return nil, err
	}
	// the smooth functions' parameters come after sigma (Names)
	smooth := func(sm *Smooth) (*smoothEval, error) {
		want := 2 + sm.Basis.M
		if J := sm.Basis.J(); J > 0 {
			want += 1 + J
		}
		if len(sm.Params) != want || sm.Basis.T != t.T {
			panic("model: a smooth function has an sd, a length-scale and one weight per basis function over the stage's weeks (and, with jumps, their scale and one weight per candidate week)")
		}
		k := make([]int, len(sm.Params))
		for q, p := range sm.Params {
			if k[q], err = add(p.Name, p.Prior, p.Default); err != nil {
				return nil, err
			}
		}
		return newSmoothEval(sm.Basis, k[0], k[1], k[2]), nil
	}
	var base predictor
	if s.Baseline != nil {
		e, err := smooth(s.Baseline)
		if err != nil {
			return nil, err
		}
		base = newBaselineTerm(e, t.centred)
	}
	first := len(s.Regressors) // the channels' terms
	for i := range s.Channels {
		if s.Channels[i].Drift == nil {
			continue
		}
		e, err := smooth(s.Channels[i].Drift)
		if err != nil {
			return nil, err
		}
		t.terms[first+i] = newDriftTerm(t.terms[first+i].(*channelTerm), e)
	}
	if base != nil {
		t.terms = append(t.terms, base)
	}
	// the exposures' measurement parameters come last (Names)
	for i := range s.Channels {
		c := &s.Channels[i]
		ps := c.measureParams()
		if len(ps) == 0 {
			continue
		}
		k := make([]int, len(ps))
		for q, p := range ps {
			if k[q], err = add(p.Name, p.Prior, p.Default); err != nil {
				return nil, err
			}
		}
		ch, ok := t.terms[first+i].(*channelTerm)
		if !ok || ch.linear {
			return nil, fmt.Errorf("model: channel %s has a measured exposure (a break or an error); it must saturate and must not drift", c.Column)
		}
		kb, at, sd, zk, weeks, fk, freq := -1, 0, 0.0, -1, []int(nil), -1, []float64(nil)
		if c.Break != nil {
			kb, at, k = k[0], c.Break.At, k[1:]
		}
		if c.Error != nil {
			sd, zk, weeks = c.Error.SD, k[0], c.Error.Weeks
			k = k[len(weeks):]
		}
		if c.Freq != nil {
			fk, freq = k[0], c.Freq.F
		}
		t.terms[first+i] = newMeasuredTerm(ch, at, kb, sd, zk, weeks, fk, freq)
	}
	if !s.Plain {
		for i, r := range s.Regressors {
			if k := t.terms[i].(*regressorTerm).k; r.Trend && t.par[k].free >= 0 {
				if sh := newTrendShear(k, r.X, t.terms); len(sh.drift) > 0 {
					t.shear = sh
				}
			}
		}
	}
	t.alloc()
	return t, nil
}

func resizeTo(x []float64, n int) []float64 {
	if cap(x) >= n {
		return x[:n]
	}
	return make([]float64, n)
}

// smoothScale reports whether name is a smooth function's sd or
// length-scale: scales, which need a positive prior like sigma.
func (s *Stage) smoothScale(name string) bool {
	for _, sm := range s.smooths() {
		if sm.Params[0].Name == name || sm.Params[1].Name == name {
			return true
		}
	}
	return false
}
