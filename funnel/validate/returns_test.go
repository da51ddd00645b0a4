package validate

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spillway/funnel/data"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
	"spillway/funnel/scenario"
	"spillway/funnel/window"
	"spillway/mediation"
)

// TestSweepReturnPriors validates a fit with stated return priors: video's
// return per thousand spent in the demo's last full quarter stated narrow
// and far from the truth (9 to 11 conversions, a 90% range; the truth is
// about 4.7) and audio's direct incremental outcome over the whole period.
// It checks that
//   - every refit restates the priors on its own data (model.ReturnPrior.On:
//     same weeks, the replicate's outcome scale) and a recovery refit
//     takes them: its video return in that quarter is pulled into the
//     stated range, as the fit of the data is;
//   - a holdout origin whose fit ends before the quarter does cannot take
//     the prior and is skipped with a note naming it, while the last
//     origin runs;
//   - data that end inside the quarter cannot restate it;
//   - a short sweep (recovery, holdout) runs to the end at 2 x (100 + 100)
//     with the skipped origin noted in the holdout verdict.
func TestSweepReturnPriors(t *testing.T) {
	if testing.Short() {
		t.Skip("a short sweep of joint fits")
	}
	s, err := scenario.Named("demo", 1, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := s.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	nat := res.Data.National()
	sc := model.Scale(nat, res.Data.Spec)
	q, ok := window.LastFullQuarter(sc.Weeks)
	if !ok {
		t.Fatal("no full quarter")
	}
	p := filepath.Join(t.TempDir(), "priors.csv")
	text := "parameter,family,p1,p2,window,per\n" +
		"return[video_spend],lognormal90,9,11," + q.Name + ",1000\n" +
		"incremental_direct[audio_spend],lognormal,20000,10000,,\n"
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	o, err := pipeline.Choices{Priors: p}.Options(sc)
	if err != nil {
		t.Fatal(err)
	}
	in := Input{Series: nat, Spec: res.Data.Spec, Tool: "test", Options: o, Truth: &Truth{Demand: res.Demand, Outcome: res.Outcome}}
	set := Settings{Checks: []string{Recovery, Holdout}, Replicates: 1, Origins: 2, Horizon: 13,
		Chains: 2, Warmup: 100, Draws: 100, Seed: 5}
	sw, err := New(in, set)
	if err != nil {
		t.Fatal(err)
	}
	// the first origin's fit ends 13 weeks before the data do: skipped
	var holdouts []Job
	for _, j := range sw.Jobs() {
		if j.Check == Holdout {
			holdouts = append(holdouts, j)
		}
	}
	if len(holdouts) != 1 || holdouts[0].Origin != sc.T-13 {
		t.Errorf("holdout jobs %+v, want the last origin (week %d) only", holdouts, sc.T-13)
	}
	if len(sw.skipped) != 1 || !strings.Contains(sw.skipped[0], "return[video_spend]") || !strings.HasPrefix(sw.skipped[0], "origin "+sc.Weeks[sc.T-26].Format(data.DateLayout)) {
		t.Errorf("skipped %q, want the first origin, naming the first prior whose window ends after its fit", sw.skipped)
	}
	if !strings.Contains(sw.Manifest().Options, "return[video_spend] over "+q.Name) {
		t.Errorf("manifest options %q do not name the return prior", sw.Manifest().Options)
	}

	// a replicate: the priors restated on its data, and taken by its refit
	rng := newRand(3)
	v1, v2, err := sw.gen.draw(0, rng, nil)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := sw.simulate(sw.gen, v1, v2, rng)
	if err != nil {
		t.Fatal(err)
	}
	ro, err := sw.optionsFor(rep.sc)
	if err != nil {
		t.Fatal(err)
	}
	r0, r1 := o.Returns[0], ro.Returns[0]
	if r1.Window.From != r0.Window.From || r1.Window.To != r0.Window.To || r1.Spend != r0.Spend ||
		math.Abs(r1.Scale-rep.sc.OutcomeScale*1000/r0.Spend) > 1e-12*r1.Scale || rep.sc.OutcomeScale == sc.OutcomeScale {
		t.Errorf("restated prior: window %d-%d spend %v scale %v; want %d-%d, %v, %v (the replicate's outcome scale)",
			r1.Window.From, r1.Window.To, r1.Spend, r1.Scale, r0.Window.From, r0.Window.To, r0.Spend, rep.sc.OutcomeScale*1000/r0.Spend)
	}
	f, err := sw.fitTests(context.Background(), rep.sc, 11, nil)
	if err != nil {
		t.Fatal(err)
	}
	split, err := mediation.Split(f.inputs(), []window.Window{r1.Window})
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range split.Effects {
		if e.Channel == "video_spend" && e.Path == "total" {
			ret := mediation.Summarise(e.Draws).Q50 * 1000 / e.Spend
			t.Logf("replicate refit: video's return per thousand in %s, median %.2f (stated 9 to 11)", q.Name, ret)
			if ret < 8 || ret > 12 {
				t.Errorf("the replicate's refit has video's return %.2f per thousand in %s; the stated prior (9 to 11) was not taken", ret, q.Name)
			}
		}
	}
	// a cut that ends before the window cannot take it
	if _, err := r0.On(model.Scale(cutSeries(nat, r0.Window.To), res.Data.Spec)); err == nil || !strings.Contains(err.Error(), "do not hold every week") {
		t.Errorf("a prior restated on data ending inside its window: %v, want an error", err)
	}

	rp := runSweep(t, sw)
	for _, v := range rp.Verdicts {
		if v.Check == Holdout && !strings.Contains(strings.Join(v.Details, " "), "Note: origin "+sc.Weeks[sc.T-26].Format(data.DateLayout)+" not run") {
			t.Errorf("the holdout verdict does not note the skipped origin: %v", v.Details)
		}
	}
}

// TestSweepKeepsExposure checks that the data a sweep refits keep the
// exposure and frequency columns: a recovery replicate of exposure-break
// data runs video on its impressions with the break (the same scaled input
// and a break factor in its layout), a holdout cut keeps the exposure of
// its weeks, and reach-frequency's cut keeps the frequency.
func TestSweepKeepsExposure(t *testing.T) {
	for _, name := range []string{"exposure-break", "reach-frequency"} {
		s, err := scenario.Named(name, 2, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		res, err := s.Simulate()
		if err != nil {
			t.Fatal(err)
		}
		nat := res.Data.National()
		in := Input{Series: nat, Spec: s.Roles(), Tool: "test", Truth: &Truth{Demand: res.Demand, Outcome: res.Outcome}}
		sw, err := New(in, recoverySettings(1, 1))
		if err != nil {
			t.Fatal(err)
		}
		rng := newRand(2)
		v1, v2, err := sw.gen.draw(0, rng, nil)
		if err != nil {
			t.Fatal(err)
		}
		rep, err := sw.simulate(sw.gen, v1, v2, rng)
		if err != nil {
			t.Fatal(err)
		}
		cs, _ := rep.st[0].Layout().Channel("video_spend")
		if name == "exposure-break" && cs.Break < 0 || name == "reach-frequency" && cs.FreqK < 0 {
			t.Errorf("%s: the replicate's video channel lost its measurement (break %d, frequency %d)", name, cs.Break, cs.FreqK)
		}
		for w, x := range rep.sc.Upper[0] {
			if x != sw.base.Upper[0][w] {
				t.Fatalf("%s week %d: the replicate's video input %v, the data's %v", name, w, x, sw.base.Upper[0][w])
			}
		}
		cut := cutSeries(nat, 100)
		if len(cut.Exposure[0]) != 100 || cut.Exposure[1] != nil || name == "reach-frequency" && len(cut.Frequency[0]) != 100 {
			t.Errorf("%s: the cut series' exposure %d weeks, frequency %v", name, len(cut.Exposure[0]), cut.Frequency != nil)
		}
	}
}
