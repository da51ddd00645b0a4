package pipeline

import (
	"context"
	"math/rand/v2"
	"testing"

	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/funnel/window"
	"spillway/mediation"
)

// supportCase simulates a scenario and optionally changes the data.
type supportCase struct {
	name      string
	scenario  string
	params    func(*scenario.Params) // changes the truth before simulating
	data      func(*model.Scaled)    // changes the scaled data after
	supported bool                   // what the verdict must say
	check     func(*testing.T, map[mediation.Key]mediation.Support)
}

// TestSupport checks the support verdict where the answer is known: media
// terms that drive the outcome (the demo and the recovery scenarios) are
// supported; an outcome of pure noise (mean 2,080, sd 300, as a user tried
// it) and an outcome that does not depend on spend at all (the demo with
// the outcome stage's media coefficients and gamma set to 0) are not. On
// direct-audio, audio's via-search path (truly 0) must come out
// negligible. Short chains (2 x 300 + 300): the check compares predictive
// densities that differ by tens between the cases, far more than the
// Monte Carlo error of so few draws.
func TestSupport(t *testing.T) {
	if testing.Short() {
		t.Skip("fits five scenarios")
	}
	noise := func(sc *model.Scaled) {
		rng := rand.New(rand.NewPCG(10, 11))
		var m float64
		for i := range sc.Outcome {
			sc.Outcome[i] = 2080 + 300*rng.NormFloat64()
			m += sc.Outcome[i]
		}
		m /= float64(len(sc.Outcome))
		for i := range sc.Outcome {
			sc.Outcome[i] /= m
		}
		sc.OutcomeScale = m
	}
	null := func(p *scenario.Params) {
		p.Gamma = 0
		p.Search.Coef = 0
		p.Direct = append([]scenario.Channel(nil), p.Direct...)
		for i := range p.Direct {
			p.Direct[i].Coef = 0
		}
	}
	cases := []supportCase{
		{name: "demo", scenario: "demo", supported: true},
		{name: "slow-burn", scenario: "slow-burn", supported: true},
		{name: "direct-audio", scenario: "direct-audio", supported: true, check: func(t *testing.T, sup map[mediation.Key]mediation.Support) {
			s := sup[mediation.Key{Channel: "audio_spend", Path: "via_search", Window: "all"}]
			if s.PNegligible < mediation.NegligibleProb && (s.PNegligible < 0.05 || s.BayesFactor(600, mediation.PriorDraws) < 1) {
				t.Errorf("direct-audio: audio's via-search path (truly 0) has P(negligible) %.3f (prior %.3f): neither negligible nor indistinguishable from zero", s.PNegligible, s.PriorPNegligible)
			}
		}},
		{name: "pure noise", scenario: "demo", data: noise},
		{name: "outcome without media", scenario: "demo", params: null},
	}
	for _, c := range cases {
		sc, err := scenario.Named(c.scenario, 11, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		if c.params != nil {
			c.params(&sc.P)
		}
		res, err := sc.Simulate()
		if err != nil {
			t.Fatal(err)
		}
		scaled := model.Scale(res.Data.National(), res.Data.Spec)
		if c.data != nil {
			c.data(scaled)
		}
		set := mcmc.Settings{Chains: 2, Warmup: 300, Draws: 300, Seed: 5}
		fit, err := Fit(context.Background(), scaled, model.Options{}, set, nil)
		if err != nil {
			t.Fatal(err)
		}
		sup, err := CheckSupport(context.Background(), fit, model.Options{}, set)
		if err != nil {
			t.Fatal(err)
		}
		in := fit.Inputs()
		wins := window.Quarters(scaled.Weeks)[:1]
		post, err := mediation.Split(in, wins)
		if err != nil {
			t.Fatal(err)
		}
		pin, err := mediation.PriorInputs(in, mediation.PriorDraws, 5)
		if err != nil {
			t.Fatal(err)
		}
		prior, err := mediation.Split(pin, wins)
		if err != nil {
			t.Fatal(err)
		}
		effs := mediation.Supports(post, prior, scaled, wins, mediation.DefaultNegligible)
		t.Logf("%s: elpd difference %.1f ± %.1f (supported %v)", c.name, sup.Diff, sup.SE, sup.Supported())
		for _, e := range append(post.Effects, post.Borrowed...) {
			s, ok := effs[mediation.Key{Channel: e.Channel, Path: e.Path, Window: e.Window}]
			if ok && e.Path != "mediated_share" && e.Path != "borrowed_share" {
				m := mediation.Summarise(e.Draws)
				t.Logf("  %-12s %-10s mean %8.0f [%8.0f, %8.0f] prior [%8.0f, %8.0f] contraction %.2f P(negligible) %.3f prior %.3f BF %.2f",
					e.Channel, e.Path, m.Mean, m.Q05, m.Q95, s.PriorQ05, s.PriorQ95, s.Contraction, s.PNegligible, s.PriorPNegligible, s.BayesFactor(len(e.Draws), mediation.PriorDraws))
			}
		}
		for _, n := range mediation.SupportNotes(post, effs, "all", mediation.DefaultNegligible) {
			t.Logf("  note: %s", n)
		}
		if sup.Supported() != c.supported {
			t.Errorf("%s: supported %v, want %v: %s", c.name, sup.Supported(), c.supported, sup.Text())
		}
		if c.check != nil {
			c.check(t, effs)
		}
	}
}
