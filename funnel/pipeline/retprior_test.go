package pipeline

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"testing"

	"spillway/funnel/data"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/funnel/window"
	"spillway/mediation"
)

// demoReturns returns the demo's scaled data and the options of a priors
// file stating video's total return per thousand spent in the last full
// quarter (0.5 to 3 conversions, a 90% range), audio's direct incremental
// outcome over the whole period (mean 20,000, sd 10,000), audio's
// via-search incremental outcome in 2024Q2 (500 to 3,000) and one ordinary
// prior.
func demoReturns(t *testing.T) (*model.Scaled, model.Options, string) {
	t.Helper()
	ds, err := data.Load("../../testdata/demo/data.csv", scenario.Spec)
	if err != nil {
		t.Fatal(err)
	}
	sc := model.Scale(ds.National(), ds.Spec)
	q, ok := window.LastFullQuarter(sc.Weeks)
	if !ok {
		t.Fatal("the demo has no full quarter")
	}
	p := filepath.Join(t.TempDir(), "priors.csv")
	text := "parameter,family,p1,p2,window,per\n" +
		"return[video_spend],lognormal90,0.5,3," + q.Name + ",1000\n" +
		"incremental_direct[audio_spend],lognormal,20000,10000,,\n" +
		"incremental_via_search[audio_spend],lognormal90,500,3000,2024Q2,\n" +
		"K[video_spend],gamma,3,3,,\n"
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	o, err := Choices{Priors: p}.Options(sc)
	if err != nil {
		t.Fatal(err)
	}
	if len(o.Returns) != 3 {
		t.Fatalf("%d return priors, want 3", len(o.Returns))
	}
	return sc, o, q.Name
}

// TestReturnPriorThroughSplit pushes the return priors through the model
// with no data: pairs drawn from the priors (mediation.PriorInputs, which
// the report's prior column uses) and split by the same counterfactual
// simulation as the posterior (mediation.Split). Each stated return must
// come back: the share of draws below each stated quantile (5%, 25%, 50%,
// 75%, 95%) within 4 binomial sd of its level (4,000 independent draws:
// sd 0.0034 at 5%, 0.0079 at 50%), and each draw's return in the split
// must be the return prior term's own (model.ReturnPrior.Value).
func TestReturnPriorThroughSplit(t *testing.T) {
	sc, o, _ := demoReturns(t)
	returnsThroughSplit(t, sc, o)
}

// TestReturnPriorMeasuredThroughSplit is TestReturnPriorThroughSplit on a
// channel whose exposure is measured with doubt: video's return per
// thousand in the last full quarter and its direct incremental outcome
// over the whole period, stated on exposure-break data (a break and, with
// --exposure-error, latent errors) and on reach-frequency data, pushed
// through the measured input by the forward simulator, come back as
// stated.
func TestReturnPriorMeasuredThroughSplit(t *testing.T) {
	for _, name := range []string{"exposure-break", "reach-frequency"} {
		s, err := scenario.Named(name, 4, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		res, err := s.Simulate()
		if err != nil {
			t.Fatal(err)
		}
		spec := s.Roles()
		if name == "exposure-break" {
			spec.Exposure[0].Error = 0.2
		}
		sc := model.Scale(res.Data.National(), spec)
		q, _ := window.LastFullQuarter(sc.Weeks)
		p := filepath.Join(t.TempDir(), "priors.csv")
		text := "parameter,family,p1,p2,window,per\n" +
			"return[video_spend],lognormal90,0.5,3," + q.Name + ",1000\n" +
			"incremental_direct[audio_spend],lognormal,20000,10000,,\n"
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		o, err := Choices{Priors: p}.Options(sc)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		returnsThroughSplit(t, sc, o)
	}
}

// returnsThroughSplit is TestReturnPriorThroughSplit's check of the
// return priors of o on sc.
func returnsThroughSplit(t *testing.T, sc *model.Scaled, o model.Options) {
	t.Helper()
	st, err := Stages(sc, o)
	if err != nil {
		t.Fatal(err)
	}
	in := &mediation.Inputs{Data: sc, Demand: st[0], Outcome: st[1], Naive: st[2]}
	const n = 4000
	pin, err := mediation.PriorInputs(in, n, 7)
	if err != nil {
		t.Fatal(err)
	}
	var wins []window.Window
	for _, r := range o.Returns {
		wins = append(wins, r.Window)
	}
	res, err := mediation.Split(pin, wins)
	if err != nil {
		t.Fatal(err)
	}
	terms, err := model.ReturnDraws(st[0], st[1])
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range o.Returns {
		var got []float64
		for _, e := range res.Effects {
			if e.Channel == r.Column && e.Path == r.Path.String() && e.Window == r.Window.Name {
				for d, v := range e.Draws {
					if r.Measure == model.ReturnOnSpend {
						v = v / e.Spend * r.Per
					}
					got = append(got, v)
					// the term's own return of the draw is the split's
					if R := terms[i].Value(pin.DemandDraws.Rows[d], pin.OutcomeDraws.Rows[d]); math.Abs(v/R-1) > 1e-12 {
						t.Fatalf("%s, draw %d: the split's return %v, the term's %v", r.Name(), d, v, R)
					}
				}
			}
		}
		if len(got) != n {
			t.Fatalf("%s: %d draws of the effect, want %d", r.Name(), len(got), n)
		}
		for _, p := range []float64{0.05, 0.25, 0.5, 0.75, 0.95} {
			q := r.Quantile(p)
			k := 0
			for _, v := range got {
				if v < q {
					k++
				}
			}
			f, sd := float64(k)/n, math.Sqrt(p*(1-p)/n)
			t.Logf("%s (%s): %.4f of prior draws below the stated %g quantile %.4g (binomial sd %.4f)", r.Name(), r.Window.Name, f, p, q, sd)
			if math.Abs(f-p) > 4*sd {
				t.Errorf("%s: %.4f of prior draws below the stated %g quantile %.4g, want %g ± %.4f", r.Name(), f, p, q, p, 4*sd)
			}
		}
	}
}

// TestImpliedTable checks priors_implied.csv's rows on prior draws: one
// whole-period row per upper channel (per 1,000 for video, whose stated
// return is per 1,000), one per stated return with its stated quantiles,
// and, the draws being the priors', prior and "posterior" columns alike
// and within Monte Carlo error of the stated median.
func TestImpliedTable(t *testing.T) {
	sc, o, q := demoReturns(t)
	st, err := Stages(sc, o)
	if err != nil {
		t.Fatal(err)
	}
	in := &mediation.Inputs{Data: sc, Demand: st[0], Outcome: st[1], Naive: st[2]}
	pin, err := mediation.PriorInputs(in, 2000, 9)
	if err != nil {
		t.Fatal(err)
	}
	res, err := mediation.Split(pin, append(window.Quarters(sc.Weeks)[:1], o.Returns[0].Window, o.Returns[2].Window))
	if err != nil {
		t.Fatal(err)
	}
	rows := mediation.ImpliedTable(pin, res, res)
	type key struct{ ch, path, win, measure string }
	var got []key
	for _, r := range rows {
		got = append(got, key{r.Channel, r.Path, r.Window, r.Measure})
	}
	want := []key{{"video_spend", "total", "all", "return_on_spend"}, {"video_spend", "total", q, "return_on_spend"},
		{"audio_spend", "total", "all", "return_on_spend"}, {"audio_spend", "direct", "all", "incremental"},
		{"audio_spend", "via_search", "2024Q2", "incremental"}}
	if len(got) != len(want) {
		t.Fatalf("rows %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("row %d: %v, want %v", i, got[i], want[i])
		}
	}
	if rows[0].Per != 1000 || rows[0].Stated() || rows[2].Per != 1 {
		t.Errorf("whole-period rows: %+v %+v", rows[0], rows[2])
	}
	for i, r := range o.Returns {
		row := rows[[]int{1, 3, 4}[i]]
		if row.StatedQ05 != r.Quantile(0.05) || row.StatedQ95 != r.Quantile(0.95) || row.PriorQ50 != row.PostQ50 {
			t.Errorf("%s: %+v", r.Name(), row)
		}
		// the median of 2,000 draws: within 4 sd of the stated one on the
		// log scale, sd = sqrt(0.25 / n) / density of log R at its median
		sd := math.Sqrt(0.25/2000) * r.Sigma * math.Sqrt(2*math.Pi)
		if d := math.Log(row.PriorQ50 / row.StatedQ50); math.Abs(d) > 4*sd {
			t.Errorf("%s: prior median %v, stated %v", r.Name(), row.PriorQ50, row.StatedQ50)
		}
	}
}

// TestReturnPriorFit fits the demo with return priors (very short chains:
// it checks the wiring, not the posterior): the demand and outcome stages
// as one joint target, every draw finite.
func TestReturnPriorFit(t *testing.T) {
	if testing.Short() {
		t.Skip("a joint fit of the demo")
	}
	sc, o, _ := demoReturns(t)
	f, err := Fit(context.Background(), sc, o, mcmc.Settings{Chains: 2, Warmup: 100, Draws: 50, Seed: 3}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if f.Wall[1] != 0 || f.Fits[2] == nil {
		t.Errorf("walls %v: want a joint demand and outcome fit and a naive one", f.Wall)
	}
	for k, fit := range f.Fits {
		for _, c := range fit.Chains {
			r, cols := c.Draws.Dims()
			for i := range r {
				for j := range cols {
					if v := c.Draws.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) {
						t.Fatalf("%s stage: %s is %v", StageNames[k], fit.Names[j], v)
					}
				}
			}
		}
	}
}
