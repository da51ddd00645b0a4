package ols

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"

	"spillway/funnel/stat"
)

// RankTol is the relative tolerance of the rank test: column j of x counts as
// a linear combination of columns 0..j-1 when |R[j][j]| < RankTol·‖x_j‖₂.
// It is the tolerance of R's lm.fit (tol = 1e-7).
const RankTol = 1e-7

const (
	badShape = "ols: x has fewer rows than columns or no columns"
	badLenY  = "ols: len(y) does not match the rows of x"
	badDst   = "ols: len(dst) does not match the columns of x"
	badDims  = "ols: x does not match the solver's dimensions"
)

// RankError reports a design matrix that is rank deficient to working
// precision. Column is the 0-based index of the first column found to be (to
// within RankTol) a linear combination of the columns before it, or a column
// of zeros; Ratio is |R[j][j]|/‖x_j‖₂ for that column (0 for a zero column).
type RankError struct {
	Column int
	Ratio  float64
}

// Error implements the error interface.
func (e *RankError) Error() string {
	if e.Column == 0 || e.Ratio == 0 {
		return fmt.Sprintf("ols: rank deficient: column %d is zero or a linear combination of the columns before it", e.Column)
	}
	return fmt.Sprintf("ols: rank deficient: column %d is a linear combination of columns 0..%d (|R[j][j]|/|x_j| = %.3g < %g)",
		e.Column, e.Column-1, e.Ratio, RankTol)
}

// NonFiniteError reports a NaN or infinite value in the data at 0-based Row
// and Column of x (Column is -1 for y).
type NonFiniteError struct {
	Row, Column int
	Value       float64
}

// Error implements the error interface.
func (e *NonFiniteError) Error() string {
	if e.Column < 0 {
		return fmt.Sprintf("ols: y[%d] is %v", e.Row, e.Value)
	}
	return fmt.Sprintf("ols: x[%d][%d] is %v", e.Row, e.Column, e.Value)
}

// Fit is the result of an ordinary least-squares fit y = X·Coef + Resid.
// All quantities are in the units of x and y.
type Fit struct {
	// Coef holds the coefficients, one per column of x.
	Coef []float64
	// SE holds the conventional standard errors, Sigma·sqrt(diag((XᵀX)⁻¹)).
	SE []float64
	// Resid holds the residuals y - X·Coef, one per row of x.
	Resid []float64
	// RSS is the residual sum of squares.
	RSS float64
	// Sigma is the residual standard deviation sqrt(RSS/DF).
	Sigma float64
	// DF is the residual degrees of freedom, rows - columns.
	DF int
	// R2 is the coefficient of determination 1 - RSS/TSS. TSS is centred
	// about mean(y) when x has a constant non-zero column (an intercept),
	// and is Σy² otherwise, as R's summary.lm does.
	R2 float64
}

// Solve fits y = X·b by least squares through the Householder QR
// factorisation of x (gonum mat.QR) and returns the coefficients, standard
// errors, residuals and summary statistics. x must include an intercept column
// if one is wanted. Neither x nor y is modified.
//
// Solve panics if len(y) differs from the rows of x, or x has no columns. It
// returns an error if x has no more rows than columns (no residual degrees of
// freedom), if x or y holds NaN or ±Inf (*NonFiniteError), or if x is rank
// deficient (*RankError naming the column).
func Solve(x *mat.Dense, y []float64) (*Fit, error) {
	n, p := x.Dims()
	if p == 0 {
		panic(badShape)
	}
	if len(y) != n {
		panic(badLenY)
	}
	if n <= p {
		return nil, fmt.Errorf("ols: %d rows for %d columns leaves no residual degrees of freedom", n, p)
	}
	if err := checkFinite(x, y); err != nil {
		return nil, err
	}

	var qr mat.QR
	qr.Factorize(x)
	var r mat.Dense
	qr.RTo(&r)
	if err := checkRank(x.RawMatrix(), r.RawMatrix()); err != nil {
		return nil, err
	}

	// The rank test above is scale-invariant; gonum's Condition warning is
	// based on the 1-norm condition number, which depends on the units of the
	// columns, so it is deliberately not treated as an error here.
	var b mat.VecDense
	if err := qr.SolveVecTo(&b, false, mat.NewVecDense(n, append([]float64(nil), y...))); err != nil {
		if _, ok := err.(mat.Condition); !ok {
			return nil, fmt.Errorf("ols: %w", err)
		}
	}

	f := &Fit{Coef: make([]float64, p), SE: make([]float64, p), Resid: make([]float64, n), DF: n - p}
	for j := range f.Coef {
		f.Coef[j] = b.AtVec(j)
	}
	for i := range n {
		s := 0.0
		for j := range p {
			s += x.At(i, j) * f.Coef[j]
		}
		f.Resid[i] = y[i] - s
		f.RSS += f.Resid[i] * f.Resid[i]
	}
	f.Sigma = math.Sqrt(f.RSS / float64(f.DF))

	// diag((XᵀX)⁻¹) = diag(R⁻¹R⁻ᵀ) = row sums of squares of R⁻¹.
	rinv := mat.NewTriDense(p, mat.Upper, nil)
	for i := range p {
		for j := i; j < p; j++ {
			rinv.SetTri(i, j, r.At(i, j))
		}
	}
	if err := rinv.InverseTri(rinv); err != nil {
		if _, ok := err.(mat.Condition); !ok {
			return nil, fmt.Errorf("ols: %w", err)
		}
	}
	for i := range p {
		s := 0.0
		for j := i; j < p; j++ {
			v := rinv.At(i, j)
			s += v * v
		}
		f.SE[i] = f.Sigma * math.Sqrt(s)
	}

	tss := 0.0
	if hasIntercept(x) {
		mean := stat.Mean(y)
		for _, v := range y {
			tss += (v - mean) * (v - mean)
		}
	} else {
		for _, v := range y {
			tss += v * v
		}
	}
	f.R2 = 1 - f.RSS/tss
	return f, nil
}

// Solver computes least-squares coefficients for a fixed matrix shape without
// allocating: it holds the factorisation and workspace buffers and reuses them
// on every call. It runs the same LAPACK Householder routines that mat.QR
// wraps (Dgeqrf, Dormqr) and a triangular solve. A Solver is not safe for
// concurrent use; give each goroutine its own.
type Solver struct {
	rows, cols int
	qr         []float64 // rows×cols, row-major, overwritten by Dgeqrf
	tau        []float64 // cols Householder scalars
	work       []float64 // LAPACK workspace
	b          []float64 // rows; Qᵀy, then the solution in b[:cols]
}

// NewSolver returns a Solver for rows×cols design matrices. It panics if
// cols < 1 or rows < cols.
func NewSolver(rows, cols int) *Solver {
	if cols < 1 || rows < cols {
		panic(badShape)
	}
	s := &Solver{
		rows: rows, cols: cols,
		qr:  make([]float64, rows*cols),
		tau: make([]float64, cols),
		b:   make([]float64, rows),
	}
	a := blas64.General{Rows: rows, Cols: cols, Stride: cols, Data: s.qr}
	c := blas64.General{Rows: rows, Cols: 1, Stride: 1, Data: s.b}
	q := []float64{0}
	lapack64.Geqrf(a, s.tau, q, -1)
	lw := int(q[0])
	lapack64.Ormqr(blas.Left, blas.Trans, a, s.tau, c, q, -1)
	s.work = make([]float64, max(lw, int(q[0]), cols))
	return s
}

// Coef writes into dst the least-squares coefficients of y on x (one per
// column of x) and returns dst; a nil dst is allocated. Neither x nor y is
// modified. With a non-nil dst of the right length and valid data, Coef does
// not allocate.
//
// Coef panics if x is not rows×cols as given to NewSolver, or if len(y) or
// len(dst) does not match. It returns an error, leaving dst unspecified, if x
// or y holds NaN or ±Inf (*NonFiniteError) or x is rank deficient
// (*RankError).
func (s *Solver) Coef(dst []float64, x *mat.Dense, y []float64) ([]float64, error) {
	if n, p := x.Dims(); n != s.rows || p != s.cols {
		panic(badDims)
	}
	if len(y) != s.rows {
		panic(badLenY)
	}
	if dst == nil {
		dst = make([]float64, s.cols)
	} else if len(dst) != s.cols {
		panic(badDst)
	}
	if err := checkFinite(x, y); err != nil {
		return dst, err
	}
	raw := x.RawMatrix()
	for i := range s.rows {
		copy(s.qr[i*s.cols:(i+1)*s.cols], raw.Data[i*raw.Stride:i*raw.Stride+s.cols])
	}
	copy(s.b, y)
	a := blas64.General{Rows: s.rows, Cols: s.cols, Stride: s.cols, Data: s.qr}
	lapack64.Geqrf(a, s.tau, s.work, len(s.work))
	if err := checkRank(raw, a); err != nil {
		return dst, err
	}
	c := blas64.General{Rows: s.rows, Cols: 1, Stride: 1, Data: s.b}
	lapack64.Ormqr(blas.Left, blas.Trans, a, s.tau, c, s.work, len(s.work))
	blas64.Trsv(blas.NoTrans,
		blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: s.cols, Stride: s.cols, Data: s.qr},
		blas64.Vector{N: s.cols, Inc: 1, Data: s.b})
	copy(dst, s.b[:s.cols])
	return dst, nil
}

// checkRank compares the diagonal of the R factor held in the upper triangle
// of r with the column norms of x.
func checkRank(x, r blas64.General) error {
	for j := range x.Cols {
		nrm := blas64.Nrm2(blas64.Vector{N: x.Rows, Inc: x.Stride, Data: x.Data[j:]})
		if nrm == 0 {
			return &RankError{Column: j}
		}
		if ratio := math.Abs(r.Data[j*r.Stride+j]) / nrm; !(ratio >= RankTol) {
			return &RankError{Column: j, Ratio: ratio}
		}
	}
	return nil
}

func checkFinite(x *mat.Dense, y []float64) error {
	raw := x.RawMatrix()
	for i := range raw.Rows {
		for j, v := range raw.Data[i*raw.Stride : i*raw.Stride+raw.Cols] {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return &NonFiniteError{Row: i, Column: j, Value: v}
			}
		}
	}
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return &NonFiniteError{Row: i, Column: -1, Value: v}
		}
	}
	return nil
}

// hasIntercept reports whether x has a constant non-zero column.
func hasIntercept(x *mat.Dense) bool {
	n, p := x.Dims()
	for j := range p {
		c := x.At(0, j)
		if c == 0 {
			continue
		}
		ok := true
		for i := 1; i < n && ok; i++ {
			ok = x.At(i, j) == c
		}
		if ok {
			return true
		}
	}
	return false
}
