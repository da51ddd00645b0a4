package pipeline

import (
	"context"
	"fmt"
	"sort"
	"testing"

	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/funnel/window"
	"spillway/mediation"
)

// coverage checks one true value against the posterior draws: inside the
// central 90% and 99% intervals. A truth on the boundary of the support (a
// channel with no mediation at all has via-search effect exactly 0, and the
// posterior of a positive coefficient never reaches 0) is judged against the
// one-sided intervals [0, q90] and [0, q99] instead.
func coverage(draws []float64, truth float64) (in90, in99 bool) {
	s := append([]float64(nil), draws...)
	sort.Float64s(s)
	q := func(p float64) float64 { return s[int(p*float64(len(s)-1))] }
	if truth == 0 && s[0] >= 0 {
		return truth <= q(0.90), truth <= q(0.99)
	}
	return q(0.05) <= truth && truth <= q(0.95), q(0.005) <= truth && truth <= q(0.995)
}

// TestRecovery fits the model to data simulated from it with known
// parameters and counts how many true effects fall inside their credible
// intervals. Scenarios differ in carryover, saturation and mediated share
// (demo about 50% and 40%; slow-burn mostly mediated video; direct-audio
// with no mediation for audio and about 7% for video). Chains of 4 x
// (500 + 500) keep three scenarios in the suite's time; the checks are on
// 90% and 99% intervals, wide beside their Monte Carlo error.
func TestRecovery(t *testing.T) {
	if testing.Short() {
		t.Skip("fits three scenarios")
	}
	total, in90, in99 := 0, 0, 0
	var misses []string
	for _, name := range []string{"demo", "slow-burn", "direct-audio"} {
		sc, err := scenario.Named(name, 11, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		res, err := sc.Simulate()
		if err != nil {
			t.Fatal(err)
		}
		truth, err := sc.Truth(res)
		if err != nil {
			t.Fatal(err)
		}
		scaled := model.Scale(res.Data.National(), res.Data.Spec)
		fit, err := Fit(context.Background(), scaled, model.Options{}, mcmc.Settings{Seed: 3, Warmup: 500, Draws: 500}, nil)
		if err != nil {
			t.Fatal(err)
		}
		for k, f := range fit.Fits {
			v := mcmc.Judge(f, mcmc.Summarize(f))
			if !v.Trustworthy {
				t.Logf("%s %s: %v", name, StageNames[k], v.Reasons)
			}
		}
		split, err := mediation.Split(fit.Inputs(), window.Quarters(scaled.Weeks)[:1])
		if err != nil {
			t.Fatal(err)
		}
		want := map[string]float64{}
		for _, e := range append(truth.Effects, truth.Borrowed...) {
			if e.Window == "all" {
				want[e.Channel+"/"+e.Path] = e.Value
			}
		}
		for _, e := range append(split.Effects, split.Borrowed...) {
			if e.Path == "mediated_share" || e.Path == "apparent" || e.Path == "controlled" || e.Path == "naive" {
				continue
			}
			tv, ok := want[e.Channel+"/"+e.Path]
			if !ok {
				t.Fatalf("%s: no truth for %s %s", name, e.Channel, e.Path)
			}
			a, b := coverage(e.Draws, tv)
			total++
			if a {
				in90++
			}
			if b {
				in99++
			}
			s := mediation.Summarise(e.Draws)
			line := fmt.Sprintf("%s %s %s: truth %.4g, mean %.4g [%.4g, %.4g] in90=%v", name, e.Channel, e.Path, tv, s.Mean, s.Q05, s.Q95, a)
			t.Log(line)
			if !b {
				misses = append(misses, line)
			}
		}
	}
	t.Logf("recovery: %d of %d true effects inside their 90%% intervals, %d inside their 99%% intervals", in90, total, in99)
	if float64(in90) < 0.85*float64(total) {
		t.Errorf("only %d of %d true effects inside their 90%% intervals; want at least 85%%", in90, total)
	}
	if in99 != total {
		t.Errorf("true effects outside their 99%% intervals:\n%v", misses)
	}
}
