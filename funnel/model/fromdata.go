package model

import (
	"math"

	"spillway/funnel/data"
)

// Scale converts a national series to model units. Column names come from
// spec. It does not validate: the loader has already rejected all-zero spend
// and constant controls.
func Scale(s data.Series, spec data.Spec) *Scaled {
	T := len(s.Weeks)
	sc := &Scaled{T: T, Weeks: s.Weeks,
		UpperNames: spec.Upper, SearchNames: spec.Search, ControlNames: spec.Controls,
		RawUpper: s.Upper, RawSearch: s.Search}
	sc.Tau = make([]float64, T)
	for i := range sc.Tau {
		if T > 1 {
			sc.Tau[i] = float64(i) / float64(T-1)
		}
	}
	for k := range sc.Season {
		sc.Season[k] = make([]float64, T)
	}
	for i := 0; i < T; i++ {
		t := float64(i + 1)
		w := 2 * math.Pi * t / SeasonPeriod
		sc.Season[0][i] = math.Cos(w)
		sc.Season[1][i] = math.Cos(2 * w)
		sc.Season[2][i] = math.Sin(w)
		sc.Season[3][i] = math.Sin(2 * w)
	}
	sc.Upper, sc.UpperScale = scaleSpend(s.Upper)
	sc.Search, sc.SearchScale = scaleSpend(s.Search)
	sc.QueriesScale = mean(s.Queries)
	sc.Queries = scaled(s.Queries, sc.QueriesScale)
	sc.OutcomeScale = mean(s.Outcome)
	sc.Outcome = scaled(s.Outcome, sc.OutcomeScale)
	for _, z := range s.Controls {
		m, sd := meanSD(z)
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
