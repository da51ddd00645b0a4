package validate

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// handResults builds the records of a small sweep by hand: 10 recovery
// replicates, 2 holdout weeks and 2 stability refits, so that every
// aggregate can be worked out on paper.
func handResults() *Results {
	jobs := []Job{{Index: 0, Check: Reference, Label: "reference fit"}}
	for r := 1; r <= 10; r++ {
		jobs = append(jobs, Job{Index: r, Check: Recovery, Replicate: r})
	}
	jobs = append(jobs, Job{Index: 11, Check: Holdout, Label: "origin 2024-06-03"},
		Job{Index: 12, Check: Stability, Label: "without 2023Q2", Quarter: "2023Q2", Weeks: 13},
		Job{Index: 13, Check: Stability, Label: "seed 1"})
	m := Manifest{Format: Format, Weeks: 104, First: "2023-01-02", Jobs: jobs,
		Settings: Settings{Checks: Checks, Replicates: 10, Origins: 1, Horizon: 2, Chains: 2, Warmup: 10, Draws: 10}}
	for _, j := range jobs {
		m.Ran = append(m.Ran, j.Index)
	}
	res := &Results{Manifest: m}
	add := func(job int, kind, name, path, window, stat string, v float64) {
		res.Records = append(res.Records, Record{job, kind, name, path, window, stat, v})
	}
	eff := func(job int, path string, truth, mean, sd float64) {
		add(job, "effect", "video_spend", path, "all", "truth", truth)
		add(job, "effect", "video_spend", path, "all", "mean", mean)
		add(job, "effect", "video_spend", path, "all", "sd", sd)
		// a normal posterior's quantiles: z = 0.6745 (25/75%), 1.2816
		// (10/90%), 1.6449 (5/95%) (closed form)
		for _, q := range []struct {
			stat string
			z    float64
		}{{"q05", -1.6449}, {"q25", -0.6745}, {"q50", 0}, {"q75", 0.6745}, {"q90", 1.2816}, {"q95", 1.6449}} {
			add(job, "effect", "video_spend", path, "all", q.stat, mean+q.z*sd)
		}
	}
	for r := 1; r <= 10; r++ {
		// via search: truth at z = 0.5 in 8 replicates (inside both
		// intervals), z = 1 in 1 (inside the 90% only), z = 3 in 1
		// (outside both): coverage 50% 0.8, 90% 0.9
		z := 0.5
		switch r {
		case 9:
			z = 1
		case 10:
			z = 3
		}
		eff(r, "via_search", 100, 100+z*10, 10)
		// direct: truth far outside every interval: coverage 0
		eff(r, "direct", 100, 200, 10)
		// a boundary truth: zero with non-negative draws, below q90
		eff(r, "mediated_share", 0, 0.3, 0.1)
		for _, p := range []string{"gamma", "alpha[video_spend]"} {
			add(r, "param", p, "", "", "truth", 1)
			add(r, "param", p, "", "", "rank", float64((r-1)%5*20+3)) // bins 0..4, twice each
			add(r, "param", p, "", "", "width", 20)
		}
	}
	for _, w := range []struct {
		week                 string
		actual, mean, lo, hi float64
		crps, base, bcrps    float64
		baseLo, baseHi       float64
	}{
		{"2024-06-03", 100, 110, 90, 120, 4, 80, 15, 60, 100},
		{"2024-06-10", 200, 180, 170, 195, 6, 260, 50, 250, 270},
	} {
		for _, st := range []struct {
			s string
			v float64
		}{{"actual", w.actual}, {"mean", w.mean}, {"q05", w.lo}, {"q50", w.mean}, {"q95", w.hi}, {"crps", w.crps},
			{"base", w.base}, {"base_q05", w.baseLo}, {"base_q95", w.baseHi}, {"base_crps", w.bcrps}} {
			add(11, "forecast", "outcome", "", w.week, st.s, st.v)
		}
	}
	for job, mean := range map[int]float64{0: 50, 12: 62, 13: 47} {
		add(job, "effect", "video_spend", "via_search", "all", "mean", mean)
		add(job, "effect", "video_spend", "via_search", "all", "sd", 5)
	}
	// keep the records in job order, as Run writes them
	var sorted []Record
	for _, j := range jobs {
		for _, r := range res.Records {
			if r.Job == j.Index {
				sorted = append(sorted, r)
			}
		}
	}
	res.Records = sorted
	return res
}

// TestAggregateByHand checks every aggregate against values worked out by
// hand from handResults.
func TestAggregateByHand(t *testing.T) {
	files, rep, err := Files(handResults())
	if err != nil {
		t.Fatal(err)
	}
	want := []struct {
		check, effect, channel, metric string
		value                          float64
	}{
		{Recovery, "via_search", "video_spend", "coverage_50", 0.8},
		{Recovery, "via_search", "video_spend", "coverage_90", 0.9},
		// bias: (8*5 + 10 + 30)/10 = 8; width: 2*1.6449*10
		{Recovery, "via_search", "video_spend", "bias", 8},
		{Recovery, "via_search", "video_spend", "width_90", 32.898},
		{Recovery, "direct", "video_spend", "coverage_90", 0},
		{Recovery, "mediated_share", "video_spend", "coverage_90", 1},
		// ranks spread evenly over the 5 bins: chi-square 0, p = 1
		{Recovery, "gamma", "", "sbc_rank_p", 1},
		{Recovery, "alpha", "video_spend", "sbc_rank_p", 1},
		// MAPE: (10/100 + 20/200)/2 = 10%; CRPS (4+6)/2; coverage: week 1
		// inside [90, 120], week 2 outside [170, 195]
		{Holdout, "outcome", "", "mape", 10},
		{Holdout, "outcome", "", "crps", 5},
		{Holdout, "outcome", "", "coverage_90_forecast", 0.5},
		// baseline: (20/100 + 60/200)/2 = 25%; CRPS (15+50)/2; week 1 in
		// [60, 100], week 2 not in [250, 270]
		{Holdout, "outcome_baseline", "", "mape", 25},
		{Holdout, "outcome_baseline", "", "crps", 32.5},
		{Holdout, "outcome_baseline", "", "coverage_90_forecast", 0.5},
		// stability: |62-50|/5 = 2.4 and |47-50|/5 = 0.6
		{Stability, "via_search", "video_spend", "max_shift_sd", 2.4},
	}
	for _, w := range want {
		found := false
		for _, r := range rep.Rows {
			if r.Check == w.check && r.Effect == w.effect && r.Channel == w.channel && r.Metric == w.metric {
				found = true
				if !scalar.EqualWithinAbsOrRel(r.Value, w.value, 1e-9, 1e-9) {
					t.Errorf("%s %s %s %s: got %v, want %v", w.check, w.effect, w.channel, w.metric, r.Value, w.value)
				}
			}
		}
		if !found {
			t.Errorf("no row %s %s %s %s", w.check, w.effect, w.channel, w.metric)
		}
	}
	// verdicts: direct never covered is flagged (P(Bin(10, .9) <= 0)
	// = 1e-10); the model beats the baseline on CRPS (5 < 32.5); a 2.4 sd
	// move leaving out 13 of 104 weeks exceeds 3.5 sqrt(13/91) = 1.32
	v := map[string]Verdict{}
	for _, x := range rep.Verdicts {
		v[x.Check] = x
	}
	if x := v[Recovery]; x.OK || !strings.HasPrefix(x.Headline, "over-confident: 90% intervals of video direct cover 0%") {
		t.Errorf("recovery verdict %q", x.Headline)
	}
	if x := v[Holdout]; !strings.HasPrefix(x.Headline, "forecasts beat the seasonal baseline") {
		t.Errorf("holdout verdict %q", x.Headline)
	}
	if x := v[Stability]; x.OK || x.Headline != "unstable: video via search moved 2.4 sd (without 2023Q2)" {
		t.Errorf("stability verdict %q", x.Headline)
	}
	if got := swingAt(13, 104); !scalar.EqualWithinAbsOrRel(got, 3.5*math.Sqrt(13.0/91), 1e-12, 1e-12) {
		t.Errorf("swingAt(13, 104) = %v", got)
	}
	if got := swingAt(0, 104); got != Swing {
		t.Errorf("swingAt(0, 104) = %v, want %v", got, Swing)
	}
	if !strings.HasPrefix(string(files[TableFile]), "check,effect,channel,metric,value\nrecovery,") {
		t.Errorf("validation.csv starts %q", string(files[TableFile])[:60])
	}
}

// TestSeasonalBaseline checks the baseline on series it must forecast
// exactly: a pure yearly pattern, and one growing by a constant factor c
// each week (level ratio c^52, so x[t-52] c^52 = x[t]).
func TestSeasonalBaseline(t *testing.T) {
	for _, c := range []float64{1, 1.004} {
		x := make([]float64, 120)
		for i := range x {
			x[i] = (10 + 3*math.Sin(2*math.Pi*float64(i)/52) + float64(i%52%7)) * math.Pow(c, float64(i))
		}
		origin, h := 110, 8
		point, rel := seasonalBaseline(x[:origin], origin, h)
		for i, p := range point {
			if !scalar.EqualWithinAbsOrRel(p, x[origin+i], 1e-9, 1e-9) {
				t.Errorf("c = %v, week %d: forecast %v, want %v", c, origin+i, p, x[origin+i])
			}
		}
		// backtests from origins 60..102, 8 weeks each
		if len(rel) != 43*8 {
			t.Errorf("c = %v: %d backtest errors, want %d", c, len(rel), 43*8)
		}
		for _, r := range rel {
			if math.Abs(r) > 1e-9 {
				t.Fatalf("c = %v: backtest error %v, want 0", c, r)
			}
		}
	}
}
