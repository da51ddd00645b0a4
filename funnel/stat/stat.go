package stat

import "math"

// Mean returns the arithmetic mean of x, summed in order (NaN for no
// values).
func Mean(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v
	}
	return s / float64(len(x))
}

// Variance returns the sample variance of x, Σ(x − mean)² / (n − 1), NaN
// for fewer than two values.
func Variance(x []float64) float64 {
	_, v := meanVariance(x)
	return v
}

// MeanSD returns the mean and the sample standard deviation (n − 1
// divisor) of x; the sd is NaN for fewer than two values.
func MeanSD(x []float64) (mean, sd float64) {
	m, v := meanVariance(x)
	return m, math.Sqrt(v)
}

func meanVariance(x []float64) (mean, variance float64) {
	m := Mean(x)
	if len(x) < 2 {
		return m, math.NaN()
	}
	ss := 0.0
	for _, v := range x {
		ss += (v - m) * (v - m)
	}
	return m, ss / float64(len(x)-1)
}

// Quantile returns the p-quantile (p in [0, 1]) of the ascending values
// sorted by linear interpolation between order statistics: Hyndman and Fan
// (1996) type 7, R's default, with R's own arithmetic (stats:::quantile.default):
// index = 1 + (n − 1)p, lo = ⌊index⌋, hi = ⌈index⌉, h = index − lo, and
// (1 − h)x[lo] + h·x[hi] (1-based) unless x[hi] equals x[lo]. Following R to
// the bit keeps the summaries equal to those of the reference library; no
// values give NaN.
func Quantile(sorted []float64, p float64) float64 {
	n := len(sorted)
	if n == 0 {
		return math.NaN()
	}
	index := 1 + float64(n-1)*p
	lo := math.Floor(index)
	hi := math.Ceil(index)
	q := sorted[int(lo)-1]
	xhi := sorted[int(hi)-1]
	if index > lo && xhi != q {
		h := index - lo
		q = (1-h)*q + h*xhi
	}
	return q
}
