package model

import (
	"math"

	"spillway/funnel/mcmc"
)

// param is one scalar parameter of a compiled stage: the prior term of the
// log density and the transform from its sampling coordinate, the
// sampler's constraining transforms (mcmc.Positive on x > 0, mcmc.Unit on
// (0, 1), mcmc.Asinh on the real line with heavy tails, none on the real
// line).
type param struct {
	name  string
	prior Prior
	sup   Support
	free  int // index in the unconstrained vector, -1 when fixed
}

// value returns the parameter's natural value at the unconstrained x.
func (p *param) value(x []float64) float64 {
	if p.free < 0 {
		return p.prior.P1
	}
	u := x[p.free]
	switch p.sup {
	case PositiveReal:
		return mcmc.Positive{}.Value(u)
	case UnitInterval:
		return mcmc.Unit{}.Value(u)
	case HeavyReal:
		return heavy.Value(u)
	}
	return u
}

// unconstrain returns the sampling coordinate of the natural value v.
func (p *param) unconstrain(v float64) float64 {
	switch p.sup {
	case PositiveReal:
		return mcmc.Positive{}.Unconstrain(v)
	case UnitInterval:
		return mcmc.Unit{}.Unconstrain(v)
	case HeavyReal:
		return heavy.Unconstrain(v)
	}
	return v
}

// logJac returns log |dv/du| at the natural value v.
func (p *param) logJac(v float64) float64 {
	switch p.sup {
	case PositiveReal:
		return mcmc.Positive{}.LogJacAt(v)
	case UnitInterval:
		return mcmc.Unit{}.LogJacAt(v)
	case HeavyReal:
		return heavy.LogJacAt(v)
	}
	return 0
}

// slope returns dv/du, the derivative of the natural value v in its
// sampling coordinate u, at v.
func slope(sup Support, v float64) float64 {
	switch sup {
	case PositiveReal:
		return v
	case UnitInterval:
		return v * (1 - v)
	case HeavyReal:
		return heavy.Slope(v)
	}
	return 1
}

// chainGrad returns d/du of the log density plus log |dv/du| given
// g = d lp/dv at the natural value v.
func (p *param) chainGrad(g, v float64) float64 {
	switch p.sup {
	case PositiveReal:
		return mcmc.Positive{}.ChainGrad(g, v)
	case UnitInterval:
		return mcmc.Unit{}.ChainGrad(g, v)
	case HeavyReal:
		return heavy.ChainGrad(g, v)
	}
	return g
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

// heavy is HeavyReal's coordinate, x = S sinh(u) with S = 0.5: the
// sampler's usual start, u uniform in (-2, 2), then puts x within (-1.8,
// 1.8), about where x = u would (a start of jump weights up to sinh(2) =
// 3.6 left a chain of a short demo fit stuck with e-fold multipliers),
// and the tails are exponential beyond |x| of about 1.
var heavy = mcmc.Asinh{S: 0.5}

func notFinite(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
