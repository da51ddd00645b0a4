package loo

import "math"

// Weights returns Pareto-smoothed importance weights, normalised to sum to
// 1, for the log importance ratios lw (one per posterior draw; any
// constant offset), and the fitted Pareto shape k of their tail. Above
// 0.7 the weighted estimates are unreliable (Vehtari et al. 2024, section
// 3.2) and the quantity should be computed exactly, by a refit. lw is not
// modified.
func Weights(lw []float64) (w []float64, k float64) {
	s := append([]float64(nil), lw...)
	k = smooth(s, make([]int, len(s)))
	w = make([]float64, len(s))
	sum := 0.0
	for i, v := range s {
		w[i] = math.Exp(v)
		sum += w[i]
	}
	for i := range w {
		w[i] /= sum
	}
	return w, k
}
