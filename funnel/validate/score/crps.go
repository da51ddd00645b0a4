package score

import (
	"math"
	"sort"
)

// CRPS returns the continuous ranked probability score of the empirical
// distribution of draws as a forecast of the observation y (Gneiting and
// Raftery 2007, JASA 102:359-378, the kernel form of the score):
//
//	CRPS(F, y) = E|X - y| - 1/2 E|X - X'|,   X, X' independent draws of F,
//
// with both expectations taken over the draws (the score of the empirical
// distribution itself, 1/n² normalisation). It is in the units of y; lower
// is better, and it equals |x - y| for a single draw x. draws is not
// modified. It panics if draws is empty.
func CRPS(draws []float64, y float64) float64 {
	s := append([]float64(nil), draws...)
	sort.Float64s(s)
	return CRPSSorted(s, y)
}

// CRPSSorted is CRPS for draws already sorted in increasing order. It uses
// E|X - X'| = (2/n²) Σ_i (2i - n - 1) x_(i), i = 1..n, so it costs O(n).
func CRPSSorted(sorted []float64, y float64) float64 {
	n := len(sorted)
	if n == 0 {
		panic("score: CRPS of no draws")
	}
	var abs, spread float64
	for i, x := range sorted {
		abs += math.Abs(x - y)
		spread += float64(2*(i+1)-n-1) * x
	}
	fn := float64(n)
	return abs/fn - spread/(fn*fn)
}

// CRPSNormal returns the CRPS of the normal forecast N(mu, sigma²) for the
// observation y, in closed form (Gneiting and Raftery 2007):
//
//	CRPS = sigma [z (2 Phi(z) - 1) + 2 phi(z) - 1/sqrt(pi)],  z = (y - mu)/sigma,
//
// with Phi and phi the standard normal distribution and density. It panics
// if sigma <= 0.
func CRPSNormal(mu, sigma, y float64) float64 {
	if !(sigma > 0) {
		panic("score: CRPSNormal needs sigma > 0")
	}
	z := (y - mu) / sigma
	phi := math.Exp(-z*z/2) / math.Sqrt(2*math.Pi)
	Phi := 0.5 * math.Erfc(-z/math.Sqrt2)
	return sigma * (z*(2*Phi-1) + 2*phi - 1/math.Sqrt(math.Pi))
}
