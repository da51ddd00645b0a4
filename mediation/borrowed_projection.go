package mediation

import (
	"math"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/model"
	"spillway/mediation/ols"
)

// projection finds, per posterior draw, the coefficients that the outcome
// stage without its query term (the naive stage) would give its regressors
// if the outcome were this draw's expected outcome: the apparent return of
// paid search reads its coefficient there.
//
// With X the stage's regressors at the draw's transforms (the columns Split
// builds: intercept, trend, seasons and controls that are sampled, then
// paid search's responses, then the upper channels' direct responses), θ
// the draw's coefficients on them, o the part of the draw's expected
// outcome that X does not carry (held terms, a baseline that moves), pm and
// prec the normal approximations of the naive stage's priors (model.Prior
// NormalApprox) and s2 = σ_y² + γ²σ_q² the noise such a stage would see,
// the coefficients are
//
//	b = argmin ||Xθ + γq − Xb||² + s2 Σ_k prec_k (b_k − pm_k)²
//	subject to  b_k ≥ 0 where the naive stage's prior keeps coefficient k positive,
//	            o_t + Σ_{k not paid search} X_tk b_k ≥ 0 in every week t:
//
// the naive stage's posterior mode at these transforms under its priors
// restricted to the outcomes it can describe. The sign constraints are the
// priors' own support: a half-normal prior is its normal approximation cut
// at zero, so on the channels the penalty is the prior exactly. The weekly
// constraints say that the outcome that stage expects without paid search
// is not negative: an outcome (orders, revenue) is never below zero, so no
// coefficient may take more than the whole outcome. Without them, a draw
// whose paid-search response barely moves (saturated, nearly a constant,
// so collinear with the intercept) lets least squares move the level the
// query term carried onto paid search and pay for it with a negative
// intercept: on a user's data set (the demo renamed, a promotion added,
// audio dropped) 174 of 4000 draws expected a negative outcome without paid
// search in some week and 9 credited paid search with up to 117% of the
// whole outcome.
//
// By construction, then, for any window starting in week f, paid search's
// apparent return is at most mean(y) Σ_{t≥f} (o + Xb)_t, the outcome the
// naive stage expects from that week to the data's end, the only weeks its
// spend in the window can reach (Bound checks this). When no constraint
// binds, b is the unconstrained solution (a draw's identity exactly as
// before); with prec = 0 and no binding constraint it is the omitted-
// variable identity b = θ + γd, d the least-squares coefficients of q on X
// (Wooldridge, Introductory Econometrics, ch. 3). The constrained solve is
// Lawson and Hanson's LSI (mediation/ols).
type projection struct {
	T      int // weeks
	search int // the first paid-search column
	ns     int // paid-search columns
	pm     []float64
	prec   []float64
	pos    []bool // coefficient k is kept non-negative
}

// add appends a column whose naive-stage prior is pr, on a parameter whose
// default prior has support def.
func (p *projection) add(pr model.Prior, def model.Support) {
	m, k := pr.NormalApprox()
	p.pm, p.prec = append(p.pm, m), append(p.prec, k)
	sup := pr.Support(def)
	if pr.Family == model.Flat {
		sup = model.Real // a flat prior on a coefficient frees its sign
	}
	p.pos = append(p.pos, sup == model.PositiveReal)
}

// projWork is one goroutine's scratch.
type projWork struct {
	solver *ols.Solver
	yaug   []float64
	offset []float64
	g      *mat.Dense
	h      []float64
}

func (p *projection) workspace() *projWork {
	n := len(p.pm)
	npos := 0
	for _, v := range p.pos {
		if v {
			npos++
		}
	}
	return &projWork{solver: ols.NewSolver(p.T+n, n), yaug: make([]float64, p.T+n), offset: make([]float64, p.T),
		g: mat.NewDense(p.T+npos, n, nil), h: make([]float64, p.T+npos)}
}

// solve writes b into coef and reports whether a constraint bound it. x
// holds X in its first T rows (the rest is scratch), theta the draw's
// coefficients, q the queries, n the draw's expected outcome (scaled units,
// X's terms plus everything X leaves out), gamma and s2 as above.
func (p *projection) solve(coef []float64, ws *projWork, x *mat.Dense, theta, q, n []float64, gamma, s2 float64) (bool, error) {
	T, k := p.T, len(theta)
	for i := 0; i < T; i++ {
		v := gamma * q[i]
		for j := 0; j < k; j++ {
			v += x.At(i, j) * theta[j]
		}
		ws.yaug[i] = v
		ws.offset[i] = n[i] - v
	}
	for j := 0; j < k; j++ {
		w := math.Sqrt(s2 * p.prec[j])
		for c := 0; c < k; c++ {
			x.Set(T+j, c, 0)
		}
		x.Set(T+j, j, w)
		ws.yaug[T+j] = w * p.pm[j]
	}
	if _, err := ws.solver.Coef(coef, x, ws.yaug); err != nil {
		return false, err
	}
	if p.admissible(coef, ws, x) {
		return false, nil
	}
	// the constraints g b ≥ h: weeks first, then the signs
	for i := 0; i < T; i++ {
		for j := 0; j < k; j++ {
			v := x.At(i, j)
			if j >= p.search && j < p.search+p.ns {
				v = 0
			}
			ws.g.Set(i, j, v)
		}
		ws.h[i] = -ws.offset[i]
	}
	r := T
	for j, pos := range p.pos {
		if !pos {
			continue
		}
		for c := 0; c < k; c++ {
			ws.g.Set(r, c, 0)
		}
		ws.g.Set(r, j, 1)
		ws.h[r] = 0
		r++
	}
	b, bound, err := ols.LSI(x, ws.yaug, ws.g, ws.h)
	if err != nil {
		return false, err
	}
	for j, pos := range p.pos {
		if pos && b[j] < 0 {
			b[j] = 0 // a binding sign constraint met to rounding (-1e-16)
		}
	}
	copy(coef, b)
	return bound, nil
}

// admissible reports whether b meets every constraint.
func (p *projection) admissible(b []float64, ws *projWork, x *mat.Dense) bool {
	for j, pos := range p.pos {
		if pos && b[j] < 0 {
			return false
		}
	}
	for i := 0; i < p.T; i++ {
		v := ws.offset[i]
		for j, bj := range b {
			if j < p.search || j >= p.search+p.ns {
				v += x.At(i, j) * bj
			}
		}
		if v < 0 {
			return false
		}
	}
	return true
}
