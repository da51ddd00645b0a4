package validate

import (
	"math/rand/v2"
)

// Placebo refits (a falsification test; Abadie, Diamond and Hainmueller
// 2010, placebo studies in time): each channel's spend is moved to weeks
// where it did not happen, the model is refitted, and the channel's effect
// is estimated again. Where the data carry a real effect, the estimate on
// the real spend stands above most placebo estimates; where they do not,
// it is one more draw from the placebo distribution and the permutation
// p-value is roughly uniform.
//
// The move is a circular shift by a whole number of weeks k with
// MinPlaceboShift <= k <= T - MinPlaceboShift: spend of week t goes to week
// (t + k) mod T. It keeps the channel's flighting (bursts, gaps, their
// lengths and order), its total and its autocorrelation, and breaks only
// its timing against the outcome. Shifts by whole years would also keep
// its seasonal timing, but 156 weeks allow only 2 of them, so the smallest
// possible p-value would be 1/3; circular shifts by at least a quarter
// allow T - 2*13 + 1 distinct placebos (131 on 156 weeks). The price: a
// shifted series lines up with a different season, which the model's
// seasonal terms absorb.
const MinPlaceboShift = 13

// DefaultPlacebos is the default number of placebo refits per channel:
// 19 gives a smallest possible p-value of 1/20 = 0.05.
const DefaultPlacebos = 19

// PlaceboShifts returns n distinct shifts for a series of T weeks, drawn
// without replacement from MinPlaceboShift..T-MinPlaceboShift by a
// generator seeded with seed (fewer when fewer exist).
func PlaceboShifts(seed uint64, T, n int) []int {
	var all []int
	for k := MinPlaceboShift; k <= T-MinPlaceboShift; k++ {
		all = append(all, k)
	}
	rng := rand.New(rand.NewPCG(seed, 5))
	rng.Shuffle(len(all), func(i, j int) { all[i], all[j] = all[j], all[i] })
	return all[:min(n, len(all))]
}

// ShiftSpend writes x circularly shifted by k weeks into dst (week t's
// spend to week (t+k) mod T) and returns it; a nil or short dst allocates.
func ShiftSpend(dst, x []float64, k int) []float64 {
	T := len(x)
	if cap(dst) < T {
		dst = make([]float64, T)
	}
	dst = dst[:T]
	for t, v := range x {
		dst[((t+k)%T+T)%T] = v
	}
	return dst
}

// PlaceboP returns the permutation p-value of the real estimate among the
// placebo estimates, (1 + #{placebo >= real}) / (1 + N) (Phipson and
// Smyth 2010 explain the +1: it never gives 0, and it is exactly valid
// when the real estimate is exchangeable with the placebos).
func PlaceboP(real float64, placebos []float64) float64 {
	k := 0
	for _, p := range placebos {
		if p >= real {
			k++
		}
	}
	return float64(1+k) / float64(1+len(placebos))
}
