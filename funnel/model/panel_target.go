package model

import (
	"fmt"
	"math"
	"slices"

	"spillway/funnel/mcmc"
	"spillway/funnel/stat"
	"spillway/funnel/transform"
)

// PanelTarget is a compiled Panel: an mcmc.Target on the unconstrained
// space whose log density is the sum of the panel's terms: the shared
// regressors (panelReg), the channels with shared transforms and a
// coefficient per region (panelChannel), the coefficients' hierarchies
// (panelCoef), the intercepts' hierarchy (panelIntercept), the weekly
// likelihood over region-weeks and the priors of the shared and hyper
// parameters. panelcoords.go explains the sampling coordinates.
type PanelTarget struct {
	p       *Panel
	names   []string
	lay     *PanelLayout
	coords  *Coords // the coordinates compiled in
	G, T    int
	dim     int
	par     []param // the national-shaped part, in its Names order, then the spreads
	own     []bool  // par[i]'s transform and Jacobian are done by a hierarchy term
	sigma   int
	regs    []*panelReg
	chans   []*panelChannel
	coefs   []*panelCoef // gamma, then each channel's coefficient
	inter   *panelIntercept
	base    *panelBaseline // a baseline that moves (panel_baseline.go), nil with the trend line
	y       [][]float64
	mask    [][]bool
	nObs    int
	nat, gn []float64 // natural values and gradients, len(names)
	n, w    [][]float64
	sw, gS  []float64 // per region: sum_t w, d lp / d S_g (the intercept's shear)
	// evalData's scratch: a region's predictor terms (fb, fx) and the
	// series its gradient sums run over (dx, sums in acc; the regressors'
	// sums over every region in racc, the transforms' in bacc, three per
	// coefficient)
	fb, acc, racc, bacc []float64
	fx, dx              [][]float64
	// bc samples the moving baseline's weights against the data's
	// precision for them (panel_basecoords.go), nil where it does not.
	bc *baseCoord
}

var _ mcmc.Target = (*PanelTarget)(nil)

// Target compiles the panel. It returns an error when a prior does not fit
// its parameter; a coefficient that varies by region must be positive (its
// spread is on the log scale).
func (p *Panel) Target() (*PanelTarget, error) {
	if len(p.Stages) != len(p.Regions) || len(p.Stages) == 0 {
		panic("model: a panel has one stage per region")
	}
	nt, err := p.Stages[0].Target() // checks every prior against its parameter
	if err != nil {
		return nil, err
	}
	st0 := p.Stages[0]
	t := &PanelTarget{p: p, names: p.Names(), lay: p.Layout(), G: len(p.Regions), T: len(st0.Y),
		dim: nt.dim, sigma: nt.sigma}
	t.par = append(t.par, nt.par...)
	t.own = make([]bool, len(t.par))
	coords := p.Coords
	if coords == nil {
		if coords, err = ChooseCoordinates(p); err != nil {
			return nil, err
		}
	}
	t.coords = coords
	pooled := p.pooled()
	addTau := func(name string, pr Prior) (int, error) {
		if _, _, err := st0.fit(name, pr, PositiveReal, false); err != nil {
			return 0, err
		}
		if pr.Support(PositiveReal) != PositiveReal {
			return 0, fmt.Errorf("prior for %s: a spread needs a positive prior, not %s", name, pr.Family)
		}
		pp := param{name: name, prior: pr, sup: PositiveReal, free: -1}
		if pr.Family != Fixed {
			pp.free = t.dim
			t.dim++
		}
		t.par = append(t.par, pp)
		t.own = append(t.own, false)
		return len(t.par) - 1, nil
	}
	block := func() int {
		start := t.dim
		t.dim += t.G
		return start
	}
	for _, st := range p.Stages {
		t.y = append(t.y, st.Y)
		t.mask = append(t.mask, st.Mask)
		for i := range st.Y {
			if st.Mask == nil || !st.Mask[i] {
				t.nObs++
			}
		}
	}
	// the intercepts
	mu := nt.mu
	t.inter = &panelIntercept{mu: mu, free: nt.par[mu].free, pooled: pooled, tauPos: -1}
	if !pooled {
		if _, err = addTau(t.names[t.lay.tauMu], p.TauMu); err != nil {
			return nil, err
		}
		t.inter.tauPos = t.lay.tauMu
		t.inter.lam = coords.Mu
		t.inter.block = block()
		if coords.MuConditional {
			t.inter.cond = &condIntercept{sigma: t.sigma}
			for g := range p.Stages {
				n, sum := 0.0, 0.0
				for i, y := range t.y[g] {
					if t.mask[g] == nil || !t.mask[g][i] {
						n++
						sum += y
					}
				}
				t.inter.cond.n = append(t.inter.cond.n, n)
				t.inter.cond.ybar = append(t.inter.cond.ybar, sum/n)
			}
		}
	}
	// shared regressors and the coefficients that vary by region
	bl := nt.st.Layout()
	hier := p.hier()
	for i, r := range st0.Regressors {
		if r.Name == QueryCoef {
			continue
		}
		pr := &panelReg{k: bl.RegressorSlot(i), x: make([][]float64, t.G), bar: make([]float64, t.G)}
		for g, st := range p.Stages {
			pr.x[g] = st.Regressors[i].X
			pr.bar[g] = stat.Mean(st.Regressors[i].X)
		}
		t.regs = append(t.regs, pr)
	}
	for j := range st0.Channels {
		cs := bl.Channels()[j]
		pc := &panelChannel{k: [4]int{cs.Coef, cs.Lam, cs.K, cs.S}, linear: cs.Linear(), series: make([]panelSeries, t.G)}
		if !pc.linear {
			pc.lFree, pc.kFree, pc.sFree = t.par[cs.Lam].free, t.par[cs.K].free, t.par[cs.S].free
			pc.lSup = t.par[cs.Lam].sup
		}
		ref, nref := 0.0, 0
		for g, st := range p.Stages {
			s := &pc.series[g]
			s.x = st.Channels[j].X
			s.hbar = stat.Mean(s.x)
			if s.hbar > 0 {
				ref += s.hbar
				nref++
			}
		}
		pc.same = sameSeries(pc.series)
		pc.spread = t.G > 1 && !pc.linear && varies(pc.series)
		if d := cs.Drift; d.Has() {
			// the national drift's slots, once in the base layout: one
			// multiplier for every region
			pc.sm = newSmoothEval(d.Basis, d.SD, d.Len, d.Z)
		}
		pc.abar = 1
		if nref > 0 {
			pc.abar = ref / float64(nref)
		}
		t.chans = append(t.chans, pc.clone()) // clone allocates the series' scratch
	}
	if s := bl.Baseline(); s.Has() {
		// the national baseline's slots, once in the base layout: one f(t)
		// for every region
		t.base = newPanelBaseline(s)
	}
	for k, h := range hier {
		hyper := bl.GammaSlot()
		var ch *panelChannel
		if h.channel >= 0 {
			ch = t.chans[h.channel]
			hyper = ch.k[0]
		}
		hp := t.par[hyper]
		if hp.sup != PositiveReal {
			return nil, fmt.Errorf("prior for %s: a coefficient that varies by region needs a positive prior (its spread is on the log scale), not %s", h.name, hp.prior.Family)
		}
		pc := &panelCoef{hyper: hyper, free: hp.free, pooled: pooled, ch: ch, tauPos: -1,
			v: make([]float64, t.G), g: make([]float64, t.G), bar: make([]float64, t.G)}
		pc.rescale = ch != nil && hp.free >= 0
		if ch == nil {
			for g, st := range p.Stages {
				pc.q = append(pc.q, st.Regressors[h.reg].X)
				pc.bar[g] = stat.Mean(st.Regressors[h.reg].X)
			}
		}
		if !pooled {
			pl := t.lay.coefs[k]
			if _, err = addTau(t.names[pl.Tau], p.TauCoef); err != nil {
				return nil, err
			}
			pc.tauPos = pl.Tau
			pc.lam = coords.Coef[k]
			pc.block = block()
			pc.slot = pl.Block.Start
		}
		if !pooled && k == 0 && ch == nil && coords.GammaConditional && t.inter.cond != nil {
			pc.cond = newCondGamma(t.inter, coords, k, pc.bar)
		}
		if !pooled && ch != nil && coords.CoefConditional && coords.SECoef != nil && coords.CoefLog != nil {
			if pc.rescale && ch.spread && ch.regional == nil && coords.CoefOwnSpread {
				ch.regional = make([]bool, t.G)
				for g := range ch.series {
					ch.regional[g] = !constant(ch.series[g].x)
				}
				ch.rho, ch.rhoD = make([]float64, t.G), make([][3]float64, t.G)
			}
			if pc.rescale && ch.regional != nil {
				pc.grho = make([]float64, t.G)
			}
			pc.cc = newCondCoef(coords, k, t.G, pc.startRefs(coords.transform(h.channel)))
		}
		t.own[hyper] = true
		t.coefs = append(t.coefs, pc)
	}
	t.bc = newBaseCoord(t, coords.SigmaEst)
	// the spreads follow the national part in the names; par holds them in
	// the same order (tau_mu, then each coefficient's), so their slots are
	// the layout's.
	t.alloc()
	return t, nil
}

func (t *PanelTarget) alloc() {
	t.nat = make([]float64, len(t.names))
	t.gn = make([]float64, len(t.names))
	t.n, t.w = make([][]float64, t.G), make([][]float64, t.G)
	for g := range t.n {
		t.n[g], t.w[g] = make([]float64, t.T), make([]float64, t.T)
	}
	t.sw, t.gS = make([]float64, t.G), make([]float64, t.G)
	nr, nc := len(t.regs), len(t.coefs)
	t.fb, t.fx = make([]float64, nr+nc), make([][]float64, nr+nc)
	t.dx, t.acc = make([][]float64, nr+4*nc), make([]float64, nr+4*nc)
	t.racc, t.bacc = make([]float64, nr), make([]float64, 3*nc)
	t.inter.alloc(t.G)
}

// natSlot returns the position in a draw of par[i].
func (t *PanelTarget) natSlot(i int) int {
	nb := t.lay.base.Len()
	if i < nb {
		return i
	}
	// spreads: tau_mu, then each coefficient's, as in the layout
	if i == nb {
		return t.lay.tauMu
	}
	return t.lay.coefs[i-nb-1].Tau
}

// Dim returns the number of free (sampled) parameters.
func (t *PanelTarget) Dim() int { return t.dim }

// Names returns the constrained parameter names.
func (t *PanelTarget) Names() []string { return t.names }

// Panel returns the panel the target was compiled from.
func (t *PanelTarget) Panel() *Panel { return t.p }

// Clone returns an independent copy with its own scratch buffers.
func (t *PanelTarget) Clone() mcmc.Target {
	c := *t
	c.chans = make([]*panelChannel, len(t.chans))
	for i, ch := range t.chans {
		c.chans[i] = ch.clone()
	}
	in := *t.inter
	if t.inter.cond != nil {
		cd := *t.inter.cond
		in.cond = &cd
	}
	c.inter = &in
	c.coefs = make([]*panelCoef, len(t.coefs))
	for i, pc := range t.coefs {
		d := *pc
		d.v, d.g = make([]float64, t.G), make([]float64, t.G)
		if pc.cond != nil {
			d.cond = pc.cond.clone(c.inter)
		}
		if pc.cc != nil {
			d.cc = pc.cc.clone()
		}
		if pc.grho != nil {
			d.grho = make([]float64, t.G)
		}
		if pc.ch != nil {
			for j, ch := range t.chans {
				if ch == pc.ch {
					d.ch = c.chans[j]
				}
			}
		}
		c.coefs[i] = &d
	}
	c.base = t.base.clone()
	c.bc = t.bc.clone()
	c.alloc()
	return &c
}

// LogProbGrad returns the log posterior density at x (up to a constant) and
// writes its gradient into grad.
func (t *PanelTarget) LogProbGrad(grad, x []float64) float64 {
	if len(x) != t.dim || len(grad) != t.dim {
		panic("model: dimension mismatch")
	}
	return t.eval(grad, x)
}

// LogProb returns the log posterior density at x.
func (t *PanelTarget) LogProb(x []float64) float64 {
	if len(x) != t.dim {
		panic("model: dimension mismatch")
	}
	return t.eval(nil, x)
}

// decode computes the natural values: the scalar parameters, each
// channel's transformed series, the coefficients per region and the
// intercepts per region. It returns false where the density is not
// defined.
func (t *PanelTarget) decode(x []float64, grad bool) bool {
	nat := t.nat
	for i := range t.par {
		nat[t.natSlot(i)] = t.par[i].value(x)
	}
	for i := range t.par {
		if notFinite(nat[t.natSlot(i)]) {
			return false
		}
	}
	if t.bc != nil {
		t.bc.decode(t, nat)
	}
	ok := true
	for _, c := range t.chans {
		ok = c.prepare(nat, grad) && ok
	}
	if t.base != nil {
		ok = t.base.prepare(nat) && ok
	}
	if !ok {
		return false
	}
	for _, c := range t.coefs {
		if !c.values(nat, x) {
			return false
		}
	}
	// S_g, the mean of region g's predictor without its intercept; with
	// gamma in its conditional coordinates, first S'_g without gamma's part,
	// on which gamma[g] depends
	cg := t.condGamma()
	for g := 0; g < t.G; g++ {
		s := 0.0
		for _, r := range t.regs {
			s += nat[r.k] * r.bar[g]
		}
		for _, c := range t.coefs {
			switch {
			case c.cond != nil:
			case c.ch == nil:
				s += c.v[g] * c.bar[g]
			default:
				s += c.v[g] * c.ch.series[g].hbar
			}
		}
		if t.base != nil {
			s += t.base.fbar
		}
		if cg != nil {
			cg.cond.sp[g] = s
		}
		t.inter.s[g] = s
	}
	if cg != nil && t.inter.free >= 0 {
		// the sampled mu' is mu + gamma qbar + the regions' mean of S'_g
		nat[t.inter.mu] -= nat[cg.hyper]*cg.cond.qbar + stat.Mean(cg.cond.sp)
	} else if t.meanShear() {
		// the sampled mu' is mu + the regions' mean of S_g (meanShear)
		nat[t.inter.mu] -= stat.Mean(t.inter.s)
	}
	if cg != nil {
		if !cg.condValues(nat, x) {
			return false
		}
		for g, v := range cg.v {
			t.inter.s[g] += v * cg.bar[g]
		}
	}
	return t.inter.values(nat, x)
}

func (t *PanelTarget) eval(grad, x []float64) float64 {
	lp, ok := t.evalData(grad, x)
	if !ok {
		return math.Inf(-1)
	}
	return t.evalFinish(grad, lp)
}

// evalData is eval up to the coefficients' hierarchies: the likelihood,
// the priors of the shared, hyper and spread parameters and the intercepts'
// hierarchy, with (grad not nil) the natural gradients and each region's
// coefficient's data gradient, to which a PanelJoint's lift tests add
// theirs before evalFinish.
func (t *PanelTarget) evalData(grad, x []float64) (float64, bool) {
	if !t.decode(x, grad != nil) {
		return 0, false
	}
	nat, gn := t.nat, t.gn
	clear(gn)
	// region by region: the linear predictor, the likelihood and, with
	// grad, the sums over the region's weeks that the gradients need
	// (panel_kernels.go: each sum in the order of a loop per series)
	sigma := nat[t.sigma]
	inv2 := 1 / (sigma * sigma)
	nr, nc := len(t.regs), len(t.coefs)
	fb, fx, dx, acc := t.fb, t.fx, t.dx, t.acc
	racc := t.racc // the regressors' sums run over every region
	clear(racc)
	clear(t.bacc)
	ss := 0.0
	for g := 0; g < t.G; g++ {
		n := t.n[g]
		for j, r := range t.regs {
			fb[j], fx[j] = nat[r.k], r.x[g]
		}
		for j, c := range t.coefs {
			fb[nr+j], fx[nr+j] = c.v[g], c.response(g)
		}
		axpys(n, t.inter.v[g], fb, fx)
		if t.base != nil {
			t.base.forward(n)
		}
		sw := 0.0
		mask := t.mask[g]
		w := t.w[g]
		for i, y := range t.y[g] {
			if mask != nil && mask[i] {
				w[i] = 0
				continue
			}
			e := y - n[i]
			ss += e * e
			w[i] = e * inv2
			sw += w[i]
		}
		t.sw[g] = sw
		if grad == nil {
			continue
		}
		// the regressors' running sums, each coefficient's and each
		// transform's (lam, K, S) sum for this region
		copy(acc, racc)
		clear(acc[nr:])
		copy(dx, fx)
		k := nr + nc
		for _, c := range t.coefs {
			if c.ch != nil && !c.ch.linear {
				s := &c.ch.series[g]
				dx[k], dx[k+1], dx[k+2] = s.hl, s.hk, s.hs
				k += 3
			}
		}
		dots(acc[:k], w, dx[:k])
		copy(racc, acc[:nr])
		k = nr + nc
		for j, c := range t.coefs {
			c.g[g] = acc[nr+j]
			if c.ch != nil && !c.ch.linear {
				b := c.v[g]
				t.bacc[3*j] += b * acc[k]
				t.bacc[3*j+1] += b * acc[k+1]
				t.bacc[3*j+2] += b * acc[k+2]
				k += 3
			}
		}
	}
	lp := -float64(t.nObs)*math.Log(sigma) - 0.5*ss*inv2
	gn[t.sigma] += -float64(t.nObs)/sigma + ss*inv2/sigma
	// priors of the shared, hyper and spread parameters (the intercept's
	// hyperparameter: on mu, a natural value)
	for i := range t.par {
		p := &t.par[i]
		if p.free < 0 {
			continue
		}
		k := t.natSlot(i)
		l, d := p.prior.LogPdf(nat[k])
		lp += l
		gn[k] += d
	}
	if grad == nil {
		return lp + t.inter.prior(nat, nil), true
	}
	// natural gradients from the likelihood: the shared regressors' and
	// the transforms' (each coefficient's per region is in c.g)
	for j, r := range t.regs {
		gn[r.k] += racc[j]
	}
	for j, c := range t.coefs {
		if c.ch != nil && !c.ch.linear {
			gn[c.ch.k[1]] += t.bacc[3*j]
			gn[c.ch.k[2]] += t.bacc[3*j+1]
			gn[c.ch.k[3]] += t.bacc[3*j+2]
		}
	}
	// the intercepts: their hierarchy, then the shear back to what S_g
	// depends on
	lp += t.inter.prior(nat, gn)
	t.inter.backward(grad, nat, gn, t.sw, t.gS)
	if t.meanShear() {
		// mu = mu' - mean_g S_g; d lp/d mu is complete (no later term
		// of a panel without gamma's conditional coordinates has mu)
		gm := gn[t.inter.mu] / float64(t.G)
		for g := range t.gS {
			t.gS[g] -= gm
		}
	}
	t.shear(gn, t.gS, nil)
	return lp, true
}

// meanShear reports whether the regions' intercept mean is sampled as mu' =
// mu + mean_g S_g, S_g region g's predictor mean without its intercept: on
// a panel whose gamma is not in its conditional coordinates (the demand
// and naive stages), with more than one region. Every region's intercept
// follows its S_g (condIntercept) and mu follows them, so unsheared mu
// lies on a ridge with whatever moves the regions' levels. In the naive
// stage paid search, which runs every week, moves them most: near
// saturation its level (its coefficient, sampled against its response's
// spread, times the response's mean) grows fast as K_s falls, and on
// the 40-region benchmark's naive stage (4 x (1000 + 1000), acceptance
// 0.9) mu followed it with 55 divergent transitions. A shear with unit
// Jacobian (S_g does not depend on mu), as mu' is with gamma's conditional
// coordinates and as the national intercept is sampled.
func (t *PanelTarget) meanShear() bool {
	return !t.inter.pooled && t.inter.free >= 0 && t.condGamma() == nil
}

// shear sends gS[g] = d lp/d S_g on to the terms S_g depends on (the
// shared regressors, each region's coefficients but skip, the channels'
// transforms).
func (t *PanelTarget) shear(gn, gS []float64, skip *panelCoef) {
	for g, gs := range gS {
		if gs == 0 {
			continue
		}
		for _, r := range t.regs {
			gn[r.k] += gs * r.bar[g]
		}
		for _, c := range t.coefs {
			if c == skip {
				continue
			}
			if c.ch == nil {
				c.g[g] += gs * c.bar[g]
				continue
			}
			s := &c.ch.series[g]
			c.g[g] += gs * s.hbar
			if !c.ch.linear {
				b := c.v[g] * gs
				gn[c.ch.k[1]] += b * s.hlbar
				gn[c.ch.k[2]] += b * s.hkbar
				gn[c.ch.k[3]] += b * s.hsbar
			}
		}
	}
}

// condGamma returns gamma's coefficient when it is sampled in its
// conditional coordinates (panel_condgamma.go), else nil.
func (t *PanelTarget) condGamma() *panelCoef {
	if len(t.coefs) > 0 && t.coefs[0].cond != nil {
		return t.coefs[0]
	}
	return nil
}

// evalFinish adds the coefficients' hierarchies, through to the sampling
// coordinates, and the transforms' Jacobians and chain rule. Gamma comes
// first: in its conditional coordinates it depends on S'_g, so its
// gradient there goes on to the other coefficients before their
// hierarchies pull theirs back.
func (t *PanelTarget) evalFinish(grad []float64, lp float64) float64 {
	var gn []float64
	if grad != nil {
		gn = t.gn
	}
	for _, c := range t.coefs {
		lp += c.prior(t.nat, gn, grad)
		if c.cond == nil || grad == nil {
			continue
		}
		if t.inter.free >= 0 {
			// mu = mu' - gamma qbar - mean_g S'_g; d lp/d mu is complete
			gm := gn[t.inter.mu]
			gn[c.hyper] -= gm * c.cond.qbar
			for g := range c.cond.gS {
				c.cond.gS[g] -= gm / float64(t.G)
			}
		}
		t.shear(gn, c.cond.gS, c)
		for g, v := range c.cond.gS {
			t.gS[g] += v // the smooth functions' share, below
		}
	}
	// the drifting channels' smooth functions and the moving baseline,
	// through the likelihood and S_g (which holds the drifted mean and the
	// baseline's: the intercepts' shear and gamma's conditional
	// coordinates)
	if grad != nil {
		for _, c := range t.coefs {
			if c.ch != nil && c.ch.sm != nil {
				c.ch.driftBackward(gn, t.nat, c.v, t.w, t.gS)
			}
		}
		if t.base != nil {
			t.base.backward(gn, t.nat, t.w, t.gS)
		}
	}
	return t.finish(grad, lp)
}

// finish adds the per-parameter transforms' log-Jacobians and, unless grad
// is nil, the chain rule for the parameters no hierarchy term owns.
func (t *PanelTarget) finish(grad []float64, lp float64) float64 {
	if notFinite(lp) {
		return math.Inf(-1)
	}
	nat, gn := t.nat, t.gn
	for i := range t.par {
		p := &t.par[i]
		if p.free < 0 || t.own[i] {
			continue
		}
		k := t.natSlot(i)
		if grad != nil {
			grad[p.free] = p.chainGrad(gn[k], nat[k])
		}
		if p.sup != Real {
			lp += p.logJac(nat[k])
		}
	}
	for _, c := range t.coefs {
		lp = c.finish(grad, nat, gn, lp)
	}
	if grad != nil {
		for _, c := range t.coefs {
			if c.ch != nil && c.rescale {
				c.ch.pullback(grad, nat, c.gref)
				if c.grho != nil {
					c.ch.pullbackRegions(grad, nat, c.grho)
				}
			}
		}
	}
	if t.bc != nil {
		lp = t.bc.finish(t, grad, lp)
	}
	return lp
}

// Constrain writes the DESIGN.md parameter values at the unconstrained x
// into dst (len(Names())) and returns it.
func (t *PanelTarget) Constrain(dst, x []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(t.names))
	}
	t.decode(x, false)
	copy(dst, t.nat)
	if !t.inter.pooled {
		copy(dst[t.lay.mu.Start:], t.inter.v)
	} else {
		dst[t.inter.mu] = t.inter.v[0]
	}
	for _, c := range t.coefs {
		if !c.pooled {
			copy(dst[c.slot:], c.v)
		}
	}
	return dst
}

// panelReg is a shared regressor over the regions: coef * x[g][t] (trend,
// a season, a control).
type panelReg struct {
	k   int         // position of coef
	x   [][]float64 // [region][week]
	bar []float64   // mean_t x[g][t]: its part of S_g
}

// panelSeries is one region's series of a channel: its spend and, unless
// the channel is linear, its response with derivatives and their means,
// and the means of the response's square and of its products with its
// derivatives (the response's spread, panelChannel.spread).
type panelSeries struct {
	x                         []float64
	h, hl, hk, hs             []float64
	hbar, hlbar, hkbar, hsbar float64
	h2bar                     float64
	hh                        [3]float64 // means of h hl, h hk, h hs
}

func (s *panelSeries) response() []float64 {
	if s.h == nil {
		return s.x
	}
	return s.h
}

// panelChannel is a media channel with transforms shared by the regions:
// H(adstock(x[g]; lam); K, S) in region g. Its coefficients are a
// panelCoef's, which rescale the hyper coefficient by a reference
// response href: with one region H(abar; K, S), the response at mean
// spend, as the national channel does (doc.go), so that one region is the
// national model in the same coordinates; with several (spread) the
// response's standard deviation over the panel's region-weeks.
//
// Why the spread: what the data pin down is the coefficient times how
// much the response moves, since its level trades with the intercepts
// (mu' takes it off). A channel that runs every week near saturation
// (paid search that follows the queries) has a flat response whose level
// H(abar) is near 1 whatever K, S and the coefficient: on a 40-region,
// 156-week panel log(beta H(abar)) had posterior sd 0.79 and correlation
// -0.70 with log K_s, and the outcome stage's divergent transitions sat at
// its tail (beta 5 times its median, K_s small, every intercept low),
// while log(beta sd(H)) had sd 0.23 and no correlation with log K_s or
// log S_s (and for video and audio, which run in flights, 0.045 and 0.057
// against 0.048 and 0.069). The map from (log(theta href), lam, K, S) to
// (theta, lam, K, S) is triangular with unit diagonal in log theta, so the
// posterior is unchanged; href's derivatives in lam, K and S go to the
// sampling coordinates through pullback.
type panelChannel struct {
	k                   [4]int // coef, lam, K, S
	lFree, kFree, sFree int
	lSup                Support // lam's
	linear              bool
	spread              bool // href is the response's spread (several regions, spend that varies)
	abar                float64
	series              []panelSeries
	// same[g] is the first region whose spend series equals region g's
	// (g itself if none before it): regions with the same scaled flights
	// (a national buy split by size, regions that never run the channel)
	// share one transformed series, computed once.
	same                []int
	href                float64
	hrefL, hrefK, hrefS float64 // href's derivatives in lam, K and S
	// regional[g] (nil unless a coefficient of the channel takes its
	// conditional coordinates, condCoef) says region g's spend changes
	// over its weeks, so that its response has a spread of its own: rho[g]
	// is the log of that spread (log href where regional[g] is false) and
	// rhoD[g] its derivatives in lam, K and S.
	regional []bool
	rho      []float64
	rhoD     [][3]float64
	// sm is the drift (nil when the coefficient does not drift): every
	// region's response is multiplied by mult[t] = exp(f(t)), one f shared
	// by the regions (drift.go's multiplier, smooth.go's function); r is
	// scratch for d lp / d f(t).
	sm      *smoothEval
	mult, r []float64
}

func (c *panelChannel) clone() *panelChannel {
	d := *c
	d.series = append([]panelSeries(nil), c.series...)
	if c.regional != nil {
		d.rho, d.rhoD = make([]float64, len(c.series)), make([][3]float64, len(c.series))
	}
	if c.sm != nil {
		d.sm = c.sm.clone()
		T := len(c.series[0].x)
		d.mult, d.r = make([]float64, T), make([]float64, T)
		if c.linear {
			// the drifted response, never the data in place
			for g := range d.series {
				if f := c.same[g]; f != g {
					d.series[g].h = d.series[f].h
				} else {
					d.series[g].h = make([]float64, T)
				}
			}
		}
	}
	if !c.linear {
		for g := range d.series {
			s := &d.series[g]
			if f := c.same[g]; f != g {
				s.h, s.hl, s.hk, s.hs = d.series[f].h, d.series[f].hl, d.series[f].hk, d.series[f].hs
				continue
			}
			T := len(s.x)
			s.h, s.hl, s.hk, s.hs = make([]float64, T), make([]float64, T), make([]float64, T), make([]float64, T)
		}
	}
	return &d
}

// sameSeries returns, for each region, the first region whose spend series
// is equal to its own, value for value.
func sameSeries(series []panelSeries) []int {
	same := make([]int, len(series))
	for g := range series {
		same[g] = g
		for f := 0; f < g; f++ {
			if same[f] == f && slices.Equal(series[f].x, series[g].x) {
				same[g] = f
				break
			}
		}
	}
	return same
}

// prepare computes every region's response (with derivatives when grad)
// and href.
func (c *panelChannel) prepare(nat []float64, grad bool) bool {
	if c.linear {
		c.href, c.hrefL, c.hrefK, c.hrefS = c.abar, 0, 0, 0
		if c.sm != nil {
			return c.drift(nat, grad)
		}
		return true
	}
	lam, k, s := nat[c.k[1]], nat[c.k[2]], nat[c.k[3]]
	for g := range c.series {
		r := &c.series[g]
		if f := c.same[g]; f != g {
			// the same arrays as region f's (Target, clone): only the means
			q := &c.series[f]
			r.hbar, r.hlbar, r.hkbar, r.hsbar = q.hbar, q.hlbar, q.hkbar, q.hsbar
			r.h2bar, r.hh = q.h2bar, q.hh
			continue
		}
		T := float64(len(r.x))
		if grad {
			sh, shl, shk, shs := transform.AdstockHillSeries(r.h, r.hl, r.hk, r.hs, r.x, lam, k, s)
			r.hbar, r.hlbar, r.hkbar, r.hsbar = sh/T, shl/T, shk/T, shs/T
			if c.spread {
				var sq [4]float64
				quad := [4][]float64{r.h, r.hl, r.hk, r.hs}
				dots(sq[:], r.h, quad[:])
				r.h2bar, r.hh = sq[0]/T, [3]float64{sq[1] / T, sq[2] / T, sq[3] / T}
			}
			continue
		}
		transform.Adstock(r.h, r.x, lam) // the adstock, then its response in place
		sh, sh2 := 0.0, 0.0
		for i, a := range r.h {
			h := transform.Hill(a, k, s)
			r.h[i] = h
			sh += h
			sh2 += h * h
		}
		r.hbar, r.h2bar = sh/T, sh2/T
	}
	switch {
	case c.spread:
		c.spreadRef(grad)
	case grad:
		c.href, _, c.hrefK, c.hrefS = transform.HillGrad(c.abar, k, s)
	default:
		c.href = transform.Hill(c.abar, k, s)
	}
	ok := c.href > 0 && !math.IsNaN(c.href)
	if c.sm != nil {
		ok = c.drift(nat, grad) && ok
	}
	return ok
}

// drift multiplies every region's response (and, with grad, its
// derivatives in lam, K and S) by exp(f(t)) and takes the means from the
// drifted series, after the transforms: the likelihood, the intercepts'
// shear and backward then read the drifted series unchanged. A linear
// channel's drifted response goes to its own buffer (its response is
// otherwise the data).
func (c *panelChannel) drift(nat []float64, grad bool) bool {
	T := len(c.mult)
	c.sm.eval(nat, 0, T)
	for t, f := range c.sm.f {
		c.mult[t] = math.Exp(f)
	}
	mean := func(x []float64) float64 {
		s := 0.0
		for _, v := range x {
			s += v
		}
		return s / float64(T)
	}
	scale := func(x []float64) float64 {
		s := 0.0
		for t, m := range c.mult {
			x[t] *= m
			s += x[t]
		}
		return s / float64(T)
	}
	ok := true
	for g := range c.series {
		r := &c.series[g]
		if f := c.same[g]; f != g {
			q := &c.series[f]
			r.hbar, r.hlbar, r.hkbar, r.hsbar = q.hbar, q.hlbar, q.hkbar, q.hsbar
			continue
		}
		if c.linear {
			for t, m := range c.mult {
				r.h[t] = m * r.x[t]
			}
			r.hbar = mean(r.h)
		} else {
			r.hbar = scale(r.h)
			if grad {
				r.hlbar, r.hkbar, r.hsbar = scale(r.hl), scale(r.hk), scale(r.hs)
			}
		}
		ok = ok && !notFinite(r.hbar)
	}
	return ok
}

// driftBackward adds the gradient in the drift's smooth function: with
// b[g] the region coefficients, w[g][t] = d lp/d n[g][t] and gS[g] =
// d lp/d S_g (S_g holds b[g] times the mean drifted response),
//
//	d lp/d f(t) = sum_g b[g] (w[g][t] + gS[g]/T) exp(f(t)) H_g(t),
//
// pulled back to the smooth's natural values by smoothEval.backward.
func (c *panelChannel) driftBackward(gn, nat, b []float64, w [][]float64, gS []float64) {
	T := len(c.r)
	clear(c.r)
	for g := range c.series {
		h := c.series[g].response()
		bg, off := b[g], gS[g]/float64(T)
		if bg == 0 {
			continue
		}
		for t, wt := range w[g] {
			c.r[t] += bg * (wt + off) * h[t]
		}
	}
	c.sm.backward(gn, nat, c.r, 0, T)
}

// spreadRef sets href to the response's standard deviation over the
// region-weeks (every region has the same weeks) from the regions' means,
// and with grad its derivatives: d var = 2 (mean(h dh) - mean(h) mean(dh)).
func (c *panelChannel) spreadRef(grad bool) {
	var m, m2 float64
	var mh, md [3]float64
	for g := range c.series {
		r := &c.series[g]
		m += r.hbar
		m2 += r.h2bar
		if grad {
			for i, d := range [3]float64{r.hlbar, r.hkbar, r.hsbar} {
				mh[i] += r.hh[i]
				md[i] += d
			}
		}
	}
	G := float64(len(c.series))
	m, m2 = m/G, m2/G
	c.href = math.Sqrt(variance(m, m2))
	if grad {
		d := [3]*float64{&c.hrefL, &c.hrefK, &c.hrefS}
		for i := range d {
			*d[i] = (mh[i]/G - m*md[i]/G) / c.href // d sqrt(var) = d var / (2 sd)
		}
	}
	c.regionRef(grad)
}

// regionRef sets rho[g], the log of region g's own response spread over
// its weeks, and with grad its derivatives, d log sd = d var / (2 var); a
// region whose spend never changes takes log href, and its derivatives
// (set by spreadRef before).
func (c *panelChannel) regionRef(grad bool) {
	if c.regional == nil {
		return
	}
	lh := math.Log(c.href)
	for g := range c.series {
		if !c.regional[g] {
			c.rho[g] = lh
			if grad {
				c.rhoD[g] = [3]float64{c.hrefL / c.href, c.hrefK / c.href, c.hrefS / c.href}
			}
			continue
		}
		r := &c.series[g]
		v := variance(r.hbar, r.h2bar)
		c.rho[g] = 0.5 * math.Log(v)
		if grad {
			for i, d := range [3]float64{r.hlbar, r.hkbar, r.hsbar} {
				c.rhoD[g][i] = (r.hh[i] - r.hbar*d) / v
			}
		}
	}
}

// constant reports whether a series takes one value throughout.
func constant(x []float64) bool {
	for _, v := range x {
		if v != x[0] {
			return false
		}
	}
	return true
}

// variance returns the variance of values whose mean is m and mean square
// m2 (0 where rounding would make it negative).
func variance(m, m2 float64) float64 { return max(m2-m*m, 0) }

// varies reports whether a channel's scaled spend takes more than one value
// over the region-weeks: otherwise its response is the same in every
// region-week and has no spread.
func varies(series []panelSeries) bool {
	x0 := series[0].x[0]
	for _, s := range series {
		for _, x := range s.x {
			if x != x0 {
				return true
			}
		}
	}
	return false
}

// pullback adds href's dependence on lam, K and S: gref = d lp / d log
// href.
func (c *panelChannel) pullback(grad, nat []float64, gref float64) {
	if c.linear {
		return
	}
	if c.lFree >= 0 && c.hrefL != 0 {
		grad[c.lFree] += gref * c.hrefL / c.href * slope(c.lSup, nat[c.k[1]])
	}
	if c.kFree >= 0 {
		grad[c.kFree] += gref * c.hrefK / c.href * nat[c.k[2]]
	}
	if c.sFree >= 0 {
		grad[c.sFree] += gref * c.hrefS / c.href * nat[c.k[3]]
	}
}

// pullbackRegions adds rho's dependence on lam, K and S: grho[g] = d lp / d
// rho[g].
func (c *panelChannel) pullbackRegions(grad, nat, grho []float64) {
	var d [3]float64
	for g, w := range grho {
		for i := range d {
			d[i] += w * c.rhoD[g][i]
		}
	}
	if c.lFree >= 0 {
		grad[c.lFree] += d[0] * slope(c.lSup, nat[c.k[1]])
	}
	if c.kFree >= 0 {
		grad[c.kFree] += d[1] * nat[c.k[2]]
	}
	if c.sFree >= 0 {
		grad[c.sFree] += d[2] * nat[c.k[3]]
	}
}

// panelCoef is a coefficient that varies by region, gamma or a channel's:
// theta[g] = theta exp(tau eta[g]), eta ~ Normal(0, 1), so log theta[g] ~
// Normal(log theta, tau). With rescale (a channel whose hyperparameter is
// sampled) it works on the log of the coefficient times the channel's
// reference response (panelChannel), l[g] = log(theta[g] href), a shift
// that leaves the hierarchy unchanged.
// Region g's sampling coordinate v[g] is partially non-centred with weight
// lam[g] (panelcoords.go):
//
//	l[g] = (1 - lam[g]) lu + tau^(1 - lam[g]) v[g],  lu = log(theta href),
//
// whose log-Jacobian is (1 - lam[g]) log tau. With one region (pooled)
// theta[1] is theta.
type panelCoef struct {
	hyper, free int // position and sampling coordinate of theta
	tauPos      int // draw position of the spread tau, -1 when pooled
	block, slot int // first sampling coordinate and draw position of theta[g]
	lam         []float64
	pooled      bool
	rescale     bool
	ch          *panelChannel // nil for gamma
	cond        *condGamma    // gamma's conditional coordinates, when chosen (lam unused)
	cc          *condCoef     // a channel's conditional coordinates, when chosen (lam unused)
	q           [][]float64   // gamma's regressor per region (queries)
	bar         []float64     // gamma's: mean_t q[g][t]
	v, g        []float64     // theta[g] and d lp/d theta[g]
	x           []float64     // the point being evaluated (not owned)
	lu          float64
	gref        float64   // d lp / d log href
	grho        []float64 // d lp / d rho[g] (condCoef on a regional channel)
	glu         float64
}

// response returns region g's series the coefficient multiplies: gamma's
// regressor or the channel's response.
func (c *panelCoef) response(g int) []float64 {
	if c.ch == nil {
		return c.q[g]
	}
	return c.ch.series[g].response()
}

// values sets theta (dividing by href when rescaled) and theta[g].
func (c *panelCoef) values(nat, x []float64) bool {
	c.x = x
	href := 1.0
	if c.rescale {
		href = c.ch.href
		nat[c.hyper] /= href
	}
	th := nat[c.hyper]
	c.lu = math.Log(th * href)
	if c.pooled {
		for g := range c.v {
			c.v[g] = th
		}
		return true
	}
	if c.cond != nil {
		return true // condValues, once S'_g is known
	}
	if c.cc != nil {
		return c.ccValues(nat, x, href)
	}
	tau := nat[c.tauPos]
	for g := range c.v {
		l := (1-c.lam[g])*c.lu + math.Pow(tau, 1-c.lam[g])*x[c.block+g]
		c.v[g] = math.Exp(l) / href
		if notFinite(c.v[g]) || c.v[g] == 0 {
			return false
		}
	}
	return true
}

// prior returns the hierarchy's log density of log theta[g] given theta
// and tau plus the coordinates' log-Jacobians and, unless grad is nil,
// pulls the gradient of theta[g] (c.g, from the data) back to v[g] (into
// grad), tau (into gn) and lu and log href (kept for finish).
func (c *panelCoef) prior(nat, gn, grad []float64) float64 {
	c.gref, c.glu = 0, 0
	if c.pooled {
		if grad != nil {
			s := 0.0
			for _, v := range c.g {
				s += v
			}
			gn[c.hyper] += s
		}
		return 0
	}
	if c.cond != nil {
		return c.condPrior(nat, gn, grad)
	}
	if c.cc != nil {
		return c.ccPrior(nat, gn, grad)
	}
	tau := nat[c.tauPos]
	ltau := math.Log(tau)
	lth := math.Log(nat[c.hyper])
	lp, gtau := 0.0, 0.0
	for g, v := range c.v {
		d := math.Log(v) - lth // l[g] - lu
		z := d / tau
		lam := c.lam[g]
		lp += -0.5*z*z - lam*ltau // -log tau from the density, (1-lam) log tau the Jacobian
		if grad == nil {
			continue
		}
		glik := c.g[g] * v // d lp / d log theta[g] from the data
		gl := glik - z/tau
		pw := math.Pow(tau, 1-lam)
		grad[c.block+g] = gl * pw
		c.glu += gl*(1-lam) + z/tau
		gtau += gl*(1-lam)*pw/tau*c.x[c.block+g] + z*z/tau - lam/tau
		c.gref -= glik
	}
	if grad != nil {
		gn[c.tauPos] += gtau
	}
	return lp
}

// finish does the hyperparameter's chain rule: theta = exp(lu)/href with
// log-Jacobian log theta.
func (c *panelCoef) finish(grad, nat, gn []float64, lp float64) float64 {
	if c.free < 0 {
		return lp
	}
	th := nat[c.hyper]
	lp += math.Log(th)
	if grad != nil {
		d := gn[c.hyper]*th + 1
		grad[c.free] = d + c.glu
		if c.rescale {
			c.gref -= d
		}
	}
	return lp
}

// panelIntercept holds the region intercepts, mu[g] ~ Normal(mu, tau_mu),
// sampled with the same partial non-centring as panelCoef and a shear that
// takes lam[g] times region g's predictor mean S_g off (unit Jacobian):
//
//	mu[g] = (1 - lam[g]) mu + tau^(1 - lam[g]) v[g] - lam[g] S_g.
//
// With lam[g] = 1, v[g] is region g's predictor mean, which the data pin
// down, instead of an intercept that mirrors gamma. With one region
// (pooled) mu[1] is mu, sampled as mu + S_1 like the national intercept.
type panelIntercept struct {
	mu, free int // position and sampling coordinate of mu
	tauPos   int // draw position of tau_mu, -1 when pooled
	block    int
	lam      []float64
	pooled   bool
	v, s, gv []float64 // mu[g], S_g, d prior / d mu[g]
	x        []float64
	cond     *condIntercept // the conditional coordinates, when chosen (lam unused)
}

func (c *panelIntercept) alloc(G int) {
	c.v, c.s, c.gv = make([]float64, G), make([]float64, G), make([]float64, G)
	if c.cond != nil {
		c.cond.prec, c.cond.mean, c.cond.sd = make([]float64, G), make([]float64, G), make([]float64, G)
	}
}

// condIntercept holds the intercepts' conditional coordinates: given every
// other parameter, region g's intercept has the normal posterior of a
// normal mean with n[g] observations of residual mean ybar[g] - S_g and
// sd sigma, under the prior Normal(mu, tau_mu):
//
//	prec = n/sigma^2 + 1/tau^2,  mean = (n (ybar - S_g)/sigma^2 + mu/tau^2) / prec,
//
// and the sampler moves v[g] in mu[g] = mean + v[g]/sqrt(prec), with
// log-Jacobian -log(prec)/2. The posterior of v[g] is then exactly
// Normal(0, 1), independent of the other parameters: no funnel between the
// intercepts and tau_mu whatever the data say, and no ridge between an
// intercept and its region's coefficients (S_g). It is the limit of the
// partial non-centring with lam[g] = (n/sigma^2)/prec chosen afresh at every
// point (Papaspiliopoulos, Roberts and Sköld 2007, section 3).
type condIntercept struct {
	sigma          int       // position of sigma
	n, ybar        []float64 // per region: observed weeks and their mean
	prec, mean, sd []float64
}

func (c *panelIntercept) values(nat, x []float64) bool {
	c.x = x
	if c.pooled {
		if c.free >= 0 {
			nat[c.mu] -= c.s[0] // the sampled m0 is mu + S_1
		}
		c.v[0] = nat[c.mu]
		return true
	}
	mu, tau := nat[c.mu], nat[c.tauPos]
	if cd := c.cond; cd != nil {
		sigma := nat[cd.sigma]
		a0, b := 1/(sigma*sigma), 1/(tau*tau)
		for g := range c.v {
			a := cd.n[g] * a0
			p := a + b
			cd.prec[g], cd.sd[g] = p, 1/math.Sqrt(p)
			cd.mean[g] = (a*(cd.ybar[g]-c.s[g]) + b*mu) / p
			c.v[g] = cd.mean[g] + cd.sd[g]*x[c.block+g]
		}
		return true
	}
	for g := range c.v {
		lam := c.lam[g]
		c.v[g] = (1-lam)*mu + math.Pow(tau, 1-lam)*x[c.block+g] - lam*c.s[g]
	}
	return true
}

// prior returns the intercepts' hierarchy and Jacobians; with gn it adds
// their gradients in mu and tau_mu and keeps d/d mu[g] for backward.
func (c *panelIntercept) prior(nat, gn []float64) float64 {
	if c.pooled {
		return 0
	}
	mu, tau := nat[c.mu], nat[c.tauPos]
	ltau := math.Log(tau)
	lp, gmu, gtau := 0.0, 0.0, 0.0
	for g, v := range c.v {
		z := (v - mu) / tau
		if c.cond != nil {
			lp += -0.5*z*z - ltau - 0.5*math.Log(c.cond.prec[g])
		} else {
			lp += -0.5*z*z - c.lam[g]*ltau
		}
		c.gv[g] = -z / tau
		gmu += z / tau
		if c.cond != nil {
			gtau += z*z/tau - 1/tau // the Jacobian's part: backward
		} else {
			gtau += z*z/tau - c.lam[g]/tau
		}
	}
	if gn != nil {
		gn[c.mu] += gmu
		gn[c.tauPos] += gtau
	}
	return lp
}

// backward pulls d lp/d mu[g] (the likelihood's sw[g] plus the prior's)
// back to v[g] (into grad), mu and tau_mu (into gn), and writes
// gS[g] = d lp/d S_g for the terms S_g depends on.
func (c *panelIntercept) backward(grad, nat, gn, sw, gS []float64) {
	if c.pooled {
		gn[c.mu] += sw[0]
		gS[0] = 0
		if c.free >= 0 {
			gS[0] = -gn[c.mu]
		}
		return
	}
	tau := nat[c.tauPos]
	gmu, gtau := 0.0, 0.0
	if cd := c.cond; cd != nil {
		// mu[g] = mean + v sd: its derivatives in S_g, mu, and through
		// a = n/sigma^2 and b = 1/tau^2 (prec = a + b) in sigma and tau, with
		// the log-Jacobian -log(prec)/2's
		sigma := nat[cd.sigma]
		mu := nat[c.mu]
		a0, b := 1/(sigma*sigma), 1/(tau*tau)
		gsig := 0.0
		for g := range c.v {
			G := sw[g] + c.gv[g]
			p, sd, m, v := cd.prec[g], cd.sd[g], cd.mean[g], c.x[c.block+g]
			a := cd.n[g] * a0
			w := a / p
			grad[c.block+g] = G * sd
			gmu += G * (1 - w)
			gS[g] = -w * G
			half := -0.5 * v * sd / p // d(v sd)/da, the same in b
			jac := -0.5 / p           // d(-log(prec)/2)/da, the same in b
			dA := G*((cd.ybar[g]-c.s[g]-m)/p+half) + jac
			dB := G*((mu-m)/p+half) + jac
			gsig += dA * (-2 * a / sigma)
			gtau += dB * (-2 * b / tau)
		}
		gn[c.mu] += gmu
		gn[c.tauPos] += gtau
		gn[cd.sigma] += gsig
		return
	}
	for g := range c.v {
		lam := c.lam[g]
		G := sw[g] + c.gv[g]
		pw := math.Pow(tau, 1-lam)
		grad[c.block+g] = G * pw
		gmu += G * (1 - lam)
		gtau += G * (1 - lam) * pw / tau * c.x[c.block+g]
		gS[g] = -lam * G
	}
	gn[c.mu] += gmu
	gn[c.tauPos] += gtau
}

// CoordNames names each sampling coordinate (len Dim()): a shared or hyper
// parameter's name for its unconstrained value, "v:NAME" for a region's
// coordinate in a hierarchical block (its intercept's conditional or
// partially non-centred coordinate, or its coefficient's), NAME being the
// region's parameter in the draw.
func (t *PanelTarget) CoordNames() []string {
	out := make([]string, t.dim)
	for i := range out {
		out[i] = fmt.Sprintf("x[%d]", i)
	}
	for _, p := range t.par {
		if p.free >= 0 {
			out[p.free] = p.name
		}
	}
	t.regionCoords(func(coord, slot int) { out[coord] = "v:" + t.names[slot] })
	return out
}

// regionCoords calls f with each region coordinate of a hierarchical block
// (the intercepts' and each varying coefficient's) and the draw position
// of the region's parameter it sets.
func (t *PanelTarget) regionCoords(f func(coord, slot int)) {
	if t.inter.tauPos >= 0 {
		for g := 0; g < t.G; g++ {
			f(t.inter.block+g, t.lay.mu.Start+g)
		}
	}
	for _, c := range t.coefs {
		if c.tauPos >= 0 {
			for g := 0; g < t.G; g++ {
				f(c.block+g, c.slot+g)
			}
		}
	}
}

// SharedCoords returns the sampling coordinates outside the regions'
// hierarchical blocks, increasing: the national and hyper parameters
// (CoordNames without the "v:" prefix), the few a dense metric block can
// afford (mcmc.Settings.DenseBlock) beside the regions' many.
func (t *PanelTarget) SharedCoords() []int {
	region := make([]bool, t.dim)
	t.regionCoords(func(coord, _ int) { region[coord] = true })
	var out []int
	for i, r := range region {
		if !r {
			out = append(out, i)
		}
	}
	return out
}
