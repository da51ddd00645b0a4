package mediation

import (
	"math"

	"spillway/funnel/fitfolder"
	"spillway/funnel/forward"
)

// Measures of returns.csv.
const (
	// ReturnOnSpend is the channel's total incremental outcome over a
	// window per unit of its spend in the window, per draw.
	ReturnOnSpend = "return_on_spend"
	// CostPerIncremental is spend per unit of total incremental outcome.
	CostPerIncremental = "cost_per_incremental"
	// MarginalReturn is the extra steady weekly outcome per extra unit of
	// weekly spend at the current weekly spend (the mean over the data),
	// through both paths.
	MarginalReturn = "marginal_return"
)

// marginalStep is the relative step of the central difference of the
// marginal return: the slope of the steady response between 0.99 and 1.01
// times the current weekly spend.
const marginalStep = 0.01

// Returns computes returns.csv from the split r of in: for every upper
// channel and window of r with spend, the return on spend (total effect /
// spend, per draw) and the cost per incremental outcome; and for every
// upper channel the marginal return at its current weekly spend, per draw,
// from the forward simulator's steady state (window "all").
//
// The cost per incremental outcome is spend / total, a decreasing function
// of the total: its median and 90% interval are spend over the total's
// median and 95% and 5% quantiles, and its mean is spend over the total's
// mean (a ratio of the means; the mean of the per-draw ratio is unstable
// when draws of the total come near zero). An interval end is NaN when
// the total's quantile is not positive.
func Returns(in *Inputs, r *Result) ([]fitfolder.Return, error) {
	marg, err := marginalReturns(in)
	if err != nil {
		return nil, err
	}
	return append(spendReturns(r), marg...), nil
}

// spendReturns returns the return on spend and cost per incremental
// outcome rows of r.
func spendReturns(r *Result) []fitfolder.Return {
	var out []fitfolder.Return
	for _, e := range r.Effects {
		if e.Path != "total" || !(e.Spend > 0) {
			continue
		}
		ros := make([]float64, len(e.Draws))
		for i, v := range e.Draws {
			ros[i] = v / e.Spend
		}
		s := Summarise(ros)
		out = append(out, fitfolder.Return{Channel: e.Channel, Window: e.Window, Measure: ReturnOnSpend,
			Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95})
		inv := func(v float64) float64 {
			if v > 0 {
				return 1 / v
			}
			return math.NaN()
		}
		out = append(out, fitfolder.Return{Channel: e.Channel, Window: e.Window, Measure: CostPerIncremental,
			Mean: inv(s.Mean), Q05: inv(s.Q95), Q50: inv(s.Q50), Q95: inv(s.Q05)})
	}
	return out
}

// marginalReturns returns the marginal return rows: per draw, the central
// difference of the channel's steady weekly outcome (both paths) around
// its mean weekly spend, per unit of raw spend.
func marginalReturns(in *Inputs) ([]fitfolder.Return, error) {
	sc := in.Data
	sim, err := forward.New(sc, in.Demand, in.Outcome)
	if err != nil {
		return nil, err
	}
	nd := len(in.DemandDraws.Rows)
	var out []fitfolder.Return
	for c, col := range sc.UpperNames {
		total := 0.0
		for _, v := range sc.RawUpper[c] {
			total += v
		}
		cur := total / float64(sc.T)
		if !(cur > 0) {
			continue
		}
		lo, hi := (1-marginalStep)*cur/sc.UpperScale[c], (1+marginalStep)*cur/sc.UpperScale[c]
		m := make([]float64, nd)
		for d := range m {
			dr := sim.Draw(in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d])
			v1, d1 := sim.Steady(dr, c, lo)
			v2, d2 := sim.Steady(dr, c, hi)
			m[d] = ((v2 + d2) - (v1 + d1)) / (2 * marginalStep * cur)
		}
		s := Summarise(m)
		out = append(out, fitfolder.Return{Channel: col, Window: "all", Measure: MarginalReturn,
			Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95})
	}
	return out, nil
}
