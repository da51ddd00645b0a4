package scenario

import (
	"math"
	"math/rand/v2"

	"spillway/funnel/data"
	"spillway/funnel/model"
)

// ExposureColumn is the video exposure column of the exposure scenarios, in
// thousands of impressions.
const ExposureColumn = "video_kimpressions"

// Exposure makes video's impressions, not its spend, what the audience
// sees: the true response runs on impressions, bought at a cost per
// thousand that rises by CostRise over the period (linearly, with weekly
// noise of sd CostNoise on the log scale), so the same spend buys less
// exposure at the end than at the start. With Break > 0, the impressions
// are reported a new way from week Break on: BreakScale times the old
// way's units (a vendor that counts more generously). With ErrorSD > 0
// each week's reported impressions are off by a factor exp(ErrorSD e[t]),
// e[t] standard normal (a survey-based or modelled count).
type Exposure struct {
	CostRise, CostNoise float64
	Break               int
	BreakScale          float64
	ErrorSD             float64
	// RF, if true, reports video as weekly reach (ReachColumn, people) and
	// average frequency (FrequencyColumn) instead of impressions; the true
	// response runs on reach times the Hill curve g(f; Kf, Sf) in
	// frequency (funnel/model reach.go). Frequency rises with the week's
	// spend, as heavier weeks buy repeat exposures.
	RF     bool
	Kf, Sf float64
	// errs holds e[t] once simulated: the true latent errors.
	errs []float64
}

// ReachColumn and FrequencyColumn are the video reach and average
// frequency columns of the reach-and-frequency scenario.
const (
	ReachColumn     = "video_reach"
	FrequencyColumn = "video_frequency"
)

// reachFrequency splits video's impressions (thousands) into reach and
// average frequency and returns them with the model's input: reach over
// its mean times g(f).
func (e *Exposure) reachFrequency(rng *rand.Rand, spend, imp []float64) (reach, freq, input []float64) {
	T := len(spend)
	reach, freq = make([]float64, T), make([]float64, T)
	top := 0.0
	for _, s := range spend {
		top = math.Max(top, s)
	}
	for t, s := range spend {
		if s <= 0 {
			continue
		}
		f := 1.2 + 4.5*math.Pow(s/top, 1.5)*math.Exp(0.25*rng.NormFloat64())
		freq[t] = math.Round(100*f) / 100
		reach[t] = math.Round(1000 * imp[t] / freq[t])
	}
	scale := model.SpendScale(reach)
	input = make([]float64, T)
	for t, r := range reach {
		if r > 0 {
			g := math.Pow(freq[t], e.Sf) / (math.Pow(freq[t], e.Sf) + math.Pow(e.Kf, e.Sf))
			input[t] = r / scale * g
		}
	}
	return reach, freq, input
}

// CostPerThousand is the exposure scenarios' video cost per thousand
// impressions in the first week (currency units).
const CostPerThousand = 12.0

// Roles returns the role declaration of the scenario's data: Spec, with the
// region columns for a regional scenario, and with video's impressions as
// its exposure (and its break) for an exposure scenario.
func (s *Scenario) Roles() data.Spec {
	spec := Spec
	if s.Regions > 0 {
		spec = RegionSpec
	}
	if e := s.Exposure; e != nil {
		m := data.Exposure{Spend: spec.Upper[0], Column: ExposureColumn, Error: e.ErrorSD}
		if e.RF {
			m.Column, m.Frequency = ReachColumn, FrequencyColumn
		}
		if e.Break > 0 {
			m.Break = s.Start.AddDate(0, 0, 7*e.Break).Format(data.DateLayout)
		}
		spec.Exposure = []data.Exposure{m}
	}
	return spec
}

// impressions returns the reported impressions that video spend bought
// and the model's input they give, in the newest measurement's units over
// the mean reported impressions (weeks before a break times BreakScale):
// what the fitted model sees at the true log factor.
func (e *Exposure) impressions(rng *rand.Rand, spend []float64) (shown, input []float64) {
	T := len(spend)
	shown = make([]float64, T)
	truth := make([]float64, T)
	e.errs = make([]float64, T)
	for t, s := range spend {
		cpm := CostPerThousand * (1 + e.CostRise*float64(t)/float64(T-1)) * math.Exp(e.CostNoise*rng.NormFloat64())
		if s <= 0 {
			continue
		}
		truth[t] = s / cpm // thousands of impressions
		if e.Break > 0 {
			truth[t] *= e.BreakScale // in the newest measurement's units
		}
		shown[t] = truth[t]
		if e.Break > 0 && t < e.Break {
			shown[t] /= e.BreakScale
		}
		if e.ErrorSD > 0 {
			e.errs[t] = rng.NormFloat64()
			shown[t] *= math.Exp(e.ErrorSD * e.errs[t])
		}
		shown[t] = math.Round(shown[t])
	}
	// the model divides the reported impressions by their mean
	return shown, divide(truth, model.SpendScale(shown))
}

// latent returns the true latent error of week t (0 without errors).
func (e *Exposure) latent(t int) float64 {
	if e == nil || e.errs == nil {
		return 0
	}
	return e.errs[t]
}

// logBreak returns the true log factor of the break (0 when none).
func (e *Exposure) logBreak() float64 {
	if e == nil || e.Break == 0 {
		return 0
	}
	return math.Log(e.BreakScale)
}
