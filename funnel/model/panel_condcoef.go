package model

import (
	"math"

	"spillway/funnel/transform"
)

// condCoef holds a channel coefficient's conditional coordinates on a
// panel: region g's log coefficient at its reference response, l[g] =
// log(theta[g] r[g]) (panelCoef.values), is sampled as
//
//	l[g] = m[g] + xi[g]/sqrt(P[g]),  P = 1/tau^2 + aW[g],
//	m = (lu[g]/tau^2 + aW[g] lW[g]) / P,
//
// the mean and precision of its conditional posterior under a normal
// approximation: the hierarchy Normal(lu[g], tau) (log theta's on l's
// scale, lu[g] = log theta + log r[g]) and the region's own least-squares
// estimate lW[g] with precision aW[g] (Coords.CoefLog and SECoef, fixed
// before sampling; aW 0 where a region never runs the channel or its
// estimate is not positive, which leaves the region non-centred). The
// weight of the centred end, aW/P, moves with tau at every point:
// non-centred as tau falls below a region's standard error, centred on its
// estimate as tau rises above it, the continuous form of the weights
// ChooseCoordinates rounds to 0 or 1 for coordinates that do not take this
// (Papaspiliopoulos, Roberts and Sköld 2007, section 3). The map is
// triangular (m, P and r do not depend on xi), its log-Jacobian -log(P)/2,
// so the posterior on DESIGN.md's parameters is unchanged.
//
// r[g] is the panel's href by default, the same for every region. With
// Coords.CoefOwnSpread it is region g's own response spread at the
// current transforms (panelChannel.regionRef; href where the region's
// spend never changes): what region g's weeks pin down is its
// coefficient times how much its own response moves, and the regions'
// spreads change unequally with the transforms. Each choice has its cost,
// measured on simulated panels (4 chains, seed 40, outcome stage alone):
//
//   - 200 x 156 cut from the demo's totals (outcomes of a few a week,
//     whose rounding gives paid search's curve two regimes: S_s near 7
//     with tau_beta near 0.55, S_s near 1.8 with tau_beta near 0.1; every
//     xi[g] moves to cross between them), 500 + 500 draws: against href
//     R-hat 1.06, bulk ESS 52, 264 leapfrog steps per draw, 927 s; against
//     r[g] R-hat 1.16, bulk ESS 19, 63 steps, 257 s. Neither converges.
//     With regions 20 times larger (one regime) against href: R-hat
//     1.012, bulk ESS 804, 93 steps, 314 s.
//   - 40 x 156, 1000 + 1000 draws, sampler seeds 0-3: against r[g] 3, 1,
//     1 and 1 divergent transitions, all at paid search's tail (K_s in its
//     lowest 2% or S_s in its highest 1%, tau_beta in its highest 2%),
//     where a region's own spread moves with K_s and S_s much faster than
//     the panel's and theta[g] with it at fixed xi[g]; against href none
//     on any seed (least bulk ESS 1,370-2,260 against 1,106-1,820, 88-105
//     steps per draw against 63-89). A soft bound on r[g]/href (log ratio
//     through 0.5 tanh) still left 1, 0, 0 and 1.
//
// href is the default because the 40-region fit then converges cleanly.
//
// It is gamma's conditional coordinates (condGamma) without the level's
// share: a channel's contribution to a region's mean is one of several,
// and its estimate within the region's weeks already holds what the data
// say.
type condCoef struct {
	aW, lW []float64 // per region: the estimate's precision and centre (l's scale)
	m, p   []float64 // the map's mean and precision per region
}

// newCondCoef builds the conditional coordinates of coefficient k of c
// for a channel whose reference responses, region by region, have logs
// lref at the transforms of Coords' estimates (startRefs).
func newCondCoef(c *Coords, k, G int, lref []float64) *condCoef {
	cc := &condCoef{aW: make([]float64, G), lW: make([]float64, G)}
	for g := 0; g < G; g++ {
		s, e := c.SECoef[k][g], c.CoefLog[k][g]
		if s > 0 && !math.IsInf(s, 1) && !math.IsNaN(e) {
			cc.aW[g], cc.lW[g] = 1/(s*s), e+lref[g]
		}
	}
	cc.alloc(G)
	return cc
}

func (cc *condCoef) alloc(G int) { cc.m, cc.p = make([]float64, G), make([]float64, G) }

func (cc *condCoef) clone() *condCoef {
	d := *cc
	d.alloc(len(cc.aW))
	return &d
}

// startRef returns the log of a rescaled coefficient's reference response
// href at transforms tr (retention, half-saturation, shape), the scale on
// which Coords' least-squares estimates, made there, become l = log(theta
// href); 0 for a coefficient that is not rescaled.
func (c *panelCoef) startRef(tr [3]float64) float64 {
	if !c.rescale {
		return 0
	}
	ch := c.ch
	if ch.linear {
		return math.Log(ch.abar)
	}
	if !ch.spread {
		return math.Log(transform.Hill(ch.abar, tr[1], tr[2]))
	}
	pooled, _ := ch.spreads(tr)
	return pooled
}

// startRefs is startRef region by region: rho[g] (panelChannel.regionRef)
// on a regional channel, else log href.
func (c *panelCoef) startRefs(tr [3]float64) []float64 {
	lref := make([]float64, len(c.v))
	if !c.rescale || c.ch.linear || !c.ch.spread || c.ch.regional == nil {
		l := c.startRef(tr) // once: the same for every region
		for g := range lref {
			lref[g] = l
		}
		return lref
	}
	pooled, own := c.ch.spreads(tr)
	for g := range lref {
		lref[g] = pooled
		if c.ch.regional[g] {
			lref[g] = own[g]
		}
	}
	return lref
}

// spreads returns the logs of the response's spread (panelChannel.spreadRef)
// over the panel and in each region at tr, once before sampling.
func (ch *panelChannel) spreads(tr [3]float64) (float64, []float64) {
	var m, m2 float64
	own := make([]float64, len(ch.series))
	n := 0
	for g := range ch.series {
		h := transform.Adstock(nil, ch.series[ch.same[g]].x, tr[0])
		var gm, gm2 float64
		for _, a := range h {
			v := transform.Hill(a, tr[1], tr[2])
			gm += v
			gm2 += v * v
		}
		m += gm
		m2 += gm2
		n += len(h)
		T := float64(len(h))
		own[g] = 0.5 * math.Log(variance(gm/T, gm2/T))
	}
	return 0.5 * math.Log(variance(m/float64(n), m2/float64(n))), own
}

// regionRef returns the log of region g's reference response, rho[g] on
// a regional channel (panelChannel.regionRef), else log href, and the
// hierarchy's centre on that scale, lu + rho[g] - log href.
func (c *panelCoef) regionRef(g int, lh float64) (rho, lug float64) {
	if c.grho == nil {
		return lh, c.lu
	}
	rho = c.ch.rho[g]
	return rho, c.lu + rho - lh
}

// ccValues sets theta[g] from xi (x) given lu, tau and href.
func (c *panelCoef) ccValues(nat, x []float64, href float64) bool {
	cc := c.cc
	tau := nat[c.tauPos]
	aP := 1 / (tau * tau)
	lh := math.Log(href)
	for g := range c.v {
		rho, lug := c.regionRef(g, lh)
		P := aP + cc.aW[g]
		m := lug + cc.aW[g]*(cc.lW[g]-lug)/P
		cc.m[g], cc.p[g] = m, P
		c.v[g] = math.Exp(m + x[c.block+g]/math.Sqrt(P) - rho)
		if notFinite(c.v[g]) || c.v[g] == 0 {
			return false
		}
	}
	return true
}

// ccPrior is prior for the conditional coordinates: the hierarchy plus the
// map's log-Jacobian and (grad not nil) the pullback of d lp/d l[g] to
// xi[g], lu (c.glu), tau and log href (c.gref).
func (c *panelCoef) ccPrior(nat, gn, grad []float64) float64 {
	cc := c.cc
	lu := c.lu
	tau := nat[c.tauPos]
	ltau := math.Log(tau)
	aP := 1 / (tau * tau)
	lh := lu - math.Log(nat[c.hyper]) // log href
	lp, gtau := 0.0, 0.0
	for g, v := range c.v {
		// l = log(v r[g]), centred at lug = lu + rho[g] - log href
		rho, lug := c.regionRef(g, lh)
		l := math.Log(v) + rho
		z := (l - lug) / tau
		P := cc.p[g]
		lp += -0.5*z*z - ltau - 0.5*math.Log(P)
		if grad == nil {
			continue
		}
		glik := c.g[g] * v
		G := glik - z/tau
		gx, cN, cP := condPull(G, l, cc.m[g], P)
		grad[c.block+g] = gx
		// N = aP lug + aW lW, P = aP + aW; d lp/d lug holding l adds z/tau
		gc := cN*aP + z/tau
		c.glu += gc
		gtau += (cN*lug+cP)*(-2*aP/tau) + z*z/tau - 1/tau
		if c.grho == nil {
			c.gref -= glik // theta[g] = exp(l)/href
			continue
		}
		// theta[g] = exp(l - rho[g]); lug moves with rho[g] and against
		// log href
		c.grho[g] = gc - glik
		c.gref -= gc
	}
	if grad != nil {
		gn[c.tauPos] += gtau
	}
	return lp
}

// condPull pulls G = d lp/d l back through l = N/P + xi/sqrt(P) with the
// log-Jacobian -log(P)/2: the gradient in xi and the coefficients on dN
// and dP of the rest (d l = (dN - (l + m)/2 dP)/P, m = N/P; the Jacobian
// adds -dP/(2P)).
func condPull(G, l, m, P float64) (gx, cN, cP float64) {
	return G / math.Sqrt(P), G / P, -G*(l+m)/(2*P) - 1/(2*P)
}
