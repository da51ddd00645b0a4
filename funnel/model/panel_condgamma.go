package model

import (
	"math"

	"spillway/funnel/stat"
)

// condGamma holds gamma's conditional coordinates on a panel's outcome
// stage. With per-region scaling every region's queries and outcome
// average 1, so a region's intercept mirrors its gamma: once the
// intercepts are in their conditional coordinates (condIntercept), the
// collapsed density still ties region g's predictor mean without
// intercept, S_g, to the intercepts' spread,
//
//	ybar[g] - S_g ~ Normal(mu, tau_mu^2 + sigma^2/n[g]),
//
// which pins S_g, and through it gamma[g], ever more tightly as tau_mu
// falls: a funnel between tau_mu and gamma that non-centred gamma
// coordinates do not remove (with centred ones the funnel moves to
// tau_gamma). So region g's log gamma, l[g], is sampled as
//
//	l[g] = m[g] + xi[g]/sqrt(P[g]),
//
// m and P the mean and precision of a normal approximation to l[g]'s
// conditional posterior: gamma's hierarchy Normal(log gamma, tau_gamma),
// precision 1/tau_gamma^2; the level above linearised in l at the
// population's gamma (k = gamma qbar[g], V = tau_mu^2 + sigma^2/n[g]),
// precision k^2/V about log gamma + R/k, R = ybar - S'_g - mu - k with S'_g
// = S_g without gamma's part; and the region's least-squares estimate
// within its weeks (Coords.CoefLog, Coords.SECoef, fixed before sampling),
// when there is one. The map is triangular (m and P do not depend on
// xi[g]), its log-Jacobian -log(P[g])/2, and the density is the model's,
// so the posterior on DESIGN.md's parameters is unchanged; only the
// approximation's quality decides how nearly xi[g] is a standard normal
// free of tau_mu and tau_gamma (Papaspiliopoulos, Roberts and Sköld 2007,
// section 3, with the weights chosen afresh at every point, as
// condIntercept does exactly for the intercepts).
//
// The population's intercept then mirrors the population's gamma (every
// gamma[g] follows mu through m[g]) and the other regressors' means, so mu
// is sampled as mu' = mu + gamma qbar + mean_g S'_g, qbar the regions' mean
// of their query means: a shear with unit Jacobian (S'_g does not depend
// on mu), as the national intercept is sampled at the regressors' means.
type condGamma struct {
	inter  *panelIntercept
	aW, lW []float64 // per region: the within-weeks estimate's precision and centre (log scale; aW 0 when none)
	sp     []float64 // S'_g
	m, p   []float64 // the map's mean and precision per region
	gS     []float64 // d lp / d S'_g from the map, for the terms S'_g depends on
	qbar   float64   // the regions' mean of their query means: mu' = mu + gamma qbar
}

// newCondGamma builds gamma's conditional coordinates from the least
// squares in c (coefficient k) and gamma's regressor means bar.
func newCondGamma(inter *panelIntercept, c *Coords, k int, bar []float64) *condGamma {
	G := len(bar)
	cg := &condGamma{inter: inter, aW: make([]float64, G), lW: make([]float64, G), qbar: stat.Mean(bar)}
	for g := 0; g < G; g++ {
		if c.SECoef == nil || c.CoefLog == nil {
			continue
		}
		s, e := c.SECoef[k][g], c.CoefLog[k][g]
		if s > 0 && !math.IsInf(s, 1) && !math.IsNaN(e) {
			cg.aW[g], cg.lW[g] = 1/(s*s), e
		}
	}
	cg.alloc(G)
	return cg
}

func (cg *condGamma) alloc(G int) {
	cg.sp, cg.m, cg.p, cg.gS = make([]float64, G), make([]float64, G), make([]float64, G), make([]float64, G)
}

func (cg *condGamma) clone(inter *panelIntercept) *condGamma {
	d := *cg
	d.inter = inter
	d.alloc(len(cg.aW))
	return &d
}

// values sets gamma[g] from xi (x) given the other parameters and S'_g
// (sp, already in cg.sp).
func (c *panelCoef) condValues(nat, x []float64) bool {
	cg, in := c.cond, c.cond.inter
	cd := in.cond
	lu := c.lu
	gam := math.Exp(lu)
	tau := nat[c.tauPos]
	aP := 1 / (tau * tau)
	sigma, tmu, mu := nat[cd.sigma], nat[in.tauPos], nat[in.mu]
	for g := range c.v {
		V := tmu*tmu + sigma*sigma/cd.n[g]
		k := gam * c.bar[g]
		R := cd.ybar[g] - cg.sp[g] - mu - k
		P := aP + k*k/V + cg.aW[g]
		m := lu + (k*R/V+cg.aW[g]*(cg.lW[g]-lu))/P
		cg.m[g], cg.p[g] = m, P
		c.v[g] = math.Exp(m + x[c.block+g]/math.Sqrt(P))
		if notFinite(c.v[g]) || c.v[g] == 0 {
			return false
		}
	}
	return true
}

// condPrior is prior for the conditional coordinates: gamma's hierarchy
// plus the map's log-Jacobian, and (grad not nil) the pullback of
// d lp/d l[g] to xi[g], gamma, tau_gamma, mu, tau_mu, sigma and S'_g
// (cg.gS, which the caller sends on to what S'_g depends on).
func (c *panelCoef) condPrior(nat, gn, grad []float64) float64 {
	cg, in := c.cond, c.cond.inter
	cd := in.cond
	lu := c.lu
	gam := math.Exp(lu)
	tau := nat[c.tauPos]
	ltau := math.Log(tau)
	aP := 1 / (tau * tau)
	sigma, tmu, mu := nat[cd.sigma], nat[in.tauPos], nat[in.mu]
	lp := 0.0
	var gtau, gtmu, gsig, gmu float64
	for g, v := range c.v {
		l := math.Log(v)
		z := (l - lu) / tau
		P := cg.p[g]
		lp += -0.5*z*z - ltau - 0.5*math.Log(P)
		if grad == nil {
			continue
		}
		V := tmu*tmu + sigma*sigma/cd.n[g]
		k := gam * c.bar[g]
		R := cd.ybar[g] - cg.sp[g] - mu - k
		G := c.g[g]*v - z/tau // d lp / d l[g], data and hierarchy
		gx, cN, cP := condPull(G, l, cg.m[g], P)
		grad[c.block+g] = gx
		// N = aP lu + (k^2 lu + k R)/V + aW lW, P = aP + k^2/V + aW
		dNdu := aP + (2*k*k*lu+k*R)/V
		dPdu := 2 * k * k / V
		c.glu += cN*dNdu + cP*dPdu + z/tau
		gtau += (cN*lu+cP)*(-2*aP/tau) + z*z/tau - 1/tau
		gV := cN*(-(k*k*lu+k*R)/(V*V)) + cP*(-k*k/(V*V))
		gtmu += gV * 2 * tmu
		gsig += gV * 2 * sigma / cd.n[g]
		dS := cN * (-k / V) // the same in mu
		gmu += dS
		cg.gS[g] = dS
	}
	if grad != nil {
		gn[c.tauPos] += gtau
		gn[in.tauPos] += gtmu
		gn[cd.sigma] += gsig
		gn[in.mu] += gmu
	}
	return lp
}
