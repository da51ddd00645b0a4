// Package loo estimates a model's expected log predictive density for a
// left-out observation from the draws of one fit: Pareto-smoothed
// importance-sampling leave-one-out cross-validation (PSIS-LOO; Vehtari,
// Gelman and Gabry 2017, "Practical Bayesian model evaluation using
// leave-one-out cross-validation and WAIC", Statistics and Computing 27;
// the smoothing of Vehtari, Simpson, Gelman, Yao and Gabry 2024, "Pareto
// smoothed importance sampling", JMLR 25). The generalized Pareto fit is
// Zhang and Stephens (2009, Technometrics 51) with the weak prior on the
// shape that the authors' reference implementation adds (written here from
// memory of that method, and checked in the tests against exact
// leave-one-out densities of a conjugate model).
package loo

import (
	"math"
	"sort"
)

// Result is the PSIS-LOO estimate of one model on n observations.
type Result struct {
	// Pointwise[i] is the estimated log predictive density of observation
	// i given the others, log p(y_i | y_-i).
	Pointwise []float64
	// K[i] is the estimated Pareto shape of observation i's importance
	// ratios; above 0.7 the estimate for i is unreliable.
	K []float64
	// ELPD is the sum of Pointwise, SE its standard error
	// sqrt(n var(Pointwise)).
	ELPD, SE float64
}

// MaxK returns the largest Pareto shape.
func (r *Result) MaxK() float64 {
	m := math.Inf(-1)
	for _, k := range r.K {
		m = max(m, k)
	}
	return m
}

// PSIS computes PSIS-LOO from the log likelihood ll[s][i] of observation i
// under posterior draw s (every row the same length). The tail length uses
// a relative efficiency of 1, as for independent draws; with well-mixed
// NUTS chains the difference is a few tail draws.
func PSIS(ll [][]float64) *Result {
	S := len(ll)
	n := 0
	if S > 0 {
		n = len(ll[0])
	}
	r := &Result{Pointwise: make([]float64, n), K: make([]float64, n)}
	lw := make([]float64, S)
	idx := make([]int, S)
	for i := 0; i < n; i++ {
		for s := range S {
			lw[s] = -ll[s][i]
		}
		r.K[i] = smooth(lw, idx)
		// elpd_i = log sum_s w_s p(y_i|theta_s) - log sum_s w_s
		num, den := math.Inf(-1), math.Inf(-1)
		for s := range S {
			num = logAdd(num, lw[s]+ll[s][i])
			den = logAdd(den, lw[s])
		}
		r.Pointwise[i] = num - den
	}
	r.ELPD, r.SE = sumSE(r.Pointwise)
	return r
}

// Compare returns the difference of a's and b's ELPD on the same
// observations and its standard error from the pointwise differences
// (Vehtari, Gelman and Gabry 2017, section 5.2).
func Compare(a, b *Result) (diff, se float64) {
	d := make([]float64, len(a.Pointwise))
	for i := range d {
		d[i] = a.Pointwise[i] - b.Pointwise[i]
	}
	return sumSE(d)
}

func sumSE(x []float64) (sum, se float64) {
	n := float64(len(x))
	for _, v := range x {
		sum += v
	}
	m := sum / n
	var ss float64
	for _, v := range x {
		ss += (v - m) * (v - m)
	}
	if len(x) > 1 {
		se = math.Sqrt(n * ss / (n - 1))
	}
	return sum, se
}

// smooth replaces the largest log ratios in lw by the quantiles of a
// generalized Pareto distribution fitted to them, truncates at the largest
// raw ratio, and returns the fitted shape k (+Inf when the tail is too
// short to fit). lw is shifted so that its maximum is 0.
func smooth(lw []float64, idx []int) float64 {
	S := len(lw)
	mx := math.Inf(-1)
	for _, v := range lw {
		mx = max(mx, v)
	}
	for s := range lw {
		lw[s] -= mx
	}
	M := int(math.Ceil(math.Min(0.2*float64(S), 3*math.Sqrt(float64(S)))))
	if M < 5 || M >= S {
		return math.Inf(1)
	}
	for s := range idx {
		idx[s] = s
	}
	sort.SliceStable(idx, func(a, b int) bool { return lw[idx[a]] < lw[idx[b]] })
	tail := idx[S-M:]
	cutoff := lw[idx[S-M-1]]
	if lw[tail[0]] <= cutoff { // ties at the cut: nothing to smooth
		return 0
	}
	ec := math.Exp(cutoff)
	x := make([]float64, M)
	for j, s := range tail {
		x[j] = math.Exp(lw[s]) - ec
	}
	k, sigma := gpdFit(x)
	if math.IsInf(k, 0) || math.IsNaN(k) {
		return k
	}
	for j, s := range tail {
		p := (float64(j) + 0.5) / float64(M)
		lw[s] = math.Min(math.Log(gpdQuantile(p, k, sigma)+ec), 0)
	}
	return k
}

// gpdFit fits a generalized Pareto distribution with location 0 to the
// sorted positive values x by the method of Zhang and Stephens (2009):
// a posterior mean of theta = -k/sigma over a grid with a data-driven
// prior, then k = mean(log1p(-theta x)); k is then pulled towards 0.5 by a
// weak prior worth 10 observations.
func gpdFit(x []float64) (k, sigma float64) {
	n := len(x)
	const prior = 3.0
	m := 30 + int(math.Floor(math.Sqrt(float64(n))))
	xstar := x[int(math.Floor(float64(n)/4+0.5))-1] // first quartile
	theta := make([]float64, m)
	lth := make([]float64, m)
	for j := range m {
		theta[j] = 1/x[n-1] + (1-math.Sqrt(float64(m)/(float64(j+1)-0.5)))/prior/xstar
		// profile log likelihood: n (log(a/k) - k - 1) with a = -theta,
		// k = mean(log1p(a x))
		a := -theta[j]
		var kk float64
		for _, v := range x {
			kk += math.Log1p(a * v)
		}
		kk /= float64(n)
		lth[j] = float64(n) * (math.Log(a/kk) - kk - 1)
	}
	lse := math.Inf(-1)
	for _, l := range lth {
		lse = logAdd(lse, l)
	}
	var th float64
	for j := range m {
		th += theta[j] * math.Exp(lth[j]-lse)
	}
	for _, v := range x {
		k += math.Log1p(-th * v)
	}
	k /= float64(n)
	sigma = -k / th
	k = (float64(n)*k + 10*0.5) / (float64(n) + 10)
	return k, sigma
}

// gpdQuantile is the p-quantile of the generalized Pareto distribution with
// location 0, shape k and scale sigma.
func gpdQuantile(p, k, sigma float64) float64 {
	if k == 0 {
		return -sigma * math.Log1p(-p)
	}
	return sigma * math.Expm1(-k*math.Log1p(-p)) / k
}

func logAdd(a, b float64) float64 {
	if math.IsInf(a, -1) {
		return b
	}
	if math.IsInf(b, -1) {
		return a
	}
	if a < b {
		a, b = b, a
	}
	return a + math.Log1p(math.Exp(b-a))
}
