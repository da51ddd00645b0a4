package pipeline

import (
	"context"
	"fmt"
	"reflect"
	"testing"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/data"
	"spillway/funnel/lifts"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
)

// TestChainsAssembled fits the demo with drift on video and lift tests of
// the outcome and the queries (so demand and outcome are one joint target),
// whole and chain by chain (mcmc.Settings.Only), puts the chains together
// with Assemble, and requires the same draws in every stage, baseline
// included, and the same lift checks and weekly multipliers: what the
// merge of a sharded fit rests on. Short chains: the plumbing, not the
// posterior (a shallow tree keeps it quick).
func TestChainsAssembled(t *testing.T) {
	if testing.Short() {
		t.Skip("three short fits of the demo; skipped with -short")
	}
	ds, err := data.Load("../../testdata/demo/data.csv", scenario.Spec)
	if err != nil {
		t.Fatal(err)
	}
	sc := model.Scale(ds.National(), ds.Spec)
	o := model.Options{Drift: map[string]bool{"video_spend": true}}
	tests := []lifts.Test{
		{Channel: "video_spend", Metric: model.LiftOutcome, Start: ds.Weeks[14], End: ds.Weeks[17], From: 14, To: 17, Estimate: 800, SE: 150},
		{Channel: "audio_spend", Metric: model.LiftQueries, Start: ds.Weeks[60], End: ds.Weeks[63], From: 60, To: 63, Estimate: 900, SE: 300},
	}
	set := mcmc.Settings{Chains: 2, Warmup: 40, Draws: 20, Seed: 11, MaxTreeDepth: 5}
	ctx := context.Background()
	whole, err := FitLifts(ctx, sc, o, tests, set, nil)
	if err != nil {
		t.Fatal(err)
	}
	_, wholeBase, err := FitBaseline(ctx, sc, o, set)
	if err != nil {
		t.Fatal(err)
	}
	fits := byChain(t, set, func(s mcmc.Settings) ([3]*mcmc.Fit, error) {
		f, err := FitLifts(ctx, sc, o, tests, s, nil)
		return fitsOf(f), err
	})
	base := &mcmc.Fit{}
	for c := range set.Chains {
		s := set
		s.Only = []int{c}
		_, bf, err := FitBaseline(ctx, sc, o, s)
		if err != nil {
			t.Fatal(err)
		}
		base.Names = bf.Names
		base.Chains = append(base.Chains, bf.Chains...)
	}
	merged, err := Assemble(sc, o, tests, set, fits, whole.Wall)
	if err != nil {
		t.Fatal(err)
	}
	same := func(name string, a, b *mcmc.Fit) {
		if !reflect.DeepEqual(a.Names, b.Names) || len(a.Chains) != len(b.Chains) {
			t.Fatalf("%s: names or chains differ", name)
		}
		for c := range a.Chains {
			if !mat.Equal(a.Chains[c].Draws, b.Chains[c].Draws) {
				t.Errorf("%s chain %d: draws differ", name, c+1)
			}
			if a.Chains[c].Stats.GradientEvaluations != b.Chains[c].Stats.GradientEvaluations {
				t.Errorf("%s chain %d: gradient evaluations differ", name, c+1)
			}
		}
	}
	for k, name := range StageNames {
		same(name, whole.Fits[k], merged.Fits[k])
	}
	same("baseline", wholeBase, base)
	a, err := whole.CheckLifts(ctx, nil)
	if err != nil {
		t.Fatal(err)
	}
	b, err := merged.CheckLifts(ctx, nil)
	if err != nil {
		t.Fatal(err)
	}
	// printed, so that NaN (a test the rest of the data cannot check)
	// equals NaN
	if fmt.Sprintf("%+v", a) != fmt.Sprintf("%+v", b) || len(a) != 2 || a[0].Mean == 0 {
		t.Errorf("lift checks differ:\n%+v\n%+v", a, b)
	}
	if !reflect.DeepEqual(whole.Drifts(), merged.Drifts()) || len(whole.Drifts()) == 0 {
		t.Error("weekly multipliers differ")
	}
}

// byChain fits set's chains one at a time (mcmc.Settings.Only) and puts
// each stage's chains together, as the merge of a sharded fit does.
func byChain(t *testing.T, set mcmc.Settings, fit func(mcmc.Settings) ([3]*mcmc.Fit, error)) [3]*mcmc.Fit {
	t.Helper()
	var fits [3]*mcmc.Fit
	for c := range set.Chains {
		s := set
		s.Only = []int{c}
		part, err := fit(s)
		if err != nil {
			t.Fatal(err)
		}
		for k := range fits {
			if fits[k] == nil {
				fits[k] = &mcmc.Fit{Names: part[k].Names}
			}
			fits[k].Chains = append(fits[k].Chains, part[k].Chains...)
		}
	}
	return fits
}

// fitsOf returns f's fits (none when f is nil).
func fitsOf(f *Fitted) [3]*mcmc.Fit {
	if f == nil {
		return [3]*mcmc.Fit{}
	}
	return f.Fits
}
