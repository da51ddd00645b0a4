package model

import (
	"spillway/funnel/data"
	"spillway/funnel/stat"
)

// Scale converts a national series to model units. Column names come from
// spec. It does not validate: the loader has already rejected all-zero spend
// and constant controls.
func Scale(s data.Series, spec data.Spec) *Scaled {
	return ScaleTrain(s, spec, nil)
}

// ScaleTrain is Scale with the scaling constants (spend divisors, the means
// of queries and outcome, control means and sds) computed over the training
// weeks only, train[t] true, and Mask set to the other weeks, so the stages
// leave them out of the likelihood while adstock still runs through them.
// tau is (t-1)/(L-1) with L-1 the index of the last training week, so tau
// is 1 there (and above 1 in weeks forecast beyond it). A nil train means
// every week (Scale).
func ScaleTrain(s data.Series, spec data.Spec, train []bool) *Scaled {
	T := len(s.Weeks)
	in := func(i int) bool { return train == nil || train[i] }
	sc := &Scaled{T: T, Weeks: s.Weeks,
		UpperNames: spec.Upper, SearchNames: spec.Search, ControlNames: spec.Controls,
		RawUpper: s.Upper, RawSearch: s.Search}
	last := T - 1
	if train != nil {
		sc.Mask = make([]bool, T)
		for i := range train {
			sc.Mask[i] = !train[i]
			if train[i] {
				last = i
			}
		}
	}
	sc.Tau = make([]float64, T)
	for i := range sc.Tau {
		if last > 0 {
			sc.Tau[i] = float64(i) / float64(last)
		}
	}
	for k := range sc.Season {
		sc.Season[k] = make([]float64, T)
	}
	for i := 0; i < T; i++ {
		for k, v := range SeasonAt(i) {
			sc.Season[k][i] = v
		}
	}
	pick := func(x []float64) []float64 {
		if train == nil {
			return x
		}
		var out []float64
		for i, v := range x {
			if in(i) {
				out = append(out, v)
			}
		}
		return out
	}
	for _, x := range s.Upper {
		d := SpendScale(pick(x))
		sc.Upper, sc.UpperScale = append(sc.Upper, scaled(x, d)), append(sc.UpperScale, d)
	}
	if len(spec.Exposure) > 0 && s.Exposure != nil {
		sc.useExposure(s, spec, in)
	}
	for _, x := range s.Search {
		d := SpendScale(pick(x))
		sc.Search, sc.SearchScale = append(sc.Search, scaled(x, d)), append(sc.SearchScale, d)
	}
	sc.QueriesScale = stat.Mean(pick(s.Queries))
	sc.Queries = scaled(s.Queries, sc.QueriesScale)
	sc.OutcomeScale = stat.Mean(pick(s.Outcome))
	sc.Outcome = scaled(s.Outcome, sc.OutcomeScale)
	for _, z := range s.Controls {
		m, sd := stat.MeanSD(pick(z))
		out := make([]float64, T)
		for i, v := range z {
			out[i] = (v - m) / sd
		}
		sc.Controls = append(sc.Controls, out)
		sc.ControlMean = append(sc.ControlMean, m)
		sc.ControlSD = append(sc.ControlSD, sd)
	}
	return sc
}
