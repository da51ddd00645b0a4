package validate

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"spillway/funnel/stat"
	"spillway/funnel/validate/score"
)

// Finding is the outcome of a comparison or a coverage check.
type Finding int

const (
	// Undecided: too little evidence to judge.
	Undecided Finding = iota
	// Same: no difference the evidence can show.
	Same
	// Better: the model's forecasts score lower (or its intervals cover
	// more than nominal: too wide).
	Better
	// Worse: the model's forecasts score higher (or its intervals cover
	// less than nominal: too narrow).
	Worse
)

// EffectiveCount returns n (1 - r) / (1 + r) for the n values x, with r
// the lag-1 autocorrelation over neighbours of the same group (group[i] ==
// group[i-1]), clipped to [0, 0.95]: the number of independent values
// carrying the same information about a mean as x under an AR(1)
// dependence (common practice; the variance of a mean of an AR(1) series
// is about sigma^2 (1 + r) / (n (1 - r))). Constant x gives n.
func EffectiveCount(x []float64, group []int) float64 {
	n := float64(len(x))
	if len(x) < 2 {
		return n
	}
	mean, _ := stat.MeanSD(x)
	var c0, c1 float64
	for i, v := range x {
		c0 += (v - mean) * (v - mean)
		if i > 0 && group[i] == group[i-1] {
			c1 += (v - mean) * (x[i-1] - mean)
		}
	}
	if c0 == 0 {
		return n
	}
	r := math.Min(math.Max(c1/c0, 0), 0.95)
	return n * (1 - r) / (1 + r)
}

// Comparison is a paired comparison of forecast scores: the mean of the
// weekly differences d (model - other), with a 95% interval from the
// Student t distribution on the effective number of weeks (Diebold and
// Mariano 1995, with the AR(1) effective count in place of their
// long-run variance; from memory).
type Comparison struct {
	Mean, Lo, Hi float64
	NEff         float64
}

// Compare compares the weekly score differences d grouped by origin.
func Compare(d []float64, group []int) Comparison {
	c := Comparison{Mean: math.NaN(), Lo: math.NaN(), Hi: math.NaN(), NEff: EffectiveCount(d, group)}
	if len(d) < 2 || c.NEff < 2 {
		if len(d) > 0 {
			c.Mean, _ = stat.MeanSD(d)
		}
		return c
	}
	mean, sd := stat.MeanSD(d)
	se := sd / math.Sqrt(c.NEff)
	tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: c.NEff - 1}.Quantile(0.975)
	c.Mean, c.Lo, c.Hi = mean, mean-tq*se, mean+tq*se
	return c
}

// Verdict says whether the model scored lower (Better), higher (Worse),
// neither (Same) or could not be judged (Undecided).
func (c Comparison) Verdict() Finding {
	switch {
	case math.IsNaN(c.Lo):
		return Undecided
	case c.Hi < 0:
		return Better
	case c.Lo > 0:
		return Worse
	}
	return Same
}

// String describes the difference and its interval.
func (c Comparison) String() string {
	if math.IsNaN(c.Lo) {
		return "too few weeks to compare"
	}
	return fmt.Sprintf("difference %s, 95%% interval %s to %s over %.0f effective weeks", num(c.Mean), num(c.Lo), num(c.Hi), c.NEff)
}

// Coverage is a forecast interval's coverage judged against its nominal
// level over the effective number of weeks.
type Coverage struct {
	Rate, Nominal float64
	NEff          float64
	// Lo and Hi bound the central 95% binomial range of the rate over
	// round(NEff) independent weeks.
	Lo, Hi float64
}

// CoverageOf judges the misses (1 outside the interval, 0 inside) of
// intervals of level nominal, grouped by origin.
func CoverageOf(miss []float64, group []int, nominal float64) Coverage {
	c := Coverage{Nominal: nominal, NEff: EffectiveCount(miss, group), Rate: math.NaN(), Lo: math.NaN(), Hi: math.NaN()}
	if len(miss) == 0 {
		return c
	}
	m, _ := stat.MeanSD(miss)
	c.Rate = 1 - m
	if n := int(math.Round(c.NEff)); n >= 1 {
		lo, hi := score.BinomialRange(n, nominal, 0.95)
		c.Lo, c.Hi = float64(lo)/float64(n), float64(hi)/float64(n)
	}
	return c
}

// Verdict is Worse for coverage below the range (too narrow), Better for
// above (too wide), Same inside, Undecided when the effective weeks are
// fewer than MinReplicates (inside the range but too few to vouch).
func (c Coverage) Verdict() Finding {
	switch {
	case math.IsNaN(c.Lo):
		return Undecided
	case c.Rate < c.Lo-1e-12:
		return Worse
	case c.Rate > c.Hi+1e-12:
		return Better
	case c.NEff < MinReplicates:
		return Undecided
	}
	return Same
}

// String gives the rate, its binomial range and the effective weeks.
func (c Coverage) String() string {
	if math.IsNaN(c.Lo) {
		return pct(c.Rate)
	}
	return fmt.Sprintf("%s (%s-%s expected by chance over %.0f effective weeks)", pct(c.Rate), pct(c.Lo), pct(c.Hi), c.NEff)
}
