package score

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Covered reports whether the true value lies in the central interval
// [lo, hi]. A true value on the boundary of the support (truth == 0 for an
// effect whose draws are all >= 0, such as a channel with no mediation at
// all) can never be inside a central interval of a posterior that does not
// reach the boundary; it is judged against the one-sided interval [0, up]
// instead, where up is the quantile at the interval's level (q90 for a 90%
// interval). Pass boundary = true for that case.
func Covered(truth, lo, hi, up float64, boundary bool) bool {
	if boundary {
		return truth <= up
	}
	return lo <= truth && truth <= hi
}

// BinomialLowerTail returns P(X <= k) for X ~ Binomial(n, p): how likely a
// calibrated interval of level p covers the truth k or fewer times in n
// independent trials. k may be fractional (an effective count); the
// distribution function is then evaluated at floor(k).
func BinomialLowerTail(k float64, n int, p float64) float64 {
	if n <= 0 {
		return 1
	}
	if k < 0 {
		return 0
	}
	return distuv.Binomial{N: float64(n), P: p}.CDF(math.Floor(k + 1e-9))
}

// BinomialUpperTail returns P(X >= k) for X ~ Binomial(n, p), with k
// rounded up to a whole number.
func BinomialUpperTail(k float64, n int, p float64) float64 {
	kk := math.Ceil(k - 1e-9)
	if kk <= 0 {
		return 1
	}
	if n <= 0 || kk > float64(n) {
		return 0
	}
	return distuv.Binomial{N: float64(n), P: p}.Survival(kk - 1)
}

// SBCBins is the number of rank bins of the uniformity test.
const SBCBins = 5

// MaxPerBin caps the thinned draws at SBCBins*MaxPerBin - 1 (99), so that
// ranks take at most 100 values.
const MaxPerBin = 20

// ThinnedRank returns the rank of truth among draws thinned as Talts et al.
// (2018, section 5) advise, so that autocorrelation does not distort the
// rank histogram: of the n draws (chains stacked in order), keep L =
// SBCBins*w - 1 evenly spaced ones, where w = floor(min(ess, n)/SBCBins)
// clamped to [1, MaxPerBin], so that no more draws are kept than the
// effective sample size ess. The rank is the number of kept draws below
// truth, in 0..L, and w is the number of rank values per bin: bin =
// rank / w, in 0..SBCBins-1, is uniform when the posterior is calibrated.
// draws is not modified; it panics with fewer than SBCBins draws.
func ThinnedRank(draws []float64, ess, truth float64) (rank, width int) {
	n := len(draws)
	if n < SBCBins {
		panic("score: rank among fewer draws than rank bins")
	}
	e := float64(n)
	if ess > 0 && ess < e {
		e = ess
	}
	width = int(e / SBCBins)
	width = max(1, min(width, MaxPerBin))
	L := SBCBins*width - 1 // <= n - 1 since width <= n/SBCBins
	for k := 0; k < L; k++ {
		i := int((float64(k) + 0.5) * float64(n) / float64(L))
		if draws[i] < truth {
			rank++
		}
	}
	return rank, width
}

// RankUniformity returns Pearson's chi-square statistic of the bin counts
// against a uniform distribution over the bins and its p-value (SBCBins-1
// degrees of freedom for SBCBins bins; in general len(counts)-1). A small
// p-value means the ranks are not uniform: the posterior is biased
// (ranks pile up at one end) or mis-sized (a U shape means too narrow, a
// hump too wide). It returns NaN for fewer than two bins or no counts.
func RankUniformity(counts []int) (chi2, p float64) {
	total := 0
	for _, c := range counts {
		total += c
	}
	if len(counts) < 2 || total == 0 {
		return math.NaN(), math.NaN()
	}
	want := float64(total) / float64(len(counts))
	for _, c := range counts {
		d := float64(c) - want
		chi2 += d * d / want
	}
	return chi2, distuv.ChiSquared{K: float64(len(counts) - 1)}.Survival(chi2)
}

// BinomialQuantile returns R's qbinom(q, n, p): the smallest k with
// P(X <= k) >= q for X ~ Binomial(n, p).
func BinomialQuantile(q float64, n int, p float64) int {
	b := distuv.Binomial{N: float64(n), P: p}
	for k := 0; k < n; k++ {
		// a relative slack as R's qbinom uses (fuzz 1 - 64 eps), so that
		// a CDF equal to q up to rounding counts as reaching it
		if b.CDF(float64(k)) >= q*(1-64*2.220446049250313e-16) {
			return k
		}
	}
	return n
}

// BinomialRange returns the central range [lo, hi] holding probability
// level of Binomial(n, p) (qbinom((1-level)/2) and qbinom((1+level)/2)): a
// calibrated interval of nominal coverage p covers the truth between lo
// and hi times in n independent trials with that probability. A count
// outside it is evidence of miscalibration.
func BinomialRange(n int, p, level float64) (lo, hi int) {
	a := (1 - level) / 2
	return BinomialQuantile(a, n, p), BinomialQuantile(1-a, n, p)
}
