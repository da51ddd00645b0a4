package model

import (
	"fmt"
	"math"
)

// Reach and frequency. A channel given as reach r[t] (people reached) and
// average frequency f[t] (exposures per person reached) runs on the input
//
//	x~[t] = r~[t] g(f[t]),  g(f) = f^Sf / (f^Sf + Kf^Sf)
//
// r~ the reach scaled by its mean over weeks with reach, g a Hill curve in
// frequency with its own half-saturation Kf (exposures) and shape Sf,
// learned: the response per person reached rises with the exposures they
// had and levels off after a few (effective frequency: Krugman 1972, "Why
// three exposures may be enough", Journal of Advertising Research 12(6);
// Naples 1979, "Effective Frequency", Association of National
// Advertisers; both cited from memory), while reach enters at full weight,
// saturating only through the channel's own adstock and Hill curve in x~.
// So more frequency
// saturates sooner than more reach whenever Kf is a few exposures, and the
// data say how many. Each stage learns its own Kf and Sf.
//
// What-ifs (the one cost-per-unit rule, Scaled.CostPerUnit) buy reach: a
// scaled counterfactual scales each week's reach at that week's own
// frequency; weeks after the data (plans, curves) have the frequency of the
// latest RecentWeeks weeks with spend (Scaled.FreqRecent).

// Default priors of the frequency curve: Kf ~ Gamma(shape 3, rate 1), mean
// 3 exposures, 90% between 0.8 and 6.3; Sf ~ Gamma(shape 4, rate 2) as the
// channels' S.
var (
	PriorFreqHalf  = Prior{Gamma, 3, 1}
	PriorFreqShape = PriorShape
)

// Frequency is the frequency side of a channel given as reach and
// frequency: F the average frequency of each week of the data, After the
// frequency weeks after the data are taken to have, and Params its Hill
// curve's Kf and Sf.
type Frequency struct {
	F      []float64
	After  float64
	Params [2]Param
}

// freqGain returns g(f) = f^s/(f^s + k^s) and its log-derivatives in k
// and s (0, 0, 0 at f = 0).
func freqGain(f, k, s float64) (g, dk, ds float64) {
	if f <= 0 {
		return 0, 0, 0
	}
	l := math.Log(f / k)
	g = 1 / (1 + math.Exp(-s*l))
	return g, -s * (1 - g) / k, (1 - g) * l
}

// withFrequency gives each upper-funnel channel of st that sc holds as
// reach and frequency its Frequency, with parameters named after coef.
func withFrequency(st *Stage, sc *Scaled, coef string) error {
	for c, col := range sc.UpperNames {
		if sc.Freq == nil || sc.Freq[c] == nil {
			continue
		}
		ch := &st.Channels[st.ChannelIndex(col)]
		if ch.Linear || ch.Drift != nil {
			return fmt.Errorf("model: channel %s is given as reach and frequency and is linear or drifts; reach and frequency need the saturating channel", col)
		}
		ch.Freq = &Frequency{F: sc.Freq[c], After: sc.FreqRecent[c], Params: [2]Param{
			{Name: "Kfreq_" + coef + "[" + col + "]", Prior: PriorFreqHalf, Default: PositiveReal},
			{Name: "Sfreq_" + coef + "[" + col + "]", Prior: PriorFreqShape, Default: PositiveReal}}}
	}
	return nil
}

// freqAt returns the frequency of week t of a plan from the data's first
// week: the data's own, then After.
func (m Media) freqAt(t int) float64 {
	if t < len(m.Freq) {
		return m.Freq[t]
	}
	return m.FreqAfter
}
