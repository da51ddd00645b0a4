package pipeline

import (
	"context"
	"reflect"
	"testing"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/data"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
)

// TestJumpTieFit fits the demo with video and paid search drifting with
// jumps and no lift test: video's two paths jump together (model.JumpTie),
// so demand and outcome are one joint target (its sampler statistics are
// both stages', the outcome's wall time 0); fitted chain by chain and put
// together by Assemble, the draws and weekly multipliers are the whole
// fit's (what the merge of a sharded fit rests on). With the ties left out
// (Options.JumpsApart), or with paid search alone drifting with jumps (one
// path), the stages are fitted apart as before. Short chains: the
// plumbing, not the posterior.
func TestJumpTieFit(t *testing.T) {
	if testing.Short() {
		t.Skip("short fits of the demo; skipped with -short")
	}
	ds, err := data.Load("../../testdata/demo/data.csv", scenario.Spec)
	if err != nil {
		t.Fatal(err)
	}
	sc := model.Scale(ds.National(), ds.Spec)
	o := model.Options{Drift: map[string]bool{"video_spend": true, "search_spend": true}, DriftShape: model.DriftJumps}
	set := mcmc.Settings{Chains: 2, Warmup: 40, Draws: 20, Seed: 11, MaxTreeDepth: 5}
	ctx := context.Background()
	st, err := Stages(sc, o)
	if err != nil {
		t.Fatal(err)
	}
	if ties := JumpTies(st[0], st[1], o); len(ties) != 1 || ties[0].Column != "video_spend" {
		t.Fatalf("ties %+v, want video's alone", ties)
	}
	joint := func(f *Fitted) bool {
		return f.Wall[1] == 0 && reflect.DeepEqual(f.Fits[0].Chains[0].Stats, f.Fits[1].Chains[0].Stats)
	}
	whole, err := Fit(ctx, sc, o, set, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !joint(whole) {
		t.Error("video drifting with jumps: the demand and outcome stages were not fitted as one")
	}
	fits := byChain(t, set, func(s mcmc.Settings) (*Fitted, error) { return FitLifts(ctx, sc, o, nil, s, nil) })
	merged, err := Assemble(sc, o, nil, set, fits, whole.Wall)
	if err != nil {
		t.Fatal(err)
	}
	for k, name := range StageNames {
		for c := range whole.Fits[k].Chains {
			if !mat.Equal(whole.Fits[k].Chains[c].Draws, merged.Fits[k].Chains[c].Draws) {
				t.Errorf("%s chain %d: draws differ", name, c+1)
			}
		}
	}
	if !reflect.DeepEqual(whole.Drifts(), merged.Drifts()) || len(whole.Drifts()) == 0 {
		t.Error("weekly multipliers differ")
	}
	apart := o
	apart.JumpsApart = true
	search := model.Options{Drift: map[string]bool{"search_spend": true}, DriftShape: model.DriftJumps}
	for _, oo := range []model.Options{apart, search} {
		f, err := Fit(ctx, sc, oo, set, nil)
		if err != nil {
			t.Fatal(err)
		}
		if joint(f) {
			t.Errorf("%+v: the stages were fitted as one", oo.Drift)
		}
	}
}
