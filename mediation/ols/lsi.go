package ols

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// The constrained solvers below follow Lawson and Hanson, Solving Least
// Squares Problems (Prentice-Hall 1974; SIAM 1995), chapter 23: NNLS
// (non-negative least squares, an active-set method that ends in finitely
// many steps), LDP (least distance programming, solved through NNLS) and LSI
// (least squares with linear inequality constraints, reduced to LDP by the
// QR factorisation of the design). They allocate; they are meant for the
// rare draws whose unconstrained solution breaks a constraint.

// ErrInfeasible reports constraints that no point satisfies.
var ErrInfeasible = errors.New("ols: the inequality constraints admit no solution")

// NNLS returns x minimising ‖a·x − b‖₂ subject to x ≥ 0 (Lawson and Hanson,
// algorithm NNLS). Neither a nor b is modified. It panics if len(b) differs
// from the rows of a, and returns an error if the iterations do not end
// (3 × columns of a outer steps: the bound of Lawson and Hanson's published
// code, from memory) or the data hold NaN or ±Inf.
func NNLS(a *mat.Dense, b []float64) ([]float64, error) {
	m, n := a.Dims()
	if len(b) != m {
		panic(badLenY)
	}
	if err := checkFinite(a, b); err != nil {
		return nil, err
	}
	// tolerance on the dual, 10·eps·‖a‖₁·max(m, n) (scipy's nnls, from memory)
	norm1 := 0.0
	for j := 0; j < n; j++ {
		s := 0.0
		for i := 0; i < m; i++ {
			s += math.Abs(a.At(i, j))
		}
		norm1 = math.Max(norm1, s)
	}
	tol := 10 * 2.220446049250313e-16 * norm1 * float64(max(m, n))

	x := make([]float64, n)
	z := make([]float64, n)
	w := make([]float64, n)
	passive := make([]bool, n)
	skip := make([]bool, n) // a column whose entry failed to turn positive, until x moves
	resid := make([]float64, m)
	dual := func() {
		for i := 0; i < m; i++ {
			s := b[i]
			for j := 0; j < n; j++ {
				s -= a.At(i, j) * x[j]
			}
			resid[i] = s
		}
		for j := 0; j < n; j++ {
			s := 0.0
			for i := 0; i < m; i++ {
				s += a.At(i, j) * resid[i]
			}
			w[j] = s
		}
	}
	for iter := 0; ; iter++ {
		dual()
		j, best := -1, tol
		for k := 0; k < n; k++ {
			if !passive[k] && !skip[k] && w[k] > best {
				j, best = k, w[k]
			}
		}
		if j < 0 {
			return x, nil
		}
		if iter >= 3*n {
			return nil, fmt.Errorf("ols: non-negative least squares did not end in %d steps", 3*n)
		}
		passive[j] = true
		if err := passiveLS(z, a, b, passive); err != nil {
			return nil, err
		}
		if z[j] <= 0 {
			// rounding: the column's entry cannot turn positive
			passive[j], skip[j] = false, true
			continue
		}
		for {
			alpha, ok := 1.0, true
			for k := 0; k < n; k++ {
				if passive[k] && z[k] <= 0 {
					ok = false
					alpha = math.Min(alpha, x[k]/(x[k]-z[k]))
				}
			}
			if ok {
				break
			}
			for k := 0; k < n; k++ {
				if passive[k] {
					x[k] += alpha * (z[k] - x[k])
					if x[k] <= tol {
						passive[k], x[k] = false, 0
					}
				}
			}
			if err := passiveLS(z, a, b, passive); err != nil {
				return nil, err
			}
		}
		copy(x, z)
		for k := range skip {
			skip[k] = false
		}
	}
}

// passiveLS writes into z the least-squares solution of a restricted to the
// passive columns (zero elsewhere).
func passiveLS(z []float64, a *mat.Dense, b []float64, passive []bool) error {
	m, n := a.Dims()
	var cols []int
	for k := 0; k < n; k++ {
		z[k] = 0
		if passive[k] {
			cols = append(cols, k)
		}
	}
	if len(cols) == 0 {
		return nil
	}
	if len(cols) > m {
		return fmt.Errorf("ols: non-negative least squares: %d positive entries for %d rows", len(cols), m)
	}
	sub := mat.NewDense(m, len(cols), nil)
	for i := 0; i < m; i++ {
		for c, k := range cols {
			sub.Set(i, c, a.At(i, k))
		}
	}
	var qr mat.QR
	qr.Factorize(sub)
	var v mat.VecDense
	if err := qr.SolveVecTo(&v, false, mat.NewVecDense(m, append([]float64(nil), b...))); err != nil {
		if _, ok := err.(mat.Condition); !ok {
			return fmt.Errorf("ols: non-negative least squares: %w", err)
		}
	}
	for c, k := range cols {
		z[k] = v.AtVec(c)
	}
	return nil
}

// LDP returns the u of least Euclidean norm with e·u ≥ f (Lawson and
// Hanson, algorithm LDP): with w ≥ 0 the NNLS solution of [eᵀ; fᵀ]·w ≈
// (0, …, 0, 1) and r its residual, u = −r[:n]/r[n]; r = 0 means the
// constraints are infeasible (ErrInfeasible). Each constraint row is scaled
// to unit length first, which leaves the feasible set unchanged.
func LDP(e *mat.Dense, f []float64) ([]float64, error) {
	mc, n := e.Dims()
	if len(f) != mc {
		panic("ols: len(f) does not match the rows of e")
	}
	g := mat.NewDense(n+1, mc, nil)
	for i := 0; i < mc; i++ {
		s := 0.0
		for j := 0; j < n; j++ {
			s += e.At(i, j) * e.At(i, j)
		}
		s = math.Sqrt(s)
		if s == 0 {
			if f[i] > 0 {
				return nil, ErrInfeasible // 0 ≥ f[i] > 0
			}
			continue // 0 ≥ f[i] always holds
		}
		for j := 0; j < n; j++ {
			g.Set(j, i, e.At(i, j)/s)
		}
		g.Set(n, i, f[i]/s)
	}
	rhs := make([]float64, n+1)
	rhs[n] = 1
	w, err := NNLS(g, rhs)
	if err != nil {
		return nil, err
	}
	r := make([]float64, n+1)
	norm := 0.0
	for i := range r {
		s := -rhs[i]
		for k, wk := range w {
			s += g.At(i, k) * wk
		}
		r[i] = s
		norm += s * s
	}
	// r[n] = (Gw)[n] - 1 = -‖r‖² at the solution, so it is negative unless
	// the constraints are infeasible
	if norm < 1e-24 || r[n] >= 0 {
		return nil, ErrInfeasible
	}
	u := make([]float64, n)
	for j := range u {
		u[j] = -r[j] / r[n]
	}
	return u, nil
}

// LSI returns x minimising ‖a·x − b‖₂ subject to g·x ≥ h (Lawson and Hanson,
// algorithm LSI) and whether any constraint bound it. a (rows ≥ columns)
// must have full column rank. With a = Q·R, x₀ = R⁻¹Qᵀb the unconstrained
// solution and x = x₀ + R⁻¹u, the objective is ‖u‖² plus a constant and
// the constraints read (g·R⁻¹)·u ≥ h − g·x₀: a least-distance problem
// (LDP). When x₀ already satisfies every constraint it is returned as it
// is. Neither a, b, g nor h is modified. LSI returns *RankError for a rank-
// deficient a and ErrInfeasible when no x satisfies the constraints.
func LSI(a *mat.Dense, b []float64, g *mat.Dense, h []float64) (x []float64, bound bool, err error) {
	m, n := a.Dims()
	if len(b) != m {
		panic(badLenY)
	}
	mc, gn := g.Dims()
	if gn != n || len(h) != mc {
		panic("ols: the constraints do not match the columns of a")
	}
	if m < n {
		panic(badShape)
	}
	if err := checkFinite(a, b); err != nil {
		return nil, false, err
	}
	var qr mat.QR
	qr.Factorize(a)
	var r mat.Dense
	qr.RTo(&r)
	if err := checkRank(a.RawMatrix(), r.RawMatrix()); err != nil {
		return nil, false, err
	}
	var sol mat.VecDense
	if err := qr.SolveVecTo(&sol, false, mat.NewVecDense(m, append([]float64(nil), b...))); err != nil {
		if _, ok := err.(mat.Condition); !ok {
			return nil, false, fmt.Errorf("ols: %w", err)
		}
	}
	x0 := make([]float64, n)
	for i := range x0 {
		x0[i] = sol.AtVec(i)
	}
	rt := func(i, j int) float64 { return r.At(i, j) }
	f := make([]float64, mc)
	viol := false
	for i := 0; i < mc; i++ {
		s := h[i]
		for j := 0; j < n; j++ {
			s -= g.At(i, j) * x0[j]
		}
		f[i] = s
		viol = viol || s > 0
	}
	if !viol {
		return x0, false, nil
	}
	// e = g·R⁻¹: row i solves Rᵀ·eᵢᵀ = gᵢᵀ by forward substitution
	e := mat.NewDense(mc, n, nil)
	for i := 0; i < mc; i++ {
		for j := 0; j < n; j++ {
			s := g.At(i, j)
			for k := 0; k < j; k++ {
				s -= rt(k, j) * e.At(i, k)
			}
			e.Set(i, j, s/rt(j, j))
		}
	}
	u, err := LDP(e, f)
	if err != nil {
		return nil, true, err
	}
	// x = x0 + R⁻¹u
	x = make([]float64, n)
	for i := n - 1; i >= 0; i-- {
		s := u[i]
		for j := i + 1; j < n; j++ {
			s -= rt(i, j) * x[j]
		}
		x[i] = s / rt(i, i)
	}
	for i := range x {
		x[i] += x0[i]
	}
	return x, true, nil
}
