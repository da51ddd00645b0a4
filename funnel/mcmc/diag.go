package mcmc

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/mathext"

	"spillway/funnel/stat"
)

// The diagnostics in this file follow Vehtari, Gelman, Simpson, Carpenter and
// Bürkner (2021), "Rank-normalization, folding, and localization: An improved
// R-hat for assessing convergence of MCMC", Bayesian Analysis 16(2):667-718,
// exactly as implemented in the R package posterior (convergence.R): the same
// chain splitting, rank normalisation, Geyer truncation, tie handling and NA
// rules, so that values agree with posterior to rounding.
//
// Every function takes draws x indexed [chain][iteration]; all chains must
// have the same positive length (a ragged or empty x panics). Where posterior
// returns NA (any NaN, a constant input, too few draws) these return NaN.

const (
	badShape = "mcmc: draws must be non-empty chains of equal length"
)

func checkShape(x [][]float64) (m, n int) {
	m = len(x)
	if m == 0 || len(x[0]) == 0 {
		panic(badShape)
	}
	n = len(x[0])
	for _, c := range x {
		if len(c) != n {
			panic(badShape)
		}
	}
	return m, n
}

// splitChains returns views of the first and second half of every chain;
// with an odd length the middle draw is dropped, and a single draw is not
// split (posterior's .split_chains).
func splitChains(x [][]float64) [][]float64 {
	n := len(x[0])
	if n == 1 {
		return x
	}
	out := make([][]float64, 0, 2*len(x))
	for _, c := range x {
		out = append(out, c[:n/2])
	}
	for _, c := range x {
		out = append(out, c[(n+1)/2:])
	}
	return out
}

// shouldReturnNA reports posterior's should_return_NA: any NaN or ±Inf, or
// max − min below machine epsilon.
func shouldReturnNA(x [][]float64) bool {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, c := range x {
		for _, v := range c {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return true
			}
			lo = math.Min(lo, v)
			hi = math.Max(hi, v)
		}
	}
	return math.Abs(hi-lo) < 0x1p-52
}

func hasNaN(x [][]float64) bool {
	for _, c := range x {
		for _, v := range c {
			if math.IsNaN(v) {
				return true
			}
		}
	}
	return false
}

// zScale returns the rank-normalised draws Φ⁻¹((r − 3/8)/(S + 1/4)), where r
// are the average ranks of all S pooled draws (Blom 1958; posterior's
// z_scale). The shape of x is kept.
func zScale(x [][]float64) [][]float64 {
	m, n := len(x), len(x[0])
	total := m * n
	vals := make([]float64, total)
	for c, ch := range x {
		copy(vals[c*n:], ch)
	}
	idx := make([]int, total)
	for i := range idx {
		idx[i] = i
	}
	slices.SortFunc(idx, func(a, b int) int {
		switch va, vb := vals[a], vals[b]; {
		case va < vb:
			return -1
		case va > vb:
			return 1
		}
		return 0
	})
	z := make([]float64, total)
	denom := float64(total) - 2*(3.0/8) + 1
	for i := 0; i < total; {
		j := i + 1
		for j < total && vals[idx[j]] == vals[idx[i]] {
			j++
		}
		// Positions i..j-1 (0-based) share the average 1-based rank.
		r := float64(i+1+j) / 2
		q := mathext.NormalQuantile((r - 3.0/8) / denom)
		for k := i; k < j; k++ {
			z[idx[k]] = q
		}
		i = j
	}
	out := make([][]float64, m)
	for c := range out {
		out[c] = z[c*n : (c+1)*n : (c+1)*n]
	}
	return out
}

// rhatCore is posterior's .rhat: sqrt((B/W + n − 1)/n) with
// B = n var(chain means) and W = mean(chain variances).
func rhatCore(x [][]float64) float64 {
	if shouldReturnNA(x) {
		return math.NaN()
	}
	m, n := len(x), len(x[0])
	if m < 2 || n < 2 {
		return math.NaN()
	}
	means := make([]float64, m)
	w := 0.0
	for c, ch := range x {
		means[c] = stat.Mean(ch)
		w += stat.Variance(ch)
	}
	w /= float64(m)
	b := float64(n) * stat.Variance(means)
	return math.Sqrt((b/w + float64(n) - 1) / float64(n))
}

// essCore is posterior's .ess: Geyer's initial positive sequence with the
// initial monotone correction on the multi-chain autocorrelation of
// Vehtari et al. (2021), eq. (10), with τ floored at 1/log10(MN). The
// autocovariances come from an FFT as in posterior, O(n log n) per chain.
func essCore(x [][]float64) float64 {
	m, n := len(x), len(x[0])
	if n < 3 || shouldReturnNA(x) {
		return math.NaN()
	}
	means := make([]float64, m)
	acovs := make([][]float64, m)
	fft := fourier.NewFFT(2 * nextn(n))
	var work []float64
	var coef []complex128
	for c, ch := range x {
		means[c] = stat.Mean(ch)
		acovs[c], work, coef = autocovariance(fft, ch, work, coef)
	}
	// acov returns the chain-averaged autocovariance at lag k.
	acov := func(k int) float64 {
		s := 0.0
		for _, a := range acovs {
			s += a[k]
		}
		return s / float64(m)
	}
	fn := float64(n)
	meanVar := acov(0) * fn / (fn - 1)
	varPlus := meanVar * (fn - 1) / fn
	if m > 1 {
		varPlus += stat.Variance(means)
	}
	rho := make([]float64, n)
	t := 0
	rhoEven := 1.0
	rho[0] = rhoEven
	rhoOdd := 1 - (meanVar-acov(1))/varPlus
	rho[1] = rhoOdd
	for t < n-5 && !math.IsNaN(rhoEven+rhoOdd) && rhoEven+rhoOdd > 0 {
		t += 2
		rhoEven = 1 - (meanVar-acov(t))/varPlus
		rhoOdd = 1 - (meanVar-acov(t+1))/varPlus
		if rhoEven+rhoOdd >= 0 {
			rho[t] = rhoEven
			rho[t+1] = rhoOdd
		}
	}
	maxT := t
	if rhoEven > 0 {
		rho[maxT] = rhoEven
	}
	for t = 0; t <= maxT-4; {
		t += 2
		if rho[t]+rho[t+1] > rho[t-2]+rho[t-1] {
			rho[t] = (rho[t-2] + rho[t-1]) / 2
			rho[t+1] = rho[t]
		}
	}
	ess := float64(m * n)
	sum := 0.0
	if maxT == 0 {
		// R's rho_hat_t[1:0] selects element 1 only.
		sum = rho[0]
	}
	for k := 0; k < maxT; k++ {
		sum += rho[k]
	}
	tau := -1 + 2*sum + rho[maxT]
	if bound := 1 / math.Log10(ess); tau < bound {
		tau = bound
	}
	return ess / tau
}

// autocovariance returns the biased autocovariances Σ_i y_i y_{i+k} / n,
// k = 0..n−1, of the centred x computed by FFT with zero padding to
// 2·nextn(n) and scaled so that lag 0 is exactly var(x)(n−1)/n, as
// posterior's autocovariance; a constant x gives zeros. work and coef are
// scratch buffers, returned for reuse.
func autocovariance(fft *fourier.FFT, x, work []float64, coef []complex128) ([]float64, []float64, []complex128) {
	n := len(x)
	out := make([]float64, n)
	v := stat.Variance(x)
	if v == 0 {
		return out, work, coef
	}
	size := fft.Len()
	if cap(work) < size {
		work = make([]float64, size)
	}
	work = work[:size]
	mu := stat.Mean(x)
	for i, xi := range x {
		work[i] = xi - mu
	}
	clear(work[n:])
	if cap(coef) < size/2+1 {
		coef = make([]complex128, size/2+1)
	}
	coef = fft.Coefficients(coef[:size/2+1], work)
	for i, c := range coef {
		coef[i] = complex(real(c)*real(c)+imag(c)*imag(c), 0)
	}
	work = fft.Sequence(work, coef)
	scale := v * float64(n-1) / float64(n) / work[0]
	for k := range out {
		out[k] = work[k] * scale
	}
	return out, work, coef
}

// nextn returns the smallest integer >= n whose only prime factors are 2,
// 3 and 5 (R's nextn).
func nextn(n int) int {
	for m := max(n, 1); ; m++ {
		r := m
		for _, p := range []int{2, 3, 5} {
			for r%p == 0 {
				r /= p
			}
		}
		if r == 1 {
			return m
		}
	}
}

func pooledSorted(x [][]float64) []float64 {
	pooled := make([]float64, 0, len(x)*len(x[0]))
	for _, c := range x {
		pooled = append(pooled, c...)
	}
	slices.Sort(pooled)
	return pooled
}

// foldDraws returns |x − med|.
func foldDraws(x [][]float64, med float64) [][]float64 {
	out := make([][]float64, len(x))
	for c, ch := range x {
		f := make([]float64, len(ch))
		for i, v := range ch {
			f[i] = math.Abs(v - med)
		}
		out[c] = f
	}
	return out
}

// rhatFrom combines the bulk R-hat of the rank-normalised split chains zb
// with the tail R-hat of the folded draws (median from sorted).
func rhatFrom(x, zb [][]float64, sorted []float64) float64 {
	bulk := rhatCore(zb)
	tail := rhatCore(zScale(splitChains(foldDraws(x, stat.Quantile(sorted, 0.5)))))
	if math.IsNaN(bulk) || math.IsNaN(tail) {
		return math.NaN()
	}
	return math.Max(bulk, tail)
}

// essQuantileFrom is ESSQuantile with the pooled draws already sorted.
func essQuantileFrom(x [][]float64, sorted []float64, p float64) float64 {
	if shouldReturnNA(x) {
		return math.NaN()
	}
	if p == 1 {
		s := float64(len(sorted))
		p = (s - 0.5) / s
	}
	q := stat.Quantile(sorted, p)
	ind := make([][]float64, len(x))
	for c, ch := range x {
		b := make([]float64, len(ch))
		for i, v := range ch {
			if v <= q {
				b[i] = 1
			}
		}
		ind[c] = b
	}
	return essCore(splitChains(ind))
}

func essTailFrom(x [][]float64, sorted []float64) float64 {
	lo := essQuantileFrom(x, sorted, 0.05)
	hi := essQuantileFrom(x, sorted, 0.95)
	if math.IsNaN(lo) || math.IsNaN(hi) {
		return math.NaN()
	}
	return math.Min(lo, hi)
}

// Rhat returns the rank-normalised split R-hat, the larger of the bulk value
// (on rank-normalised split chains) and the tail value (on the folded draws
// |x − median|), Vehtari et al. (2021) section 4.2. It is NaN for any NaN
// draw or a constant x.
func Rhat(x [][]float64) float64 {
	checkShape(x)
	if hasNaN(x) {
		return math.NaN()
	}
	return rhatFrom(x, zScale(splitChains(x)), pooledSorted(x))
}

// RhatBasic returns the classic split R-hat (Gelman et al. 2013, BDA3
// eq. 11.4) on split chains without rank normalisation.
func RhatBasic(x [][]float64) float64 {
	checkShape(x)
	return rhatCore(splitChains(x))
}

// ESSBulk returns the bulk effective sample size: the ESS of the
// rank-normalised split chains (Vehtari et al. 2021, section 4.1).
func ESSBulk(x [][]float64) float64 {
	checkShape(x)
	if hasNaN(x) {
		return math.NaN()
	}
	return essCore(zScale(splitChains(x)))
}

// ESSBasic returns the effective sample size of the split chains without
// rank normalisation (posterior's ess_basic, also its ess_mean).
func ESSBasic(x [][]float64) float64 {
	checkShape(x)
	return essCore(splitChains(x))
}

// ESSQuantile returns the effective sample size of the indicator
// I[x ≤ q_p], with q_p the type-7 quantile of all draws (Vehtari et al.
// 2021, section 4.3). p must be in [0, 1].
func ESSQuantile(x [][]float64, p float64) float64 {
	checkShape(x)
	if p < 0 || p > 1 {
		panic("mcmc: quantile probability out of [0, 1]")
	}
	if shouldReturnNA(x) {
		return math.NaN()
	}
	return essQuantileFrom(x, pooledSorted(x), p)
}

// ESSTail returns the tail effective sample size, the smaller of the ESS of
// the 5% and 95% quantiles (Vehtari et al. 2021, section 4.3).
func ESSTail(x [][]float64) float64 {
	checkShape(x)
	if shouldReturnNA(x) {
		return math.NaN()
	}
	return essTailFrom(x, pooledSorted(x))
}

// MCSEMean returns the Monte Carlo standard error of the posterior mean,
// sd(x) / sqrt(ESSBasic(x)), in the units of x (posterior's mcse_mean).
func MCSEMean(x [][]float64) float64 {
	checkShape(x)
	_, sd := stat.MeanSD(slices.Concat(x...))
	return sd / math.Sqrt(ESSBasic(x))
}
