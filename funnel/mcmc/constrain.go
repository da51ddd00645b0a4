package mcmc

import "math"

// Positive maps u in R to x = exp(u) > 0. LogJac is log |dx/du| = u.
type Positive struct{}

// Value returns exp(u).
func (Positive) Value(u float64) float64 { return math.Exp(u) }

// LogJac returns log |dx/du| = u.
func (Positive) LogJac(u float64) float64 { return u }

// Unit maps u in R to x = 1/(1+exp(-u)) in (0, 1). log |dx/du| = log x + log(1-x),
// and d/du of that log-Jacobian is 1 - 2x.
type Unit struct{}

// Value returns the logistic function of u.
func (Unit) Value(u float64) float64 { return 1 / (1 + math.Exp(-u)) }

// LogJac returns log x(1-x), computed stably as -|u| - 2 log(1 + exp(-|u|)).
func (Unit) LogJac(u float64) float64 {
	a := math.Abs(u)
	return -a - 2*math.Log1p(math.Exp(-a))
}

// Bounded maps u in R to x = Lo + (Hi-Lo)/(1+exp(-u)) in (Lo, Hi).
type Bounded struct{ Lo, Hi float64 }

// Value returns Lo + (Hi-Lo) logistic(u).
func (b Bounded) Value(u float64) float64 { return b.Lo + (b.Hi-b.Lo)*Unit{}.Value(u) }

// LogJac returns log(Hi-Lo) + log logistic(u)(1-logistic(u)).
func (b Bounded) LogJac(u float64) float64 { return math.Log(b.Hi-b.Lo) + Unit{}.LogJac(u) }

// LogJacGrad returns d/du log |dx/du| = 1.
func (Positive) LogJacGrad(u float64) float64 { return 1 }

// Unconstrain returns u = log x, the inverse of Value, for x > 0.
func (Positive) Unconstrain(x float64) float64 { return math.Log(x) }

// LogJacGrad returns d/du log x(1-x) = 1 - 2x with x = logistic(u).
func (Unit) LogJacGrad(u float64) float64 { return 1 - 2*Unit{}.Value(u) }

// Unconstrain returns u = logit(x) = log(x/(1-x)), the inverse of Value,
// for x in (0, 1).
func (Unit) Unconstrain(x float64) float64 { return math.Log(x) - math.Log1p(-x) }

// LogJacGrad returns d/du of LogJac, 1 - 2 logistic(u).
func (b Bounded) LogJacGrad(u float64) float64 { return Unit{}.LogJacGrad(u) }

// Unconstrain returns u = logit((x-Lo)/(Hi-Lo)), the inverse of Value, for
// x in (Lo, Hi).
func (b Bounded) Unconstrain(x float64) float64 {
	return Unit{}.Unconstrain((x - b.Lo) / (b.Hi - b.Lo))
}

// The methods below take the constrained value x = Value(u) instead of u,
// for a density that works with x and has it at hand. Their arithmetic is
// fixed: the model's draws depend on it to the last bit.

// LogJacAt returns log |dx/du| = log x at x = Value(u).
func (Positive) LogJacAt(x float64) float64 { return math.Log(x) }

// ChainGrad returns d/du [f(x) + log |dx/du|] at x = Value(u), given
// dfdx = f'(x): dfdx x + 1.
func (Positive) ChainGrad(dfdx, x float64) float64 { return dfdx*x + 1 }

// LogJacAt returns log |dx/du| = log x + log(1-x) at x = Value(u).
func (Unit) LogJacAt(x float64) float64 { return math.Log(x) + math.Log1p(-x) }

// ChainGrad returns d/du [f(x) + log |dx/du|] at x = Value(u), given
// dfdx = f'(x): dfdx x(1-x) + 1 - 2x.
func (Unit) ChainGrad(dfdx, x float64) float64 { return dfdx*x*(1-x) + 1 - 2*x }

// LogJacAt returns log |dx/du| = log(Hi-Lo) + log s + log(1-s) at
// x = Value(u), with s = (x-Lo)/(Hi-Lo).
func (b Bounded) LogJacAt(x float64) float64 {
	return math.Log(b.Hi-b.Lo) + Unit{}.LogJacAt((x-b.Lo)/(b.Hi-b.Lo))
}

// ChainGrad returns d/du [f(x) + log |dx/du|] at x = Value(u), given
// dfdx = f'(x): dfdx (Hi-Lo) s(1-s) + 1 - 2s with s = (x-Lo)/(Hi-Lo).
func (b Bounded) ChainGrad(dfdx, x float64) float64 {
	return Unit{}.ChainGrad(dfdx*(b.Hi-b.Lo), (x-b.Lo)/(b.Hi-b.Lo))
}

// Asinh maps u in R to x = S sinh(u), also in R: the coordinate of a
// heavy-tailed parameter on the real line. Near 0 it is x = S u; far out,
// x grows like S e^|u|/2, so a Student-t density's polynomial tails
// (x^-(nu+1)) become exponential ones in u (e^-nu|u|), which the
// sampler's fixed step crosses in a few steps instead of the many a
// polynomial tail takes (Stan's User's Guide on reparameterizing heavy
// tails makes the same point for the Cauchy, from memory). S > 0 sets
// where the tails begin. LogJac is log(S cosh u).
type Asinh struct{ S float64 }

// Value returns S sinh(u).
func (a Asinh) Value(u float64) float64 { return a.S * math.Sinh(u) }

// LogJac returns log(S cosh u), computed stably as log S + |u| +
// log1p(e^-2|u|) - log 2.
func (a Asinh) LogJac(u float64) float64 {
	b := math.Abs(u)
	return math.Log(a.S) + b + math.Log1p(math.Exp(-2*b)) - math.Ln2
}

// LogJacGrad returns d/du log(S cosh u) = tanh u.
func (Asinh) LogJacGrad(u float64) float64 { return math.Tanh(u) }

// Unconstrain returns u = asinh(x/S), the inverse of Value.
func (a Asinh) Unconstrain(x float64) float64 { return math.Asinh(x / a.S) }

// LogJacAt returns log |dx/du| = log(S cosh u) = log S + log(1 + (x/S)²)/2
// at x = S sinh(u).
func (a Asinh) LogJacAt(x float64) float64 {
	r := x / a.S
	return math.Log(a.S) + 0.5*math.Log1p(r*r)
}

// Slope returns dx/du = S cosh u = sqrt(S² + x²) at x = S sinh(u).
func (a Asinh) Slope(x float64) float64 { return math.Sqrt(a.S*a.S + x*x) }

// ChainGrad returns d/du [f(x) + log |dx/du|] at x = S sinh(u), given
// dfdx = f'(x): dfdx S cosh u + tanh u, with cosh u = sqrt(1 + (x/S)²)
// (Slope's value, by arithmetic the measured draws were made with).
func (a Asinh) ChainGrad(dfdx, x float64) float64 {
	r := x / a.S
	c := math.Sqrt(1 + r*r)
	return dfdx*a.S*c + r/c
}
