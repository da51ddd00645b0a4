package pipeline

import (
	"context"
	"fmt"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"
	"testing"

	"spillway/funnel/data"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/funnel/stat"
	"spillway/funnel/validate/score"
	"spillway/funnel/window"
	"spillway/mediation"
)

// exposureWindows returns the whole period, the first and the last 52
// weeks of weeks.
func exposureWindows(t *testing.T, sc *model.Scaled) []window.Window {
	t.Helper()
	var out []window.Window
	T := sc.T
	for _, r := range [][2]int{{0, T - 1}, {0, 51}, {T - 52, T - 1}} {
		name := sc.Weeks[r[0]].Format(data.DateLayout) + ":" + sc.Weeks[r[1]].Format(data.DateLayout)
		w, err := window.Resolve(name, sc.Weeks)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, w)
	}
	return out
}

// exposureFit fits scenario data with spec's roles and returns the split
// over the windows.
func exposureFit(t *testing.T, res *scenario.Result, spec data.Spec, set mcmc.Settings) (*mediation.Result, *Fitted, *model.Scaled) {
	t.Helper()
	return seriesFit(t, res.Data.National(), spec, set)
}

// seriesFit fits the national series s with spec's roles and returns the
// split over the windows.
func seriesFit(t *testing.T, s data.Series, spec data.Spec, set mcmc.Settings) (*mediation.Result, *Fitted, *model.Scaled) {
	t.Helper()
	sc := model.Scale(s, spec)
	fit, err := Fit(context.Background(), sc, model.Options{}, set, nil)
	if err != nil {
		t.Fatal(err)
	}
	for k, f := range fit.Fits {
		if v := mcmc.Judge(f, mcmc.Summarize(f)); !v.Trustworthy {
			t.Logf("%s: %v", StageNames[k], v.Reasons)
		}
	}
	split, err := mediation.Split(fit.Inputs(), exposureWindows(t, sc))
	if err != nil {
		t.Fatal(err)
	}
	return split, fit, sc
}

// effectOf returns the draws of channel col's effect on path in window w.
func effectOf(r *mediation.Result, col, path, w string) (mediation.Effect, bool) {
	for _, e := range r.Effects {
		if e.Channel == col && e.Path == path && e.Window == w {
			return e, true
		}
	}
	return mediation.Effect{}, false
}

// exposureTruth returns the true effects of every channel, path and
// window, by "channel/path/window".
func exposureTruth(t *testing.T, s *scenario.Scenario, res *scenario.Result, windows []window.Window) map[string]float64 {
	t.Helper()
	sc := model.Scale(res.Data.National(), s.Roles())
	st1, err := model.Demand(sc, model.Options{})
	if err != nil {
		t.Fatal(err)
	}
	st2, err := model.Outcome(sc, model.Options{})
	if err != nil {
		t.Fatal(err)
	}
	d1, err := mediation.Point(st1.Names(), res.Demand)
	if err != nil {
		t.Fatal(err)
	}
	d2, err := mediation.Point(st2.Names(), res.Outcome)
	if err != nil {
		t.Fatal(err)
	}
	r, err := mediation.Split(&mediation.Inputs{Data: sc, Demand: st1, Outcome: st2, DemandDraws: d1, OutcomeDraws: d2}, windows)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]float64{}
	for _, e := range r.Effects {
		out[e.Channel+"/"+e.Path+"/"+e.Window] = e.Draws[0]
	}
	return out
}

// exposureRising fits the exposure-rising scenario (video's response
// runs on impressions; its cost per thousand rises 30% over three years)
// twice: on video's impressions (--exposure) and on its spend, the default.
// The exposure model recovers video's total effect in the first and the
// last year within its 90% intervals, and the change in return per unit
// spend between them; the spend model, which assumes a unit of spend buys
// the same exposure throughout, misses that change. Both are printed.
// recoverySettings are the sampler settings of TestExposureRecovery's
// fits: 4 x (200 + 200) keeps the eight fits in the test suite's time
// (the coverage sweep, TestExposureCoverage, runs 4 x (400 + 400)); the
// checks are on 90% intervals, whose Monte Carlo error at 800 draws is
// small beside their width.
var recoverySettings = mcmc.Settings{Seed: 3, Warmup: 200, Draws: 200}

func exposureRising(t *testing.T, tally *tally) {
	s, err := scenario.Named("exposure-rising", 5, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := s.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	spendSpec := s.Roles()
	spendSpec.Exposure = nil
	set := recoverySettings
	withExp, fit, sc := exposureFit(t, res, s.Roles(), set)
	withSpend, _, _ := exposureFit(t, res, spendSpec, set)
	wins := exposureWindows(t, sc)
	truth := exposureTruth(t, s, res, wins)
	tally.add(t, s, withExp, fit, truth)
	col := "video_spend"
	ratio := func(r *mediation.Result) (mean float64, draws []float64) {
		first, _ := effectOf(r, col, "total", wins[1].Name)
		last, _ := effectOf(r, col, "total", wins[2].Name)
		draws = make([]float64, len(first.Draws))
		for d := range draws {
			draws[d] = (last.Draws[d] / last.Spend) / (first.Draws[d] / first.Spend)
		}
		return stat.Mean(draws), draws
	}
	first, _ := effectOf(withExp, col, "total", wins[1].Name)
	last, _ := effectOf(withExp, col, "total", wins[2].Name)
	trueRatio := (truth[col+"/total/"+wins[2].Name] / last.Spend) / (truth[col+"/total/"+wins[1].Name] / first.Spend)
	expRatio, expDraws := ratio(withExp)
	spendRatio, _ := ratio(withSpend)
	t.Logf("video total effect (conversions), truth | exposure model mean [90%%] | spend model mean [90%%]:")
	for _, w := range wins {
		tv := truth[col+"/total/"+w.Name]
		e, _ := effectOf(withExp, col, "total", w.Name)
		p, _ := effectOf(withSpend, col, "total", w.Name)
		se, sp := mediation.Summarise(e.Draws), mediation.Summarise(p.Draws)
		t.Logf("  %-23s %8.0f | %8.0f [%8.0f, %8.0f] | %8.0f [%8.0f, %8.0f]", w.Name, tv, se.Mean, se.Q05, se.Q95, sp.Mean, sp.Q05, sp.Q95)
		if w.Name != wins[0].Name {
			if in90, _ := coverage(e.Draws, tv); !in90 {
				t.Errorf("%s: the exposure model's 90%% interval [%.0f, %.0f] misses the truth %.0f", w.Name, se.Q05, se.Q95, tv)
			}
		}
	}
	t.Logf("return per unit spend, last year over first year: truth %.3f, exposure model %.3f, spend model %.3f", trueRatio, expRatio, spendRatio)
	if in90, _ := coverage(expDraws, trueRatio); !in90 {
		t.Errorf("the exposure model's 90%% interval of the ratio misses the truth %.3f", trueRatio)
	}
	if math.Abs(expRatio-trueRatio) >= math.Abs(spendRatio-trueRatio) {
		t.Errorf("the exposure model's ratio %.3f is no nearer the truth %.3f than the spend model's %.3f", expRatio, trueRatio, spendRatio)
	}
}

// exposureBreak fits the exposure-break scenario (from week 78
// the vendor reports 1.6 times the impressions it did) with the break
// declared and without it: with it, both stages' log factors cover the
// true log 1.6 and video's total effect in the first and last year are
// covered; without it, the printed effects show what ignoring it costs.
func exposureBreak(t *testing.T, tally *tally) {
	s, err := scenario.Named("exposure-break", 5, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := s.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	noBreak := s.Roles()
	noBreak.Exposure = []data.Exposure{{Spend: noBreak.Exposure[0].Spend, Column: noBreak.Exposure[0].Column}}
	set := recoverySettings
	withBreak, fit, sc := exposureFit(t, res, s.Roles(), set)
	without, _, _ := exposureFit(t, res, noBreak, set)
	wins := exposureWindows(t, sc)
	truth := exposureTruth(t, s, res, wins)
	tally.add(t, s, withBreak, fit, truth)
	want := math.Log(1.6)
	for k := range 2 {
		l := fit.Stages[k].Layout()
		cs, _ := l.Channel("video_spend")
		draws := stageDraws(fit, k, cs.Break)
		sm := mediation.Summarise(draws)
		t.Logf("%s stage: %s mean %.3f [%.3f, %.3f], truth %.3f", StageNames[k], l.Names()[cs.Break], sm.Mean, sm.Q05, sm.Q95, want)
		if in90, _ := coverage(draws, want); !in90 {
			t.Errorf("%s: 90%% interval [%.3f, %.3f] misses the true log factor %.3f", l.Names()[cs.Break], sm.Q05, sm.Q95, want)
		}
	}
	t.Logf("video total effect (conversions), truth | break declared | break ignored:")
	for _, w := range wins {
		tv := truth["video_spend/total/"+w.Name]
		e, _ := effectOf(withBreak, "video_spend", "total", w.Name)
		p, _ := effectOf(without, "video_spend", "total", w.Name)
		se, sp := mediation.Summarise(e.Draws), mediation.Summarise(p.Draws)
		t.Logf("  %-23s %8.0f | %8.0f [%8.0f, %8.0f] | %8.0f [%8.0f, %8.0f]", w.Name, tv, se.Mean, se.Q05, se.Q95, sp.Mean, sp.Q05, sp.Q95)
		if in90, _ := coverage(e.Draws, tv); !in90 && w.Name != wins[0].Name {
			t.Errorf("%s: 90%% interval [%.0f, %.0f] misses the truth %.0f", w.Name, se.Q05, se.Q95, tv)
		}
	}
}

// exposureError fits the exposure-error scenario (video's
// reported impressions off by a factor exp(0.25 e), e standard normal, each
// week) with the error stated (--exposure-error video_spend=0.25) and with
// the impressions taken as measured: with the error stated, the intervals
// of video's weekly lift of queries are wider and hold the truth more
// often, and video's total effects are covered. Summed over a year the
// weekly errors mostly cancel, so the yearly intervals hardly widen (printed).
func exposureError(t *testing.T, tally *tally) {
	s, err := scenario.Named("exposure-error", 5, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := s.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	asMeasured := s.Roles()
	asMeasured.Exposure = []data.Exposure{{Spend: asMeasured.Exposure[0].Spend, Column: asMeasured.Exposure[0].Column}}
	set := recoverySettings
	withErr, fit, sc := exposureFit(t, res, s.Roles(), set)
	without, fit0, _ := exposureFit(t, res, asMeasured, set)
	wins := exposureWindows(t, sc)
	truth := exposureTruth(t, s, res, wins)
	tally.add(t, s, withErr, fit, truth)
	// weekly: video's lift of queries in each week, where each week's own
	// measurement error matters
	st1, err := model.Demand(sc, model.Options{})
	if err != nil {
		t.Fatal(err)
	}
	d1, err := mediation.Point(st1.Names(), res.Demand)
	if err != nil {
		t.Fatal(err)
	}
	weekly := func(st *model.Stage, rows [][]float64) [][]float64 {
		l := st.Layout()
		j := st.ChannelIndex("video_spend")
		out := make([][]float64, len(rows))
		for d, r := range rows {
			m := l.View(r).ChannelAt(j)
			out[d] = m.Response(nil, sc.Upper[0])
			for w := range out[d] {
				out[d][w] *= m.Coef
			}
		}
		return out
	}
	truthLift := weekly(st1, d1.Rows)[0]
	stated, measured := weekly(fit.Stages[0], fit.Inputs().DemandDraws.Rows), weekly(fit0.Stages[0], fit0.Inputs().DemandDraws.Rows)
	var ratios []float64
	inS, inM, n := 0, 0, 0
	col := make([]float64, len(stated))
	for w, tv := range truthLift {
		if tv <= 0 {
			continue
		}
		widthOf := func(draws [][]float64) (float64, bool) {
			for d := range draws {
				col[d] = draws[d][w]
			}
			sm := mediation.Summarise(col)
			return sm.Q95 - sm.Q05, sm.Q05 <= tv && tv <= sm.Q95
		}
		ws, okS := widthOf(stated)
		wm, okM := widthOf(measured)
		ratios = append(ratios, ws/wm)
		n++
		if okS {
			inS++
		}
		if okM {
			inM++
		}
	}
	sort.Float64s(ratios)
	med := stat.Quantile(ratios, 0.5)
	t.Logf("video's weekly lift of queries, %d weeks: 90%% intervals %.2f times as wide (median over weeks) with the error stated; they hold the truth in %d weeks (%.0f%%) against %d (%.0f%%) taken as measured",
		n, med, inS, 100*float64(inS)/float64(n), inM, 100*float64(inM)/float64(n))
	if med <= 1 || inS <= inM {
		t.Errorf("stating the error should widen the weekly intervals (median ratio %.2f) and make them hold the truth more often (%d against %d weeks)", med, inS, inM)
	}
	t.Logf("video effects (conversions), truth | error stated: mean [90%%] width | taken as measured: mean [90%%] width:")
	for _, path := range []string{"via_search", "direct", "total"} {
		for _, w := range wins {
			tv := truth["video_spend/"+path+"/"+w.Name]
			e, _ := effectOf(withErr, "video_spend", path, w.Name)
			p, _ := effectOf(without, "video_spend", path, w.Name)
			se, sp := mediation.Summarise(e.Draws), mediation.Summarise(p.Draws)
			t.Logf("  %-10s %-23s %8.0f | %8.0f [%8.0f, %8.0f] %6.0f | %8.0f [%8.0f, %8.0f] %6.0f", path, w.Name, tv,
				se.Mean, se.Q05, se.Q95, se.Q95-se.Q05, sp.Mean, sp.Q05, sp.Q95, sp.Q95-sp.Q05)
			if in90, _ := coverage(e.Draws, tv); !in90 && path == "total" {
				t.Errorf("%s %s: 90%% interval [%.0f, %.0f] with the error stated misses the truth %.0f", path, w.Name, se.Q05, se.Q95, tv)
			}
		}
	}
}

// exposureRF fits the reach-frequency scenario (video's response runs on
// reach times g(f) = f^2.5/(f^2.5 + 2^2.5), frequency from 1.2 to about 6)
// on reach and frequency, and on impressions (reach times frequency, one
// exposure column): with reach and frequency, the frequency curve's Kf,
// what doubling the frequency does to the effective exposure (the truth:
// 1.55 times, against 2 for doubling the reach) and video's total effects
// in each year are covered; both fits are printed.
func exposureRF(t *testing.T, tl *tally) {
	s, err := scenario.Named("reach-frequency", 5, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := s.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	set := recoverySettings
	withRF, fit, sc := exposureFit(t, res, s.Roles(), set)
	nat := res.Data.National()
	imp := make([]float64, len(nat.Weeks))
	for w := range imp {
		imp[w] = nat.Exposure[0][w] * nat.Frequency[0][w]
	}
	nat.Exposure = [][]float64{imp, nil}
	impSpec := s.Roles()
	impSpec.Exposure = []data.Exposure{{Spend: impSpec.Upper[0], Column: "video_impressions"}}
	withImp, _, _ := seriesFit(t, nat, impSpec, set)
	wins := exposureWindows(t, sc)
	truth := exposureTruth(t, s, res, wins)
	tl.add(t, s, withRF, fit, truth)
	for k := range 2 {
		l := fit.Stages[k].Layout()
		cs, _ := l.Channel("video_spend")
		for q, want := range []float64{s.Exposure.Kf, s.Exposure.Sf} {
			draws := stageDraws(fit, k, cs.FreqK+q)
			sm := mediation.Summarise(draws)
			t.Logf("%s stage: %s mean %.2f [%.2f, %.2f], truth %.2f", StageNames[k], l.Names()[cs.FreqK+q], sm.Mean, sm.Q05, sm.Q95, want)
			if q == 0 && k == 0 {
				if in90, _ := coverage(draws, want); !in90 {
					t.Errorf("%s: 90%% interval misses the truth %.2f", l.Names()[cs.FreqK], want)
				}
			}
		}
		if k == 0 {
			// doubling frequency against doubling reach at the recent
			// frequency: g(2f)/g(f) per draw, against 2
			kd, sd := stageDraws(fit, 0, cs.FreqK), stageDraws(fit, 0, cs.FreqK+1)
			ratio := make([]float64, len(kd))
			f := cs.FreqAfter
			for d := range ratio {
				g := func(x float64) float64 { return 1 / (1 + math.Pow(kd[d]/x, sd[d])) }
				ratio[d] = g(2*f) / g(f)
			}
			sm := mediation.Summarise(ratio)
			tg := func(x float64) float64 { return 1 / (1 + math.Pow(s.Exposure.Kf/x, s.Exposure.Sf)) }
			below := 0
			for _, r := range ratio {
				if r < 2 {
					below++
				}
			}
			truthRatio := tg(2*f) / tg(f)
			t.Logf("doubling the frequency (from %.2f) multiplies the effective exposure by %.2f [%.2f, %.2f] (truth %.2f; P(below 2) = %.2f); doubling the reach by 2",
				f, sm.Mean, sm.Q05, sm.Q95, truthRatio, float64(below)/float64(len(ratio)))
			if in90, _ := coverage(ratio, truthRatio); !in90 {
				t.Errorf("the 90%% interval of doubling the frequency [%.2f, %.2f] misses the truth %.2f", sm.Q05, sm.Q95, truthRatio)
			}
		}
	}
	t.Logf("video total effect (conversions), truth | reach and frequency | impressions:")
	for _, w := range wins {
		tv := truth["video_spend/total/"+w.Name]
		e, _ := effectOf(withRF, "video_spend", "total", w.Name)
		p, _ := effectOf(withImp, "video_spend", "total", w.Name)
		se, sp := mediation.Summarise(e.Draws), mediation.Summarise(p.Draws)
		t.Logf("  %-23s %8.0f | %8.0f [%8.0f, %8.0f] | %8.0f [%8.0f, %8.0f]", w.Name, tv, se.Mean, se.Q05, se.Q95, sp.Mean, sp.Q05, sp.Q95)
		if in90, _ := coverage(e.Draws, tv); !in90 {
			t.Errorf("%s: 90%% interval [%.0f, %.0f] misses the truth %.0f", w.Name, se.Q05, se.Q95, tv)
		}
	}
}

// TestExposureRecovery runs the four exposure recovery checks (rising cost
// per unit, a measurement break, exposure with error, reach and frequency;
// eight fits) and prints
// how many of the 90% intervals of the stated models (video's and audio's
// effects on each path, whole period and each year, and the break's log
// factors) hold the truth, beside the 95% binomial range.
func TestExposureRecovery(t *testing.T) {
	if testing.Short() {
		t.Skip("eight full fits")
	}
	var tl tally
	t.Run("rising", func(t *testing.T) { exposureRising(t, &tl) })
	t.Run("break", func(t *testing.T) { exposureBreak(t, &tl) })
	t.Run("error", func(t *testing.T) { exposureError(t, &tl) })
	t.Run("reach-frequency", func(t *testing.T) { exposureRF(t, &tl) })
	tl.log(t, false)
}

// TestExposureCoverage is the longer sweep: replicates of each exposure
// scenario (SPILLWAY_REPLICATES, default 8, from seed 100 +
// SPILLWAY_FIRST), each fitted with its stated model (demand and outcome
// stages, 4 x (400 + 400); the naive stage adds nothing to these effects).
// Every quantity (a channel's effect on a path in a window, the break's
// log factors, the frequency curve's Kf and Sf) is one trial per
// replicate: the checks of one fit are correlated (the yearly effects add
// up to most of the whole period's, the paths to the total, and a fit
// that puts too much of video's effect on one path puts too little on
// the other in every window), so they are never pooled as independent
// trials. It prints each fit's misses and convergence, each quantity's
// count of 90% intervals holding the truth beside its binomial range, and
// each scenario's share of quantities covered averaged over replicates
// with a range from the spread between replicates. It fails when a
// quantity's count is below its binomial range at a level corrected for
// the number of quantities, or when a scenario's share is clearly below
// 90%. Replicates run outermost, so a sweep cut short has every scenario
// equally far. SPILLWAY_SCENARIOS=a,b picks scenarios (demo, where video
// runs on its spend, is the control). It runs with SPILLWAY_LONG=1.
func TestExposureCoverage(t *testing.T) {
	if os.Getenv("SPILLWAY_LONG") != "1" {
		t.Skip("thirty-two fits; set SPILLWAY_LONG=1")
	}
	reps, first := envInt(t, "SPILLWAY_REPLICATES", 8, 1), envInt(t, "SPILLWAY_FIRST", 0, 0)
	names := []string{"exposure-rising", "exposure-break", "exposure-error", "reach-frequency"}
	if v := os.Getenv("SPILLWAY_SCENARIOS"); v != "" {
		names = strings.Split(v, ",") // e.g. demo, the spend-driven control
	}
	sweeps := make([]sweep, len(names))
	for rep := first; rep < first+reps; rep++ {
		for i, name := range names {
			s, err := scenario.Named(name, uint64(100+rep), 0, 0)
			if err != nil {
				t.Fatal(err)
			}
			if v := os.Getenv("SPILLWAY_SEARCH_FOLLOWS"); v != "" {
				// how far paid-search spend follows the queries (0: not at
				// all), to see whether that is what the misses come from
				if s.SearchFollowsQueries, err = strconv.ParseFloat(v, 64); err != nil {
					t.Fatal(err)
				}
			}
			res, err := s.Simulate()
			if err != nil {
				t.Fatal(err)
			}
			sc := model.Scale(res.Data.National(), s.Roles())
			fit, err := FitStages(context.Background(), sc, model.Options{}, nil, exposureCoverageSettings(t, rep), nil)
			if err != nil {
				t.Fatal(err)
			}
			wins := exposureWindows(t, sc)
			split, err := mediation.Split(fit.Inputs(), wins)
			if err != nil {
				t.Fatal(err)
			}
			sweeps[i].add(t, name, rep, s, split, fit, wins, exposureTruth(t, s, res, wins))
		}
		for i, name := range names { // so that a sweep cut short has its counts
			in, n := sweeps[i].held()
			t.Logf("after %d replicates, %s: %d of %d intervals held the truth", sweeps[i].reps, name, in, n)
		}
	}
	for i, name := range names {
		t.Run(name, func(t *testing.T) { sweeps[i].judge(t) })
	}
}

// envInt returns the whole number in environment variable name, def if
// it is unset; below least is an error.
func envInt(t *testing.T, name string, def, least int) int {
	t.Helper()
	v := os.Getenv(name)
	if v == "" {
		return def
	}
	n, err := strconv.Atoi(v)
	if err != nil || n < least {
		t.Fatalf("%s=%q: want a whole number of at least %d", name, v, least)
	}
	return n
}

// exposureCoverageSettings are the sampler settings of replicate rep:
// 4 x (400 + 400), or SPILLWAY_WARMUP and SPILLWAY_DRAWS.
func exposureCoverageSettings(t *testing.T, rep int) mcmc.Settings {
	return mcmc.Settings{Seed: uint64(rep + 1), Warmup: envInt(t, "SPILLWAY_WARMUP", 400, 1), Draws: envInt(t, "SPILLWAY_DRAWS", 400, 1)}
}

// sweep holds, for each quantity, whether each replicate's 90% interval
// held the truth.
type sweep struct {
	keys []string          // quantities in first-seen order
	hits map[string][]bool // by quantity, one per replicate
	reps int
}

// add records replicate rep's fit against truth and logs its misses and
// its stages' convergence.
func (sw *sweep) add(t *testing.T, name string, rep int, s *scenario.Scenario, split *mediation.Result, fit *Fitted, wins []window.Window, truth map[string]float64) {
	t.Helper()
	if sw.hits == nil {
		sw.hits = map[string][]bool{}
	}
	sw.reps++
	var misses []string
	record := func(key string, draws []float64, v float64) {
		if _, ok := sw.hits[key]; !ok {
			sw.keys = append(sw.keys, key)
		}
		in, _ := coverage(draws, v)
		sw.hits[key] = append(sw.hits[key], in)
		if !in {
			sm := mediation.Summarise(draws)
			below := 0
			for _, d := range draws {
				if d < v {
					below++
				}
			}
			misses = append(misses, fmt.Sprintf("%s truth %.4g, [%.4g, %.4g], P(below truth) %.3f", key, v, sm.Q05, sm.Q95, float64(below)/float64(len(draws))))
		}
	}
	label := map[string]string{}
	for i, w := range wins {
		label[w.Name] = [...]string{"all", "first-year", "last-year"}[i]
	}
	for _, e := range split.Effects {
		if e.Path == "mediated_share" {
			continue
		}
		tv, ok := truth[e.Channel+"/"+e.Path+"/"+e.Window]
		if !ok {
			t.Fatalf("no truth for %s %s %s", e.Channel, e.Path, e.Window)
		}
		record(e.Channel+"/"+e.Path+"/"+label[e.Window], e.Draws, tv)
	}
	for k := range 2 {
		l := fit.Stages[k].Layout()
		cs, _ := l.Channel("video_spend")
		if cs.Break >= 0 {
			record(l.Names()[cs.Break], stageDraws(fit, k, cs.Break), math.Log(s.Exposure.BreakScale))
		}
		if cs.FreqK >= 0 {
			record(l.Names()[cs.FreqK], stageDraws(fit, k, cs.FreqK), s.Exposure.Kf)
			record(l.Names()[cs.FreqK+1], stageDraws(fit, k, cs.FreqK+1), s.Exposure.Sf)
		}
	}
	var conv []string
	for k, f := range fit.Fits {
		if f == nil {
			continue
		}
		if v := mcmc.Judge(f, mcmc.Summarize(f)); !v.Trustworthy {
			conv = append(conv, fmt.Sprintf("%s: %v", StageNames[k], v.Reasons))
		}
	}
	t.Logf("%s replicate %d (seed %d): %d of %d missed; not converged: %v", name, rep+1, 100+rep, len(misses), len(sw.keys), conv)
	for _, m := range misses {
		t.Logf("    miss %s", m)
	}
}

// held returns how many intervals held the truth, of how many.
func (sw *sweep) held() (in, n int) {
	for _, h := range sw.hits {
		for _, ok := range h {
			n++
			if ok {
				in++
			}
		}
	}
	return in, n
}

// judge prints each quantity's count and the scenario's share, and fails
// on undercoverage beyond what chance allows.
func (sw *sweep) judge(t *testing.T) {
	t.Helper()
	nq := len(sw.keys)
	// each quantity's lower bound at a two-sided level of 1 - 0.05/nq
	// (Bonferroni over the quantities of the scenario)
	lo95, hi95 := score.BinomialRange(sw.reps, 0.9, 0.95)
	loB, _ := score.BinomialRange(sw.reps, 0.9, 1-0.05/float64(nq))
	shares := make([]float64, sw.reps)
	for _, key := range sw.keys {
		h := sw.hits[key]
		in := 0
		for r, ok := range h {
			if ok {
				in++
				shares[r] += 1 / float64(nq)
			}
		}
		flag := ""
		if in < lo95 {
			flag = " (below the 95% range)"
		}
		t.Logf("  %-40s %2d of %d%s", key, in, len(h), flag)
		if in < loB {
			t.Errorf("%s: %d of %d 90%% intervals hold the truth, below %d (binomial, %.4f level over %d quantities)", key, in, len(h), loB, 1-0.05/float64(nq), nq)
		}
	}
	m, sd := stat.MeanSD(shares)
	se := sd / math.Sqrt(float64(len(shares)))
	t.Logf("share of quantities covered, averaged over %d replicates: %.3f (replicate-level 95%% range %.3f to %.3f); per quantity the 95%% binomial range is %d to %d of %d",
		sw.reps, m, m-2*se, m+2*se, lo95, hi95, sw.reps)
	if m+2*se < 0.9 {
		t.Errorf("coverage %.3f: its range %.3f to %.3f lies below 0.9", m, m-2*se, m+2*se)
	}
}

// tally counts 90% intervals holding the truth.
type tally struct{ n, in int }

// add counts the effects of split (but mediated shares) against truth,
// and the break's log factors of fit against the scenario's.
func (tl *tally) add(t *testing.T, s *scenario.Scenario, split *mediation.Result, fit *Fitted, truth map[string]float64) {
	t.Helper()
	count := func(draws []float64, v float64) {
		tl.n++
		if ok, _ := coverage(draws, v); ok {
			tl.in++
		}
	}
	for _, e := range split.Effects {
		if e.Path == "mediated_share" {
			continue
		}
		tv, ok := truth[e.Channel+"/"+e.Path+"/"+e.Window]
		if !ok {
			t.Fatalf("no truth for %s %s %s", e.Channel, e.Path, e.Window)
		}
		count(e.Draws, tv)
	}
	for k := range 2 {
		cs, _ := fit.Stages[k].Layout().Channel("video_spend")
		if cs.Break >= 0 {
			count(stageDraws(fit, k, cs.Break), math.Log(s.Exposure.BreakScale))
		}
		if cs.FreqK >= 0 {
			count(stageDraws(fit, k, cs.FreqK), s.Exposure.Kf)
			count(stageDraws(fit, k, cs.FreqK+1), s.Exposure.Sf)
		}
	}
}

// log prints the count beside its 95% binomial range and, if strict,
// fails outside it.
func (tl *tally) log(t *testing.T, strict bool) {
	lo, hi := score.BinomialRange(tl.n, 0.9, 0.95)
	t.Logf("90%% intervals holding the truth: %d of %d (%.1f%%); 95%% binomial range for independent checks %d to %d (the checks of one fit are not independent, so it is a guide)",
		tl.in, tl.n, 100*float64(tl.in)/float64(tl.n), lo, hi)
	if strict && (tl.in < lo || tl.in > hi) {
		t.Errorf("coverage %d of %d outside %d to %d", tl.in, tl.n, lo, hi)
	}
}

// stageDraws returns the paired draws of position slot of stage k (0
// demand, 1 outcome).
func stageDraws(f *Fitted, k, slot int) []float64 {
	d := f.Inputs().DemandDraws
	if k == 1 {
		d = f.Inputs().OutcomeDraws
	}
	out := make([]float64, len(d.Rows))
	for i, r := range d.Rows {
		out[i] = r[slot]
	}
	return out
}
