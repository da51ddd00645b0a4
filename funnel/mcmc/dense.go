package mcmc

import (
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// denseBlock is the part of the inverse metric that is one dense
// covariance over a few coordinates (Settings.DenseBlock); the rest stays
// diagonal. Where a handful of shared parameters lie on a ridge (a slope
// and the curvature that trades against it, correlation near -1), a
// diagonal metric fixes the step at the ridge's narrow width and the
// trajectory needs many steps to go along it; a dense block takes the
// ridge's direction as one of its axes (Stan's dense_e, on a block). The
// kernel zeroes the block's diagonal entries in nuts.invMetric, so the
// diagonal loops skip them, and adds the block's share after each loop.
type denseBlock struct {
	idx  []int     // the block's coordinates, increasing
	cov  []float64 // the block's inverse metric Σ, k × k row-major
	chol []float64 // its lower Cholesky factor L (Σ = L Lᵀ), row-major
	pb   []float64 // scratch: the block's momentum
	s    []float64 // scratch: Σ p on the block
}

func newDenseBlock(idx []int) *denseBlock {
	k := len(idx)
	return &denseBlock{idx: append([]int(nil), idx...), cov: make([]float64, k*k),
		chol: make([]float64, k*k), pb: make([]float64, k), s: make([]float64, k)}
}

// set installs cov (k × k, row-major, symmetric) as the block's inverse
// metric; an error if it is not positive definite.
func (d *denseBlock) set(cov []float64) error {
	k := len(d.idx)
	sym := mat.NewSymDense(k, append([]float64(nil), cov...))
	var ch mat.Cholesky
	if !ch.Factorize(sym) {
		return fmt.Errorf("mcmc: dense metric block is not positive definite")
	}
	var l mat.TriDense
	ch.LTo(&l)
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			d.chol[i*k+j] = l.At(i, j)
		}
	}
	copy(d.cov, cov)
	return nil
}

// sharp writes Σ p_b into d.s.
func (d *denseBlock) sharp(p []float64) []float64 {
	k := len(d.idx)
	for j, i := range d.idx {
		d.pb[j] = p[i]
	}
	for r := 0; r < k; r++ {
		row := d.cov[r*k : r*k+k]
		v := 0.0
		for j, c := range row {
			v += c * d.pb[j]
		}
		d.s[r] = v
	}
	return d.s
}

// quad returns p_bᵀ Σ p_b.
func (d *denseBlock) quad(p []float64) float64 {
	s := d.sharp(p)
	v := 0.0
	for j, i := range d.idx {
		v += s[j] * p[i]
	}
	return v
}

// momentum turns the block's standard normal draws in p into a draw from
// N(0, Σ⁻¹): p_b = L⁻ᵀ z, by back substitution.
func (d *denseBlock) momentum(p []float64) {
	k := len(d.idx)
	for j, i := range d.idx {
		d.pb[j] = p[i]
	}
	for r := k - 1; r >= 0; r-- {
		v := d.pb[r]
		for j := r + 1; j < k; j++ {
			v -= d.chol[j*k+r] * d.pb[j]
		}
		d.pb[r] = v / d.chol[r*k+r]
	}
	for j, i := range d.idx {
		p[i] = d.pb[j]
	}
}

// welfordCov accumulates a running mean and cross-product matrix over the
// block's coordinates (Stan's welford_covar_estimator).
type welfordCov struct {
	idx  []int
	n    int
	mean []float64
	m2   []float64 // k × k row-major
	d    []float64
}

func newWelfordCov(idx []int) welfordCov {
	k := len(idx)
	return welfordCov{idx: idx, mean: make([]float64, k), m2: make([]float64, k*k), d: make([]float64, k)}
}

func (w *welfordCov) restart() {
	w.n = 0
	clear(w.mean)
	clear(w.m2)
}

func (w *welfordCov) add(q []float64) {
	w.n++
	n := float64(w.n)
	k := len(w.idx)
	for j, i := range w.idx {
		w.d[j] = q[i] - w.mean[j]
		w.mean[j] += w.d[j] / n
	}
	for r, i := range w.idx {
		a := q[i] - w.mean[r]
		row := w.m2[r*k : r*k+k]
		for c := range row {
			row[c] += a * w.d[c]
		}
	}
}

// regularized writes Stan's regularised dense metric into dst (k × k):
// (n/(n+5)) Cov + 1e-3 (5/(n+5)) D, D the identity or, with a start
// metric, its diagonal on the block (as welford.regularizedVariance).
func (w *welfordCov) regularized(dst, start []float64) []float64 {
	n := float64(w.n)
	k := len(w.idx)
	for r := 0; r < k; r++ {
		for c := 0; c < k; c++ {
			v := 0.0
			if w.n > 1 {
				// symmetrise: the running sums differ in the last bits
				v = 0.5 * (w.m2[r*k+c] + w.m2[c*k+r]) / (n - 1)
			}
			dst[r*k+c] = (n / (n + 5)) * v
		}
		base := 1e-3
		if start != nil {
			base *= start[w.idx[r]]
		}
		dst[r*k+r] += base * (5 / (n + 5))
	}
	return dst
}
