package validate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"

	"spillway/funnel/data"
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

// shiftedSeries returns s with channel's spend moved circularly by shift
// weeks (an upper channel's exposure and frequency with it), the placebo
// check's data; s itself is not changed.
func shiftedSeries(s data.Series, spec data.Spec, channel string, shift int) (data.Series, error) {
	moved := s
	moved.Upper = slices.Clone(s.Upper)
	moved.Search = slices.Clone(s.Search)
	moved.Exposure = slices.Clone(s.Exposure)
	moved.Frequency = slices.Clone(s.Frequency)
	if c := slices.Index(spec.Upper, channel); c >= 0 {
		moved.Upper[c] = ShiftSpend(nil, s.Upper[c], shift)
		if s.Exposure != nil && s.Exposure[c] != nil { // the exposure moves with its spend
			moved.Exposure[c] = ShiftSpend(nil, s.Exposure[c], shift)
		}
		if s.Frequency != nil && s.Frequency[c] != nil { // and so does its frequency
			moved.Frequency[c] = ShiftSpend(nil, s.Frequency[c], shift)
		}
	} else if c := slices.Index(spec.Search, channel); c >= 0 {
		moved.Search[c] = ShiftSpend(nil, s.Search[c], shift)
	} else {
		return data.Series{}, fmt.Errorf("validate: placebo channel %q is not a spend column", channel)
	}
	return moved, nil
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

// placeboStats holds the placebo records: estimate by job and channel.
type placeboStats map[int]map[string]float64

func (ps placeboStats) add(r Record) {
	if ps[r.Job] == nil {
		ps[r.Job] = map[string]float64{}
	}
	ps[r.Job][r.Name] = r.Value
}

// MinPlacebos is the fewest placebo refits per channel over which an
// effect can be said to stand out: with N placebos the smallest p-value
// is 1/(N+1), so 19 are needed to reach 0.05.
const MinPlacebos = 19

// PlaceboAlpha is the p-value at or below which a channel's effect stands
// out from its placebos.
const PlaceboAlpha = 0.05

func (rep *Report) placebo(m Manifest, ps placeboStats) {
	v := Verdict{Check: Placebo, OK: true}
	refJob := -1
	var channels []string
	byChannel := map[string][]int{}
	for _, j := range m.Jobs {
		switch j.Check {
		case Reference:
			refJob = j.Index
		case Placebo:
			if byChannel[j.Channel] == nil {
				channels = append(channels, j.Channel)
			}
			byChannel[j.Channel] = append(byChannel[j.Channel], j.Index)
		}
	}
	if len(channels) == 0 || refJob < 0 {
		v.Headline = "not run (no placebos)"
		skippedNotes(&v, m, "placebo ")
		rep.Verdicts = append(rep.Verdicts, v)
		return
	}
	var weak, strong, lines []string
	fewest := math.MaxInt
	for _, col := range channels {
		real := ps[refJob][col]
		var plac []float64
		for _, j := range byChannel[col] {
			if x, ok := ps[j][col]; ok && !math.IsNaN(x) {
				plac = append(plac, x)
			}
		}
		fewest = min(fewest, len(plac))
		p := math.NaN()
		if !math.IsNaN(real) && len(plac) > 0 {
			p = PlaceboP(real, plac)
		}
		path := "total"
		if slices.Contains(m.Spec.Search, col) {
			path = "controlled"
		}
		rep.Rows = append(rep.Rows, Row{Placebo, path, col, "placebo_p", p})
		above := 0
		for _, x := range plac {
			if x < real {
				above++
			}
		}
		label := effectLabel(col, path)
		lines = append(lines, fmt.Sprintf("%s %s above %d of %d placebos (p = %s)", label, num(real), above, len(plac), fmtP(p)))
		if p <= PlaceboAlpha {
			strong = append(strong, label)
		} else {
			weak = append(weak, fmt.Sprintf("%s (p = %s)", label, fmtP(p)))
		}
	}
	switch {
	case len(weak) > 0:
		v.OK = false
		v.Headline = "not distinguishable from placebo refits: " + strings.Join(weak, ", ")
	case fewest < MinPlacebos:
		v.OK = false
		v.Headline = fmt.Sprintf("no claim: %s per channel cannot reach p = %.2f (at least %d needed)", plural(fewest, "placebo"), PlaceboAlpha, MinPlacebos)
	default:
		v.Headline = "every effect stands out from its placebo refits"
	}
	v.Details = append(v.Details, "Effects on the real spend against the same effect refitted with the spend moved circularly in time by at least a quarter (posterior means): "+strings.Join(lines, "; ")+".")
	if len(weak) > 0 && len(strong) > 0 {
		v.Details = append(v.Details, "Standing out (p <= 0.05): "+strings.Join(strong, ", ")+".")
	}
	v.Details = append(v.Details, "p = (1 + number of placebos at or above the real effect) / (1 + placebos); with no real effect it is roughly uniform, so a large p says the data cannot tell this effect from one the spend's timing could not have caused.")
	skippedNotes(&v, m, "placebo ")
	rep.Verdicts = append(rep.Verdicts, v)
}
