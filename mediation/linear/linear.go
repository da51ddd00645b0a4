package linear

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/stat"
	"spillway/mediation/ols"
)

const (
	badLen = "linear: slice lengths do not match"
	badRho = "linear: rho outside (-1, 1)"
	badNoM = "linear: no mediators"
)

// ProductOfCoefficients is the OLS product-of-coefficients decomposition for
// one mediator, in the units of x, m and y: A is the coefficient of x in
// M ~ X (+covs) with standard error SEA; B is the coefficient of m and CPrime
// that of x in Y ~ X + M (+covs), SEB the standard error of B; C is the
// coefficient of x in Y ~ X (+covs); Indirect = A·B, which equals C - CPrime
// up to rounding.
type ProductOfCoefficients struct {
	A, SEA, B, SEB, CPrime, C, Indirect float64
}

// Parallel is the OLS product-of-coefficients decomposition for several
// mediators in parallel (each M_k ~ X (+covs); Y ~ X + M_1 + ... + M_K
// (+covs)). A[k], SEA[k], B[k], SEB[k] and Indirect[k] = A[k]·B[k] refer to
// mediator k; TotalIndirect = Σ_k Indirect[k], which equals C - CPrime up to
// rounding.
type Parallel struct {
	A, SEA, B, SEB, Indirect []float64
	CPrime, C, TotalIndirect float64
}

// Estimate fits the three regressions of the single-mediator model by OLS
// (each with an intercept) and returns the decomposition. covs holds zero or
// more covariate columns, each of len(x), entered in every regression. None of
// the inputs is modified.
//
// Estimate panics if the slice lengths differ; it returns an error from
// package ols for rank-deficient or non-finite data.
func Estimate(x, m, y []float64, covs [][]float64) (ProductOfCoefficients, error) {
	p, err := EstimateParallel(x, [][]float64{m}, y, covs)
	if err != nil {
		return ProductOfCoefficients{}, err
	}
	return ProductOfCoefficients{
		A: p.A[0], SEA: p.SEA[0], B: p.B[0], SEB: p.SEB[0],
		CPrime: p.CPrime, C: p.C, Indirect: p.Indirect[0],
	}, nil
}

// EstimateParallel fits the regressions of the parallel-mediator model by OLS
// (each with an intercept) and returns the decomposition. ms holds one or more
// mediator columns and covs zero or more covariate columns, each of len(x).
// None of the inputs is modified.
//
// EstimateParallel panics if ms is empty or the slice lengths differ; it
// returns an error from package ols for rank-deficient or non-finite data.
func EstimateParallel(x []float64, ms [][]float64, y []float64, covs [][]float64) (Parallel, error) {
	if len(ms) == 0 {
		panic(badNoM)
	}
	n := len(x)
	if len(y) != n {
		panic(badLen)
	}
	for _, c := range append(append([][]float64(nil), ms...), covs...) {
		if len(c) != n {
			panic(badLen)
		}
	}
	k := len(ms)
	res := Parallel{
		A: make([]float64, k), SEA: make([]float64, k),
		B: make([]float64, k), SEB: make([]float64, k), Indirect: make([]float64, k),
	}
	// Column order: intercept, x, mediators (outcome model only), covariates.
	for j, m := range ms {
		f, err := ols.Solve(design(x, nil, covs), m)
		if err != nil {
			return Parallel{}, fmt.Errorf("linear: mediator %d model: %w", j, err)
		}
		res.A[j], res.SEA[j] = f.Coef[1], f.SE[1]
	}
	f, err := ols.Solve(design(x, ms, covs), y)
	if err != nil {
		return Parallel{}, fmt.Errorf("linear: outcome model: %w", err)
	}
	res.CPrime = f.Coef[1]
	for j := range ms {
		res.B[j], res.SEB[j] = f.Coef[2+j], f.SE[2+j]
		res.Indirect[j] = res.A[j] * res.B[j]
		res.TotalIndirect += res.Indirect[j]
	}
	f, err = ols.Solve(design(x, nil, covs), y)
	if err != nil {
		return Parallel{}, fmt.Errorf("linear: total-effect model: %w", err)
	}
	res.C = f.Coef[1]
	return res, nil
}

// design returns the n×(2+len(ms)+len(covs)) matrix [1, x, ms..., covs...].
func design(x []float64, ms, covs [][]float64) *mat.Dense {
	cols := append(append([][]float64{x}, ms...), covs...)
	d := mat.NewDense(len(x), 1+len(cols), nil)
	for i := range x {
		d.Set(i, 0, 1)
		for j, c := range cols {
			d.Set(i, 1+j, c[i])
		}
	}
	return d
}

// Sobel returns the first-order delta-method standard error of the indirect
// effect a·b and its z statistic (Sobel 1982, Sociological Methodology
// 13:290-312):
//
//	se = sqrt(b² seA² + a² seB²),  z = a·b / se.
func Sobel(a, seA, b, seB float64) (se, z float64) {
	se = math.Sqrt(b*b*seA*seA + a*a*seB*seB)
	return se, a * b / se
}

// Aroian returns Aroian's second-order standard error of a·b and its z
// statistic (as compared in MacKinnon, Lockwood, Hoffman, West and Sheets
// 2002, Psychological Methods 7:83-104):
//
//	se = sqrt(b² seA² + a² seB² + seA² seB²),  z = a·b / se.
func Aroian(a, seA, b, seB float64) (se, z float64) {
	se = math.Sqrt(b*b*seA*seA + a*a*seB*seB + seA*seA*seB*seB)
	return se, a * b / se
}

// Goodman returns Goodman's unbiased-variance standard error of a·b and its z
// statistic (as compared in MacKinnon et al. 2002):
//
//	se = sqrt(b² seA² + a² seB² - seA² seB²),  z = a·b / se.
//
// When the radicand is negative, se and z are NaN.
func Goodman(a, seA, b, seB float64) (se, z float64) {
	se = math.Sqrt(b*b*seA*seA + a*a*seB*seB - seA*seA*seB*seB)
	return se, a * b / se
}

// ACME returns the average causal mediation effect of the linear structural
// equation model of Imai, Keele and Yamamoto (2010, Statistical Science
// 25(1):51-71) when the mediator-model and outcome-model errors have
// correlation rho:
//
//	(1) Y = α1 + β1 T + ε1       (outcome without the mediator)
//	(2) M = α2 + β2 T + ε2       (mediator)
//	(3) Y = α3 + β3 T + γ M + ε3 (outcome), ρ = corr(ε2, ε3),
//	ACME(ρ) = β2 γ(ρ) = (β2 σ1/σ2)·[ρ̃ - ρ·sqrt((1 - ρ̃²)/(1 - ρ²))],
//
// with σj the standard deviation of εj and ρ̃ = corr(ε1, ε2). Then
// ACME(0) = β2·γ̂ (the product of coefficients) and ACME(ρ̃) = 0. The result is
// in the units of Y per unit of T. ACME panics if rho is not in (-1, 1).
func ACME(rho, beta2, sigma1, sigma2, rhoTilde float64) float64 {
	return beta2 * gamma(rho, sigma1, sigma2, rhoTilde)
}

// GammaAt returns the mediator coefficient implied at error correlation rho,
//
//	γ(ρ) = (σ1/σ2)·(ρ̃ - ρ·sqrt((1 - ρ̃²)/(1 - ρ²))),
//
// with σ1, σ2 and ρ̃ estimated from the residuals e1 of the outcome model
// without the mediator (equation (1) of ACME) and e2 of the mediator model
// (equation (2)): standard deviations and correlation about the residual
// means, with a common divisor (which cancels in σ1/σ2). ACME(rho) equals
// β2·GammaAt(rho, e1, e2). Neither slice is modified. GammaAt panics if the
// lengths differ, len(e1) < 2, or rho is not in (-1, 1).
func GammaAt(rho float64, e1, e2 []float64) float64 {
	s1, s2, rt := Moments(e1, e2)
	return gamma(rho, s1, s2, rt)
}

// ZeroRho returns the error correlation at which the ACME is zero, which is
// ρ̃ = corr(e1, e2) for residuals e1 of the outcome model without the mediator
// and e2 of the mediator model (see GammaAt). Neither slice is modified.
// ZeroRho panics if the lengths differ or len(e1) < 2.
func ZeroRho(e1, e2 []float64) float64 {
	_, _, rt := Moments(e1, e2)
	return rt
}

func gamma(rho, sigma1, sigma2, rhoTilde float64) float64 {
	if !(rho > -1 && rho < 1) {
		panic(badRho)
	}
	return sigma1 / sigma2 * (rhoTilde - rho*math.Sqrt((1-rhoTilde*rhoTilde)/(1-rho*rho)))
}

// Moments returns the standard deviations of e1 and e2 (divisor len-1) and
// their correlation, all about the means.
func Moments(e1, e2 []float64) (s1, s2, r float64) {
	n := len(e1)
	if len(e2) != n || n < 2 {
		panic(badLen)
	}
	m1, m2 := stat.Mean(e1), stat.Mean(e2)
	var s11, s22, s12 float64
	for i := range n {
		d1, d2 := e1[i]-m1, e2[i]-m2
		s11 += d1 * d1
		s22 += d2 * d2
		s12 += d1 * d2
	}
	return math.Sqrt(s11 / float64(n-1)), math.Sqrt(s22 / float64(n-1)), s12 / math.Sqrt(s11*s22)
}
