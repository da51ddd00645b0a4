package validate

import (
	"math/rand/v2"
	"strings"
	"testing"

	"spillway/funnel/scenario"
)

// TestHoldoutPureNoise replaces the demo's outcome with independent normal
// noise (mean 2,080, sd 300), as a user did, and runs the holdout check
// (2 origins of 8 weeks, short refits). The outcome's forecasts must not
// be said to improve on the model without media, nor the verdict claim
// that forecasts beat the baselines. Before this check existed, 'validate'
// said the forecasts "beat the seasonal baseline".
func TestHoldoutPureNoise(t *testing.T) {
	if testing.Short() {
		t.Skip("holdout refits; skipped with -short")
	}
	sc, err := scenario.Named("demo", 1, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := sc.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	s := res.Data.National()
	rng := rand.New(rand.NewPCG(3, 4))
	noise := make([]float64, len(s.Outcome))
	for i := range noise {
		noise[i] = 2080 + 300*rng.NormFloat64()
	}
	s.Outcome = noise
	sw, err := New(Input{Series: s, Spec: res.Data.Spec, Tool: "test"},
		Settings{Checks: []string{Holdout}, Origins: 2, Horizon: 8, Chains: 2, Warmup: 150, Draws: 150, Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	rep := runSweep(t, sw)
	v := rep.Verdicts[0]
	t.Log(v.String())
	if v.OK || strings.Contains(v.Headline, "media improve the outcome") || strings.HasPrefix(v.Headline, "forecasts beat") {
		t.Errorf("pure-noise outcome: %q", v.Headline)
	}
	if !strings.Contains(v.Headline, "outcome forecast beyond the queries") {
		t.Errorf("pure-noise outcome: the verdict should say media do not improve the outcome forecast: %q", v.Headline)
	}
}
