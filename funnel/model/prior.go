package model

import (
	"fmt"
	"math"
)

// Family names a prior distribution family.
type Family string

// The prior families a priors file may name.
const (
	Normal     Family = "normal"     // Normal(mean P1, sd P2) on the real line
	HalfNormal Family = "halfnormal" // HalfNormal(sd P1) on x > 0: 2/(P1 sqrt(2 pi)) exp(-x^2/(2 P1^2))
	Gamma      Family = "gamma"      // Gamma(shape P1, rate P2) on x > 0
	Beta       Family = "beta"       // Beta(P1, P2) on (0, 1)
	InvGamma   Family = "invgamma"   // InvGamma(shape P1, scale P2) on x > 0: P2^P1/Gamma(P1) x^(-P1-1) exp(-P2/x)
	Flat       Family = "flat"       // improper uniform: on the real line for a coefficient, else on the parameter's support
	Jeffreys   Family = "jeffreys"   // improper 1/x on x > 0 (flat on log x; for a scale)
	Fixed      Family = "fixed"      // the parameter is held at P1 and not sampled
	StudentT   Family = "studentt"   // Student-t(df P1, scale P2) centred at 0 on the real line
	// LogNormal90 and LogNormal are the families of a stated return
	// (retprior.go), not of a parameter: by the 5% and 95% quantiles, or
	// by the mean and sd of the return itself.
	LogNormal90 Family = "lognormal90"
	LogNormal   Family = "lognormal"
	// Conditional marks a coefficient whose prior is a return prior's
	// term in a Joint target, conditional on the other parameters: flat
	// on x > 0 in the stage itself. A priors file cannot name it.
	Conditional Family = "conditional"
)

// Support is where a parameter lives.
type Support int

// Supports.
const (
	Real Support = iota
	PositiveReal
	UnitInterval
	// HeavyReal is the real line sampled as asinh(2x) (mcmc.Asinh): the
	// default of a parameter whose prior has heavy tails (a jump weight's
	// Student-t, jump.go). A normal or Student-t prior keeps it; the
	// posterior is the same, only the sampler's coordinate differs.
	HeavyReal
)

// Prior is a prior distribution for one parameter.
type Prior struct {
	Family Family
	P1, P2 float64
}

// LogPdf returns log p(x) up to a constant that does not depend on x, and
// d/dx log p(x). Outside the support it returns -Inf.
func (p Prior) LogPdf(x float64) (lp, d float64) {
	switch p.Family {
	case Normal:
		z := (x - p.P1) / p.P2
		return -0.5*z*z - math.Log(p.P2), -z / p.P2
	case HalfNormal:
		if x < 0 {
			return math.Inf(-1), 0
		}
		z := x / p.P1
		return -0.5*z*z - math.Log(p.P1) + math.Log(2), -z / p.P1
	case Gamma:
		if x <= 0 {
			return math.Inf(-1), 0
		}
		lg, _ := math.Lgamma(p.P1)
		return p.P1*math.Log(p.P2) - lg + (p.P1-1)*math.Log(x) - p.P2*x, (p.P1-1)/x - p.P2
	case Beta:
		if x <= 0 || x >= 1 {
			return math.Inf(-1), 0
		}
		la, _ := math.Lgamma(p.P1)
		lb, _ := math.Lgamma(p.P2)
		lab, _ := math.Lgamma(p.P1 + p.P2)
		return lab - la - lb + (p.P1-1)*math.Log(x) + (p.P2-1)*math.Log1p(-x), (p.P1-1)/x - (p.P2-1)/(1-x)
	case InvGamma:
		if x <= 0 {
			return math.Inf(-1), 0
		}
		lg, _ := math.Lgamma(p.P1)
		return p.P1*math.Log(p.P2) - lg - (p.P1+1)*math.Log(x) - p.P2/x, (p.P2/x - (p.P1 + 1)) / x
	case StudentT:
		z := x / p.P2
		q := 1 + z*z/p.P1
		return -0.5*(p.P1+1)*math.Log(q) - math.Log(p.P2), -(p.P1 + 1) * z / (p.P1 * p.P2 * q)
	case Flat, Fixed, Conditional:
		return 0, 0
	case Jeffreys:
		if x <= 0 {
			return math.Inf(-1), 0
		}
		return -math.Log(x), -1 / x
	}
	panic("model: unknown prior family " + string(p.Family))
}

// Support returns the natural support of the family; Flat and Fixed return
// def, the support of the parameter's default prior.
func (p Prior) Support(def Support) Support {
	switch p.Family {
	case Normal, StudentT:
		if def == HeavyReal {
			return HeavyReal
		}
		return Real
	case HalfNormal, Gamma, InvGamma, Jeffreys, Conditional:
		return PositiveReal
	case Beta:
		return UnitInterval
	}
	return def
}

// Check returns an error if the parameters of p are not valid for its family.
func (p Prior) Check() error {
	_, err := p.CheckAt()
	return err
}

// PriorLimit bounds the size of a prior's numbers: a scale, shape or rate
// from 1/PriorLimit to PriorLimit, a mean or fixed value within
// ±PriorLimit. The model's parameters are in scaled units of order one
// (DESIGN.md's scaling), so a number outside is a typo or a wish to hold
// the parameter fixed; beyond it the sampler finds no usable step size
// (normal,0,1e-300 left it without an initial point).
const PriorLimit = 1e6

// Arity returns how many of P1, P2 the family takes (normal, gamma,
// invgamma, beta and studentt two; halfnormal and fixed one; flat and jeffreys none),
// or -1 for an unknown family.
func (f Family) Arity() int {
	switch f {
	case Normal, Gamma, InvGamma, Beta, StudentT:
		return 2
	case HalfNormal, Fixed:
		return 1
	case Flat, Jeffreys, Conditional:
		return 0
	}
	return -1
}

// CheckAt is Check that also says which number is at fault: 1 for P1, 2
// for P2, 0 for the family itself.
func (p Prior) CheckAt() (which int, err error) {
	bad := func(w int, f string, args ...any) (int, error) { return w, fmt.Errorf(f, args...) }
	if p.Family.Arity() < 0 {
		return bad(0, "unknown family %q; expected normal, halfnormal, gamma, invgamma, beta, studentt, flat, jeffreys or fixed", p.Family)
	}
	for i, v := range []float64{p.P1, p.P2} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return bad(i+1, "prior parameters must be finite numbers")
		}
	}
	// positive: the number, a scale, shape or rate, must be in
	// [1/PriorLimit, PriorLimit]; what names it in the message.
	positive := func(w int, v float64, what string) (int, error) {
		switch {
		case v <= 0:
			return bad(w, "%s needs %s > 0", p.Family, what)
		case v < 1/PriorLimit || v > PriorLimit:
			return bad(w, "%s %s %g is outside %g to %g: the model's parameters are in scaled units of order one (to hold a parameter at a value, use fixed)", p.Family, what, v, 1/PriorLimit, PriorLimit)
		}
		return 0, nil
	}
	within := func(w int, v float64, what string) (int, error) {
		if math.Abs(v) > PriorLimit {
			return bad(w, "%s %s %g is outside ±%g: the model's parameters are in scaled units of order one", p.Family, what, v, PriorLimit)
		}
		return 0, nil
	}
	var w int
	switch p.Family {
	case Normal:
		if w, err = within(1, p.P1, "mean p1"); err == nil {
			w, err = positive(2, p.P2, "sd p2")
		}
	case HalfNormal:
		w, err = positive(1, p.P1, "sd p1")
	case Gamma:
		if w, err = positive(1, p.P1, "shape p1"); err == nil {
			w, err = positive(2, p.P2, "rate p2")
		}
	case Beta:
		if w, err = positive(1, p.P1, "p1"); err == nil {
			w, err = positive(2, p.P2, "p2")
		}
	case InvGamma:
		if w, err = positive(1, p.P1, "shape p1"); err == nil {
			w, err = positive(2, p.P2, "scale p2")
		}
	case StudentT:
		if w, err = positive(1, p.P1, "degrees of freedom p1"); err == nil {
			w, err = positive(2, p.P2, "scale p2")
		}
	case Fixed:
		w, err = within(1, p.P1, "value p1")
	}
	if err != nil {
		return w, err
	}
	return 0, nil
}

func (p Prior) String() string {
	switch p.Family {
	case Normal, Gamma, InvGamma, Beta, StudentT:
		return fmt.Sprintf("%s(%g, %g)", p.Family, p.P1, p.P2)
	case HalfNormal, Fixed:
		return fmt.Sprintf("%s(%g)", p.Family, p.P1)
	}
	return string(p.Family)
}

// NormalApprox returns the mean and precision (1/variance) of a normal
// penalty that stands in for the prior in a least-squares projection: the
// prior itself for Normal; for HalfNormal(s) the untruncated N(0, s), whose
// log density has the same shape on x > 0; the prior's mean and variance for
// Gamma and Beta; precision 0 (no penalty) for Flat and Jeffreys. Fixed
// parameters are not projected and return (P1, 0).
func (p Prior) NormalApprox() (mean, prec float64) {
	switch p.Family {
	case Normal:
		return p.P1, 1 / (p.P2 * p.P2)
	case HalfNormal:
		return 0, 1 / (p.P1 * p.P1)
	case Gamma:
		return p.P1 / p.P2, p.P2 * p.P2 / p.P1
	case Beta:
		s := p.P1 + p.P2
		return p.P1 / s, s * s * (s + 1) / (p.P1 * p.P2)
	case StudentT:
		if p.P1 > 2 {
			return 0, (p.P1 - 2) / (p.P1 * p.P2 * p.P2)
		}
	case Fixed:
		return p.P1, 0
	}
	return 0, 0
}
