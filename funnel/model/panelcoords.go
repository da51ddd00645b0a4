package model

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/stat"
	"spillway/funnel/transform"
)

// Coords are a panel's sampling coordinates: for each hierarchical block
// (the intercepts, then gamma and each channel's coefficient in the
// panel's order) and region, the weight lam in [0, 1] of its partially
// non-centred coordinate (panelCoef, panelIntercept): 1 is centred (the
// sampler moves the region's own value), 0 non-centred (it moves eta). Any
// weights give the same posterior on DESIGN.md's parameters (the
// Jacobians are in the density); they only change how easily NUTS moves.
//
// For a normal likelihood that pins a region's value to s and a
// population spread tau, the weight lam = tau^2 / (tau^2 + s^2) makes the
// region's coordinate independent of the population mean a posteriori
// (Papaspiliopoulos, Roberts and Sköld 2007, "A general framework for the
// parametrization of hierarchical models", Statistical Science 22(1),
// section 3; the tau^(1-lam) scaling as in Gorinova, Moore and Hoffman
// 2020, "Automatic reparameterisation of probabilistic programs", ICML):
// centred where the data speak, non-centred where the prior does.
type Coords struct {
	Mu []float64 // per region, the intercepts
	// MuConditional samples the intercepts in their conditional coordinates
	// instead (condIntercept, panel_target.go; Mu is then unused).
	MuConditional bool
	// GammaConditional samples gamma (the outcome stage's coefficient of
	// the queries) in its conditional coordinates (condGamma,
	// panel_condgamma.go; its weights in Coef are then unused). It needs
	// MuConditional.
	GammaConditional bool
	// CoefConditional samples every channel's coefficients in their
	// conditional coordinates (condCoef, panel_condcoef.go; their weights
	// in Coef are then unused).
	CoefConditional bool
	// CoefOwnSpread references each region's conditional coordinate of a
	// saturating channel's coefficient to that region's own response
	// spread at the current transforms (panelChannel.regional) instead of
	// the panel's href; it needs CoefConditional.
	CoefOwnSpread bool
	Coef          [][]float64 // [coefficient][region]
	// Estimates behind the weights (ChooseCoordinates): the spreads implied
	// by the data (tau_mu; each coefficient's on the log scale) and each
	// region's standard error (log scale for coefficients; +Inf where the
	// region never runs the channel).
	TauMu   float64
	TauCoef []float64
	SEMu    []float64
	SECoef  [][]float64
	// SEReg holds, per regressor of a region's stage (Stage.Regressors'
	// order; NaN for gamma's and where no region's least squares has it),
	// the shared coefficient's standard error: the regions' least-squares
	// errors combined by precision.
	SEReg []float64
	// The least-squares point behind them (StartPoint): the shared
	// regressors' combined estimates (RegEst, as SEReg), the mean of the
	// regions' intercepts (MuEst), the residual sd over every region
	// (SigmaEst), and per coefficient the log of its precision-weighted
	// mean (CoefMid) and of each region's estimate (CoefLog; NaN where a
	// region's estimate is not positive or it never runs the channel).
	RegEst   []float64
	MuEst    float64
	SigmaEst float64
	CoefMid  []float64
	CoefLog  [][]float64
	// Transforms holds, per channel of the stage (Stage.Channels' order),
	// the retention, half-saturation and shape at which the least squares
	// were made (chooseTransforms); nil for coordinates not chosen from
	// the data, whose start takes the prior's centre.
	Transforms [][3]float64
	// BaseSlope is, for a stage whose baseline moves (Stage.Baseline), the
	// slope of the trend line in its place in every region's least squares,
	// the regions' estimates combined by precision (NaN where none has
	// it): StartPoint starts the baseline at that line (panel_baseline.go).
	BaseSlope float64
}

// Uniform returns coordinates with every weight lam: 1 centred, 0
// non-centred.
func (p *Panel) Uniform(lam float64) *Coords {
	G := len(p.Regions)
	fill := func() []float64 {
		x := make([]float64, G)
		for i := range x {
			x[i] = lam
		}
		return x
	}
	c := &Coords{Mu: fill()}
	for range p.hier() {
		c.Coef = append(c.Coef, fill())
	}
	return c
}

// Spread floors: below them the moment estimate cannot be told from zero
// with weekly data of a few years, and the weights would all be 0.
const (
	minTauMu   = 0.01 // scaled units
	minTauCoef = 0.02 // log scale
)

// ChooseCoordinates picks the weights of Coords from the data before any
// sampling, so the target is fixed: per region, least squares of the
// stage's response on its regressors with every channel's transform where
// the regions' least squares fit best together (chooseTransforms) gives each
// coefficient's estimate and standard error s[g]; the method of moments
// across regions, var(estimates) - mean(s^2), gives the spread tau the data
// imply (on the log scale for a coefficient, dividing by the
// precision-weighted mean estimate); lam[g] = tau^2 / (tau^2 + s[g]^2) at a
// low plausible tau, rounded to 0 or 1 (see weight below). A
// region's intercept, given the slopes, is pinned to its residual sd over
// sqrt(weeks); a channel a region never runs has s = +Inf (lam 0). A
// failing least squares (too few weeks) gives centred weights. The
// intercepts are sampled in their conditional coordinates (MuConditional);
// their weights Mu serve coordinates that turn that off.
func ChooseCoordinates(p *Panel) (*Coords, error) {
	c := p.Uniform(1)
	if p.pooled() {
		return c, nil
	}
	// The intercepts in their conditional coordinates, whatever the data:
	// on a simulated 6 x 104 demand stage (4 x (400 + 300)) they took the
	// divergences from 16 to 2 and the least bulk ESS from 339 to 549 at
	// the same leapfrog steps per draw as the weights below (Mu, still
	// computed, and used by coordinates that turn MuConditional off).
	c.MuConditional = true
	// gamma in its conditional coordinates: on a simulated 12 x 104
	// outcome stage (seed 411, 4 x (500 + 500)) the non-centred gamma left
	// one chain stuck at tau_mu_y near 0.005 with 484 divergences (R-hat
	// 1.56), and centred gamma moved the funnel to tau_gamma (67
	// divergences)
	c.GammaConditional = true
	// the channels' coefficients in their conditional coordinates, with
	// the least squares at the transforms chooseTransforms picks: on
	// simulated 12 x 104 outcome stages (two data seeds x two sampler
	// seeds, 4 x (500 + 500)) max R-hat 1.007-1.009 in all four against
	// 1.016-1.044 with the rounded weights and the prior's centre, and 24
	// divergences against 35
	c.CoefConditional = true
	// the coefficients referenced to the panel's href, not each region's
	// own response spread (CoefOwnSpread off): on the simulated 40 x 156
	// outcome stage the own spreads left divergent transitions at paid
	// search's tail on every sampler seed, the panel's none (the figures
	// are condCoef's)
	c.CoefOwnSpread = false
	hier := p.hier()
	G := len(p.Regions)
	tr := chooseTransforms(p)
	c.Transforms = tr
	muHat, muSE := make([]float64, G), make([]float64, G)
	c.SEMu = make([]float64, G)
	est := make([][]float64, len(hier))
	se := make([][]float64, len(hier))
	for k := range hier {
		est[k], se[k] = make([]float64, G), make([]float64, G)
	}
	regPrec := make([]float64, len(p.Stages[0].Regressors))
	regSum := make([]float64, len(regPrec))
	ss, nss := 0.0, 0.0
	basePrec, baseSum := 0.0, 0.0
	for g, st := range p.Stages {
		cols := [][]float64{}
		ones := make([]float64, len(st.Y))
		for i := range ones {
			ones[i] = 1
		}
		cols = append(cols, ones)
		hierCol := make([]int, len(hier)) // column of each hier coefficient, -1 if absent
		for _, r := range st.Regressors {
			if r.Name != QueryCoef {
				cols = append(cols, r.X)
			}
		}
		for k, h := range hier {
			var x []float64
			if h.reg >= 0 {
				x = st.Regressors[h.reg].X
			} else {
				x = response(st.Channels[h.channel], tr[h.channel])
			}
			if _, sd := stat.MeanSD(x); !(sd > 0) {
				hierCol[k] = -1
				continue
			}
			hierCol[k] = len(cols)
			cols = append(cols, x)
		}
		baseCol := -1 // a moving baseline's place: the trend line it replaces
		if st.Baseline != nil {
			baseCol = len(cols)
			cols = append(cols, trendLine(len(st.Y)))
		}
		b, cov, resSD, ok := leastSquares(cols, st.Y, st.Mask)
		if ok && baseCol >= 0 {
			basePrec += 1 / cov[baseCol]
			baseSum += b[baseCol] / cov[baseCol]
		}
		if ok {
			j := 1
			for i, r := range st.Regressors {
				if r.Name != QueryCoef {
					regPrec[i] += 1 / cov[j]
					regSum[i] += b[j] / cov[j]
					j++
				}
			}
		}
		for k := range hier {
			est[k][g], se[k][g] = math.NaN(), math.Inf(1)
			if ok && hierCol[k] >= 0 {
				est[k][g], se[k][g] = b[hierCol[k]], math.Sqrt(cov[hierCol[k]])
			}
		}
		if !ok {
			u := p.Uniform(1)
			u.MuConditional = true
			return u, nil
		}
		muHat[g], muSE[g] = b[0], math.Sqrt(cov[0])
		n := fittedWeeks(st.Mask, len(st.Y))
		c.SEMu[g] = resSD / math.Sqrt(float64(n))
		ss += resSD * resSD * float64(n)
		nss += float64(n)
	}
	c.SigmaEst = math.Sqrt(ss / nss)
	c.MuEst = stat.Mean(muHat)
	c.BaseSlope = math.NaN()
	if basePrec > 0 {
		c.BaseSlope = baseSum / basePrec
	}
	// The spread is estimated from G regions: a low plausible value, the
	// estimate times 1 - 1.64/sqrt(2(G-1)) (the one-sided 95% bound of a
	// normal sd from G values, by its standard error sd/sqrt(2(G-1))),
	// guards against centring a block whose spread may be smaller than
	// its regions' standard errors, the funnel a centred block falls into.
	// The weights are then rounded to 0 or 1: intermediate weights made
	// the sampler take more steps than either end on simulated panels
	// (the tau^(1-lam) scaling bends the coordinate with tau).
	low := math.Max(1-1.64/math.Sqrt(2*float64(G-1)), 0.25)
	weight := func(tau float64, s []float64) []float64 {
		out := make([]float64, len(s))
		t := tau * low
		for g, sg := range s {
			out[g] = math.Round(t * t / (t*t + sg*sg))
			if math.IsInf(sg, 1) {
				out[g] = 0
			}
		}
		return out
	}
	c.SEReg, c.RegEst = make([]float64, len(regPrec)), make([]float64, len(regPrec))
	for i, pr := range regPrec {
		c.SEReg[i], c.RegEst[i] = math.NaN(), math.NaN()
		if pr > 0 {
			c.SEReg[i], c.RegEst[i] = 1/math.Sqrt(pr), regSum[i]/pr
		}
	}
	c.TauMu = math.Max(momentSpread(muHat, muSE), minTauMu)
	c.Mu = weight(c.TauMu, c.SEMu)
	c.TauCoef = make([]float64, len(hier))
	c.SECoef = make([][]float64, len(hier))
	c.CoefMid, c.CoefLog = make([]float64, len(hier)), make([][]float64, len(hier))
	for k := range hier {
		c.CoefMid[k] = math.NaN()
		c.CoefLog[k] = make([]float64, G)
		for g, e := range est[k] {
			c.CoefLog[k][g] = math.NaN()
			if e > 0 && !math.IsInf(se[k][g], 1) {
				c.CoefLog[k][g] = math.Log(e)
			}
		}
		// precision-weighted mean estimate: the log scale's unit
		var num, den float64
		for g := range est[k] {
			if s := se[k][g]; !math.IsInf(s, 1) && s > 0 {
				num += est[k][g] / (s * s)
				den += 1 / (s * s)
			}
		}
		slog := make([]float64, G)
		for g := range slog {
			slog[g] = math.Inf(1)
		}
		if den == 0 || num/den <= 0 {
			// the data do not place the coefficient: non-centred everywhere
			c.TauCoef[k], c.SECoef[k] = minTauCoef, slog
			c.Coef[k] = weight(minTauCoef, slog)
			continue
		}
		m := num / den
		c.CoefMid[k] = math.Log(m)
		var e, s []float64
		for g := range est[k] {
			if !math.IsInf(se[k][g], 1) {
				e, s = append(e, est[k][g]), append(s, se[k][g])
				slog[g] = se[k][g] / m
			}
		}
		c.TauCoef[k] = math.Max(momentSpread(e, s)/m, minTauCoef)
		c.SECoef[k] = slog
		c.Coef[k] = weight(c.TauCoef[k], slog)
	}
	return c, nil
}

// momentSpread returns the method-of-moments spread of the true values
// behind estimates e with standard errors s: sqrt(max(var(e) - mean(s^2), 0)).
func momentSpread(e, s []float64) float64 {
	if len(e) < 2 {
		return 0
	}
	_, sd := stat.MeanSD(e)
	ms := 0.0
	for _, v := range s {
		ms += v * v
	}
	return math.Sqrt(math.Max(sd*sd-ms/float64(len(s)), 0))
}

// leastSquares regresses y on the columns over the weeks not masked and
// returns the coefficients, their variances and the residual sd; ok is
// false when the fit is singular or has no residual degrees of freedom.
func leastSquares(cols [][]float64, y []float64, mask []bool) (b, vars []float64, resSD float64, ok bool) {
	var rows []int
	for i := range y {
		if mask == nil || !mask[i] {
			rows = append(rows, i)
		}
	}
	n, p := len(rows), len(cols)
	if n <= p {
		return nil, nil, 0, false
	}
	X := mat.NewDense(n, p, nil)
	Y := mat.NewVecDense(n, nil)
	for r, i := range rows {
		for j, c := range cols {
			X.Set(r, j, c[i])
		}
		Y.SetVec(r, y[i])
	}
	var xtx mat.SymDense
	xtx.SymOuterK(1, X.T())
	var ch mat.Cholesky
	if !ch.Factorize(&xtx) {
		return nil, nil, 0, false
	}
	var xty, beta mat.VecDense
	xty.MulVec(X.T(), Y)
	if err := ch.SolveVecTo(&beta, &xty); err != nil {
		return nil, nil, 0, false
	}
	var fit mat.VecDense
	fit.MulVec(X, &beta)
	rss := 0.0
	for r := 0; r < n; r++ {
		e := Y.AtVec(r) - fit.AtVec(r)
		rss += e * e
	}
	s2 := rss / float64(n-p)
	var inv mat.SymDense
	if err := ch.InverseTo(&inv); err != nil {
		return nil, nil, 0, false
	}
	b, vars = make([]float64, p), make([]float64, p)
	for j := range b {
		b[j] = beta.AtVec(j)
		vars[j] = s2 * inv.At(j, j)
	}
	return b, vars, math.Sqrt(s2), true
}

// priorCentre is the transforms' prior centre (retention 0.5,
// half-saturation 1, shape 2): the least squares' transforms before
// chooseTransforms moves them, and those of coordinates that were not
// chosen from the data.
var priorCentre = [3]float64{0.5, 1, 2}

// transform returns channel j's transforms behind the least squares.
func (c *Coords) transform(j int) [3]float64 {
	if j < len(c.Transforms) {
		return c.Transforms[j]
	}
	return priorCentre
}

// response returns a channel's response at transforms tr (retention,
// half-saturation, shape); a linear channel's input.
func response(ch Channel, tr [3]float64) []float64 {
	if ch.Linear {
		return ch.X
	}
	a := transform.Adstock(nil, ch.X, tr[0])
	for i, v := range a {
		a[i] = transform.Hill(v, tr[1], tr[2])
	}
	return a
}

// Grids of chooseTransforms: retention, half-saturation (scaled units),
// shape, around the prior's centre.
var (
	gridLam = []float64{0.1, 0.3, 0.5, 0.7, 0.9}
	gridK   = []float64{0.5, 1, 2}
	gridS   = []float64{1, 1.5, 2, 3}
)

// chooseTransforms returns, per channel of the panel's stage, the
// transforms on a grid that minimise the residual sum of squares of every
// region's least squares (the stage's regressors, a column per channel,
// each region its own coefficients), one channel at a time from the
// prior's centre, twice over the channels. The per-region estimates behind
// the coordinates and the start are then made where the posterior's
// transforms are likely to be, not at the prior's centre, which can put a
// region's log coefficient several standard errors from its posterior
// when the shapes differ (a saturating channel's mean response depends on
// the region's spend level through them).
func chooseTransforms(p *Panel) [][3]float64 {
	st0 := p.Stages[0]
	tr := make([][3]float64, len(st0.Channels))
	for j := range tr {
		tr[j] = priorCentre
	}
	hier := p.hier()
	// a region's columns without the channels: the intercept, the shared
	// regressors, gamma's, a moving baseline's trend line
	fixed := make([][][]float64, len(p.Stages))
	for g, st := range p.Stages {
		ones := make([]float64, len(st.Y))
		for i := range ones {
			ones[i] = 1
		}
		cols := [][]float64{ones}
		for _, r := range st.Regressors {
			cols = append(cols, r.X)
		}
		if st.Baseline != nil {
			cols = append(cols, trendLine(len(st.Y)))
		}
		fixed[g] = cols
	}
	resp := make([][][]float64, len(p.Stages)) // [region][channel]
	for g, st := range p.Stages {
		resp[g] = make([][]float64, len(st.Channels))
		for j, ch := range st.Channels {
			resp[g][j] = response(ch, tr[j])
		}
	}
	rss := func() float64 {
		sum := 0.0
		for g, st := range p.Stages {
			cols := slices.Clone(fixed[g])
			for _, h := range hier {
				if h.channel < 0 {
					continue
				}
				if _, sd := stat.MeanSD(resp[g][h.channel]); sd > 0 {
					cols = append(cols, resp[g][h.channel])
				}
			}
			_, _, sd, ok := leastSquares(cols, st.Y, st.Mask)
			if !ok {
				return math.Inf(1)
			}
			sum += sd * sd * float64(fittedWeeks(st.Mask, len(st.Y))-len(cols))
		}
		return sum
	}
	best := rss()
	if math.IsInf(best, 1) {
		return tr
	}
	for pass := 0; pass < 2; pass++ {
		for j, ch := range st0.Channels {
			if ch.Linear {
				continue
			}
			keep := tr[j]
			for _, lam := range gridLam {
				for _, k := range gridK {
					for _, s := range gridS {
						cand := [3]float64{lam, k, s}
						for g, st := range p.Stages {
							resp[g][j] = response(st.Channels[j], cand)
						}
						if v := rss(); v < best {
							best, keep = v, cand
						}
					}
				}
			}
			tr[j] = keep
			for g, st := range p.Stages {
				resp[g][j] = response(st.Channels[j], keep)
			}
		}
	}
	return tr
}

// fittedWeeks returns the number of the T weeks that mask does not hold out.
func fittedWeeks(mask []bool, T int) int {
	n := 0
	for i := 0; i < T; i++ {
		if mask == nil || !mask[i] {
			n++
		}
	}
	return n
}

// StartMetric returns a diagonal inverse metric for the warm-up to start
// from (mcmc.Settings.InvMetric): each sampling coordinate's posterior
// variance as the least squares behind the coordinates (ChooseCoordinates)
// predict it, nil with one region (no estimates). The identity, the
// sampler's usual start, is off by two orders of magnitude on a panel (a
// centred region's log coefficient has sd ~0.05, the conditional
// intercepts' coordinates exactly 1, sigma's log ~1/sqrt(2 region-weeks)),
// so the early warm-up runs trajectories of the maximum length until its
// first metric window ends. The estimates need only be the right order of
// magnitude: the warm-up's windows replace them.
//
// No variance is above 1, the identity's: a coordinate the data leave to
// its prior has about that scale (the default priors are of unit order on
// the sampling coordinates). Per coordinate, with tau a block's spread and
// s[g] region g's standard error (the normal approximations of the
// hierarchical normal model, Gelman et al., Bayesian Data Analysis, 3rd
// ed., chapter 5):
//   - a region's coordinate in a block: centred, the precision-weighted
//     variance 1/(1/s^2 + 1/tau^2); non-centred (eta), s^2/(s^2 + tau^2);
//     a conditional intercept's, exactly 1;
//   - a hyperparameter (the intercepts' mean, a coefficient's log median):
//     1/sum_g 1/(tau^2 + s[g]^2);
//   - a spread's log: 1/(2 n), n = sum_g tau^2/(tau^2 + s[g]^2) the regions
//     that inform it (the large-sample variance of a log sd);
//   - sigma's log: 1/(2 region-weeks);
//   - a shared regressor's coefficient on the real line: its combined
//     least-squares variance (Coords.SEReg);
//   - any other (the transforms' parameters): 1 over the density's
//     curvature in that coordinate at the start point (StartPoint), by
//     central differences of the gradient; 1 where that is not positive.
//     This is the conditional variance, smaller than the marginal one where
//     the coordinate is correlated with others; the windows widen it.
func (t *PanelTarget) StartMetric() []float64 {
	c := t.coords
	x0 := make([]float64, t.dim)
	if !t.StartPoint(x0) {
		return nil
	}
	m := make([]float64, t.dim)
	known := make([]bool, t.dim)
	set := func(free int, v float64) {
		if free >= 0 && v > 0 && !math.IsInf(v, 1) {
			m[free], known[free] = math.Min(v, 1), true
		}
	}
	nb := t.lay.base.Len()
	// the blocks' regions and hyperparameters; informing regions per spread
	block := func(start int, lam []float64, tau float64, se []float64, cond bool) (hyperVar, nInf float64) {
		prec := 0.0
		for g, s := range se {
			switch {
			case cond:
				set(start+g, 1)
			case lam[g] == 1:
				set(start+g, 1/(1/(s*s)+1/(tau*tau)))
			default:
				set(start+g, s*s/(s*s+tau*tau))
			}
			if !math.IsInf(s, 1) {
				prec += 1 / (tau*tau + s*s)
				nInf += tau * tau / (tau*tau + s*s)
			}
		}
		return 1 / prec, nInf // 1 (the cap) when no region informs it
	}
	spread := func(free int, n float64) {
		set(free, 1/(2*n)) // 1 (the cap) when no region informs it
	}
	hv, n := block(t.inter.block, c.Mu, c.TauMu, c.SEMu, c.MuConditional)
	set(t.inter.free, hv)
	spread(t.par[nb].free, n)
	for k, pc := range t.coefs {
		hv, n := block(pc.block, c.Coef[k], c.TauCoef[k], c.SECoef[k], pc.cond != nil || pc.cc != nil)
		set(pc.free, hv)
		spread(t.par[nb+1+k].free, n)
	}
	if t.par[t.sigma].sup == PositiveReal {
		set(t.par[t.sigma].free, 1/(2*float64(t.nObs)))
	}
	for i, r := range t.p.Stages[0].Regressors {
		if r.Name == QueryCoef || i >= len(c.SEReg) {
			continue
		}
		for _, pr := range t.regs {
			if pr.k == t.lay.base.RegressorSlot(i) && t.par[pr.k].sup == Real {
				set(t.par[pr.k].free, c.SEReg[i]*c.SEReg[i])
			}
		}
	}
	// the rest from the curvature at the start point
	const h = 1e-4
	gp, gm, x := make([]float64, t.dim), make([]float64, t.dim), slices.Clone(x0)
	for i := range m {
		if known[i] {
			continue
		}
		m[i] = 1
		x[i] = x0[i] + h
		lp := t.LogProbGrad(gp, x)
		x[i] = x0[i] - h
		lm := t.LogProbGrad(gm, x)
		x[i] = x0[i]
		if curv := -(gp[i] - gm[i]) / (2 * h); !notFinite(lp+lm) && curv > 0 && !math.IsInf(curv, 1) {
			m[i] = math.Min(1/curv, 1)
		}
	}
	return m
}

// StartPoint writes into dst (len Dim()) the least-squares point behind
// the coordinates in sampling coordinates, a start for the chains near the
// posterior's bulk instead of the sampler's uniform draw in (-2, 2) on
// every coordinate (which puts sigma's log two orders of magnitude of its
// posterior sd away), and reports whether it could (false with one region
// or intercepts not in their conditional coordinates). The point: every
// transform where ChooseCoordinates made its least squares
// (Coords.Transforms, chooseTransforms), the shared regressors at their combined
// estimates, sigma at the residual sd, the intercepts' spread at its moment estimate,
// each coefficient's median at its precision-weighted mean and each region
// at its own estimate (at the median where that is not positive; a
// coefficient no region's least squares finds positive starts at
// startNoEffect everywhere, as those fits, near no effect), each spread at
// its moment estimate but at most 1 (a factor e across regions), the
// intercepts' conditional coordinates at 0 (each intercept at its
// conditional mean), a moving baseline at the regions' shared
// least-squares line (startBaseline). Any point with a finite density
// serves: only the warm-up's length depends on it.
func (t *PanelTarget) StartPoint(dst []float64) bool {
	c := t.coords
	if len(dst) != t.dim {
		panic("model: dimension mismatch")
	}
	if t.inter.tauPos < 0 || c == nil || c.SEMu == nil || !c.MuConditional {
		return false
	}
	clear(dst)
	set := func(i int, v float64) {
		if p := t.par[i]; p.free >= 0 && !notFinite(p.unconstrain(v)) {
			dst[p.free] = p.unconstrain(v)
		}
	}
	nb := t.lay.base.Len()
	set(t.inter.mu, c.MuEst)
	set(nb, c.TauMu)
	set(t.sigma, c.SigmaEst)
	for i, r := range t.p.Stages[0].Regressors {
		if r.Name != QueryCoef && i < len(c.RegEst) && !math.IsNaN(c.RegEst[i]) {
			set(t.lay.base.RegressorSlot(i), c.RegEst[i])
		}
	}
	for j, ch := range t.chans {
		if !ch.linear {
			tr := c.transform(j)
			set(ch.k[1], tr[0])
			set(ch.k[2], tr[1])
			set(ch.k[3], tr[2])
		}
	}
	hier := t.p.hier()
	for k, pc := range t.coefs {
		tau := math.Min(c.TauCoef[k], 1)
		set(nb+1+k, tau)
		if pc.free < 0 {
			continue
		}
		lref := 0.0 // log href at the start's transform
		if h := hier[k]; h.channel >= 0 {
			lref = pc.startRef(c.transform(h.channel))
		}
		mid := c.CoefMid[k]
		if math.IsNaN(mid) {
			mid = math.Log(startNoEffect)
		}
		lu := mid + lref
		dst[pc.free] = lu
		if pc.cond != nil || pc.cc != nil {
			continue // xi 0: at its conditional mean given the rest
		}
		for g, lam := range pc.lam {
			l := lu
			if e := c.CoefLog[k][g]; !math.IsNaN(e) && !math.IsNaN(c.CoefMid[k]) {
				l = e + lref
			}
			dst[pc.block+g] = (l - (1-lam)*lu) / math.Pow(tau, 1-lam)
		}
	}
	if t.base != nil {
		t.startBaseline(set, c.MuEst, c.BaseSlope)
		if t.bc != nil {
			t.bc.encode(t, dst) // the weights' z_j to their sampling coordinates
		}
	}
	if cg := t.condGamma(); cg != nil && t.inter.free >= 0 || t.meanShear() {
		// mu' = mu + gamma qbar + mean_g S'_g (or mu + mean_g S_g,
		// meanShear) at the start (the decode at mu' = 0 gives minus that
		// shift)
		mu0 := dst[t.inter.free]
		dst[t.inter.free] = 0
		if t.decode(dst, false) {
			mu0 = c.MuEst - t.nat[t.inter.mu]
		}
		dst[t.inter.free] = mu0
	}
	return true
}

// startNoEffect is the start of a coefficient whose least-squares estimates
// are not positive: a hundredth of the response's scale (every series is
// scaled to mean 1), near the no effect those fits found.
const startNoEffect = 0.01
