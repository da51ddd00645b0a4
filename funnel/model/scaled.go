package model

import (
	"time"
)

// SeasonPeriod is the seasonal period in weeks (365.25/7, rounded as in DESIGN.md).
const SeasonPeriod = 52.18

// Scaled is one national series in model units (DESIGN.md "Scaling").
type Scaled struct {
	T     int
	Weeks []time.Time
	// Tau is (t-1)/(T-1) for t = 1..T.
	Tau []float64
	// Season holds cos(2 pi t/P), cos(4 pi t/P), sin(2 pi t/P), sin(4 pi t/P)
	// for t = 1..T: the regressors of c[1], c[2], d[1], d[2].
	Season [4][]float64
	// Upper and Search are spend divided by its mean over weeks with spend > 0,
	// [channel][week]; for an upper-funnel channel with an exposure column,
	// Upper is the exposure divided by its mean over weeks with exposure
	// > 0 (exposure.go).
	Upper, Search [][]float64
	// Queries and Outcome are divided by their means.
	Queries, Outcome []float64
	// Controls are standardised, [control][week].
	Controls [][]float64

	UpperNames, SearchNames, ControlNames []string
	// UpperScale and SearchScale are the divisors: the mean raw spend per
	// week over weeks with spend > 0. For a channel with an exposure column
	// UpperScale is the spend that buys one scaled unit of exposure at the
	// latest cost per unit (CostPerUnit, RecentWeeks), so that spend / UpperScale[c] is
	// still the channel's input in every what-if.
	UpperScale, SearchScale []float64
	// RawExposure holds each upper-funnel channel's raw exposure (nil for a
	// channel without an exposure column; nil when none has one), and
	// ExposureScale its divisor, the mean over weeks with exposure > 0.
	RawExposure   [][]float64
	ExposureScale []float64
	// Breaks holds each upper-funnel channel's measurement break week
	// (0 when none; nil when no channel has one).
	Breaks []int
	// Errors holds each upper-funnel channel's exposure error sd (0 when
	// taken as measured; nil when no channel has one).
	Errors []float64
	// Freq holds the average frequency of each upper-funnel channel given
	// as reach and frequency (Upper then holds its scaled reach; nil rows
	// otherwise, nil when none), and FreqRecent the frequency of its latest
	// RecentWeeks weeks with spend (reach-weighted), which weeks after the
	// data are taken to have.
	Freq       [][]float64
	FreqRecent []float64
	// QueriesScale and OutcomeScale are mean(q) and mean(y), in raw units.
	QueriesScale, OutcomeScale float64
	ControlMean, ControlSD     []float64
	// RawUpper and RawSearch keep the raw spend for per-unit figures.
	RawUpper, RawSearch [][]float64
	// Mask, if not nil, marks weeks left out of the likelihood (held out for
	// validation); transforms still run through them.
	Mask []bool
}

// SpendScale returns the mean of x over the weeks with x > 0 (0 if none).
func SpendScale(x []float64) float64 {
	sum, n := 0.0, 0
	for _, v := range x {
		if v > 0 {
			sum += v
			n++
		}
	}
	if n == 0 {
		return 0
	}
	return sum / float64(n)
}

func scaleSpend(cols [][]float64) ([][]float64, []float64) {
	var out [][]float64
	var div []float64
	for _, x := range cols {
		d := SpendScale(x)
		out = append(out, scaled(x, d))
		div = append(div, d)
	}
	return out, div
}

func scaled(x []float64, d float64) []float64 {
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = v / d
	}
	return out
}
