package validate

import (
	"context"
	"os"
	"strconv"
	"strings"
	"testing"

	"spillway/funnel/scenario"
	"spillway/funnel/validate/score"
)

// testScenario returns 104 weeks of the demo scenario as a sweep input and
// the scenario's true parameters (model units of that data).
func testScenario(t *testing.T, seed uint64) (Input, *Truth) {
	t.Helper()
	sc, err := scenario.Named("demo", seed, 104, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := sc.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	return Input{Series: res.Data.National(), Spec: res.Data.Spec, Tool: "test"},
		&Truth{Demand: res.Demand, Outcome: res.Outcome}
}

// recoverySettings is a light recovery sweep for the tests: short chains
// (2 x (150 + 150)) on 104 weeks.
func recoverySettings(replicates int, seed uint64) Settings {
	return Settings{Checks: []string{Recovery}, Replicates: replicates, Chains: 2, Warmup: 150, Draws: 150, Seed: seed}
}

func runSweep(t *testing.T, sw *Sweep) *Report {
	t.Helper()
	res, err := sw.Run(context.Background(), Shard{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	_, rep, err := Files(res)
	if err != nil {
		t.Fatal(err)
	}
	return rep
}

func rowValue(t *testing.T, rep *Report, check, effect, channel, metric string) float64 {
	t.Helper()
	for _, r := range rep.Rows {
		if r.Check == check && r.Effect == effect && r.Channel == channel && r.Metric == metric {
			return r.Value
		}
	}
	t.Fatalf("no row %s/%s/%s/%s", check, effect, channel, metric)
	return 0
}

// pooled returns the whole-period coverage of the upper channels' effects
// at level metric, pooled over channels and paths.
func pooled(t *testing.T, rep *Report, metric string) float64 {
	sum, n := 0.0, 0
	for _, r := range rep.Rows {
		// the borrowed share is checked on its own
		if r.Check == Recovery && r.Metric == metric && !strings.HasSuffix(r.Effect, "_quarterly") && r.Effect != "borrowed_share" {
			sum += r.Value
			n++
		}
	}
	if n == 0 {
		t.Fatal("no coverage rows")
	}
	return sum / float64(n)
}

// TestCoverageHonest checks that on data simulated from the model itself
// (the demo scenario's true parameters, new noise per replicate) the
// intervals cover the true effects at a binomial-plausible rate, and that
// on data whose video effect on branded search drifts from 0.2x to 1.8x
// of its mean over the weeks (a drift the default model lacks) the check
// reports over-confident intervals.
//
// Plausible range: effects of different channels are nearly independent,
// while the paths of one channel share its errors, so the pooled coverage
// is judged as a binomial proportion over replicates x channels trials
// (common practice for a design effect; conservative for the paths). A
// calibrated model falls below the 0.1% lower tail for 90% intervals, or
// outside the 0.1% tails for 50% intervals, once in 1000 sweeps.
func TestCoverageHonest(t *testing.T) {
	if testing.Short() {
		t.Skip("coverage over replicate refits; skipped with -short")
	}
	// 20 replicates for the well-specified sweep (the borrowed share has
	// one trial per replicate, so its 50% coverage needs that many to be
	// judged at all: with 8, even 0 of 8 is not below the 0.1% tail), 8 for
	// the drifting one, whose failure is gross
	const R, Rbad = 20, 8
	in, truth := testScenario(t, 21)
	in.Truth = truth
	sw, err := New(in, recoverySettings(R, 5))
	if err != nil {
		t.Fatal(err)
	}
	good := runSweep(t, sw)
	t.Log("well specified:\n" + good.Text())
	nEff := R * len(in.Spec.Upper)
	c90, c50 := pooled(t, good, "coverage_90"), pooled(t, good, "coverage_50")
	if p := score.BinomialLowerTail(c90*float64(nEff), nEff, 0.9); p < 0.001 {
		t.Errorf("well specified: pooled 90%% coverage %.2f is implausibly low for %d trials (P = %.2g)", c90, nEff, p)
	}
	if lo, hi := score.BinomialLowerTail(c50*float64(nEff), nEff, 0.5), score.BinomialUpperTail(c50*float64(nEff), nEff, 0.5); lo < 0.001 || hi < 0.001 {
		t.Errorf("well specified: pooled 50%% coverage %.2f is implausible for %d trials (lower tail %.2g, upper tail %.2g)", c50, nEff, lo, hi)
	}
	for _, b := range good.Coverage {
		if b.Flagged {
			t.Errorf("well specified: %s flagged (90%% coverage %.2f)", b.Label, b.Cover90)
		}
	}
	// Paid search's borrowed share, one trial per replicate. Its truth is
	// the same estimand the estimator targets: both run the projection of
	// the stage without queries on the replicate's own queries, the truth
	// at the true parameters, the estimate at each posterior draw. That is
	// a sample quantity (with the same true parameters it ranged from -1.00
	// to 0.46 over 40 replicates, sd 0.36, against 0.12 on the noise-free
	// expected queries), kept because paid search's spend follows the
	// queries actually searched, noise included, and the stage without
	// queries credits it with that too. Over 40 replicates (SPILLWAY_LONG,
	// TestBorrowedCoverageLong) its 50% intervals covered 16 and its 90%
	// intervals all 40: inside the binomial range at 50%, conservative at
	// 90%. Asserted: 90% coverage not implausibly low, 50% coverage inside
	// both 0.1% tails (with 20 trials: 3 to 17 covered).
	b50, b90 := rowValue(t, good, Recovery, "borrowed_share", "search_spend", "coverage_50"), rowValue(t, good, Recovery, "borrowed_share", "search_spend", "coverage_90")
	if p := score.BinomialLowerTail(b90*R, R, 0.9); p < 0.001 {
		t.Errorf("well specified: paid search's borrowed share: 90%% coverage %.2f is implausibly low for %d replicates (P = %.2g)", b90, R, p)
	}
	if lo, hi := score.BinomialLowerTail(b50*R, R, 0.5), score.BinomialUpperTail(b50*R, R, 0.5); lo < 0.001 || hi < 0.001 {
		t.Errorf("well specified: paid search's borrowed share: 50%% coverage %.2f is implausible for %d replicates (lower tail %.2g, upper tail %.2g)", b50, R, lo, hi)
	}
	t.Logf("borrowed share: 50%% intervals cover %.2f, 90%% intervals %.2f of %d replicates", b50, b90, R)

	// the same data, truth and seeds, with video's demand coefficient
	// ramping linearly from 0.2x to 1.8x over the weeks
	sw, err = New(in, recoverySettings(Rbad, 5))
	if err != nil {
		t.Fatal(err)
	}
	T := len(in.Series.Weeks)
	ramp := make([]float64, T)
	for i := range ramp {
		ramp[i] = 0.2 + 1.6*float64(i)/float64(T-1)
	}
	sw.gen.ramp = [][]float64{ramp}
	sw.gen.name += ", video demand effect drifting 0.2x to 1.8x"
	bad := runSweep(t, sw)
	t.Log("drifting video effect:\n" + bad.Text())
	v := bad.Verdicts[0]
	if v.OK || !strings.HasPrefix(v.Headline, "over-confident") {
		t.Errorf("drifting video effect: verdict %q, want over-confident", v.Headline)
	}
	q := rowValue(t, bad, Recovery, "via_search_quarterly", "video_spend", "coverage_90")
	if q > 0.6 {
		t.Errorf("drifting video effect: 90%% coverage of video's quarterly via-search effects %.2f, want well below 0.9", q)
	}
	flagged := false
	for _, b := range bad.Coverage {
		flagged = flagged || (b.Flagged && strings.HasPrefix(b.Label, "video via search"))
	}
	if !flagged {
		t.Errorf("drifting video effect: video's via-search coverage is not flagged: %+v", bad.Coverage)
	}
}

// TestBorrowedCoverageLong measures the borrowed share's coverage over
// many replicates (SPILLWAY_LONG=1; SPILLWAY_REPLICATES sets how many, 40
// by default): the figures TestCoverageHonest's assertion rests on. With
// 40, a calibrated 50% coverage falls in 35%-65% and a 90% one in 80%-98%
// in 95% of sweeps (binomial). Measured on 2026-12-02: 50% intervals
// covered 16 of 40, 90% intervals 40 of 40 (wide, not over-confident),
// mean error +0.22 (+0.6 posterior sd). It asserts what TestCoverageHonest
// asserts, with more replicates.
func TestBorrowedCoverageLong(t *testing.T) {
	if os.Getenv("SPILLWAY_LONG") == "" {
		t.Skip("set SPILLWAY_LONG=1: many replicate refits")
	}
	R := 40
	if s := os.Getenv("SPILLWAY_REPLICATES"); s != "" {
		R, _ = strconv.Atoi(s)
	}
	in, truth := testScenario(t, 21)
	in.Truth = truth
	sw, err := New(in, recoverySettings(R, 5))
	if err != nil {
		t.Fatal(err)
	}
	rep := runSweep(t, sw)
	t.Log("\n" + rep.Text())
	for _, r := range rep.Rows {
		if r.Effect == "borrowed_share" {
			t.Logf("borrowed share %s: %.3f", r.Metric, r.Value)
		}
	}
	b50, b90 := rowValue(t, rep, Recovery, "borrowed_share", "search_spend", "coverage_50"), rowValue(t, rep, Recovery, "borrowed_share", "search_spend", "coverage_90")
	if p := score.BinomialLowerTail(b90*float64(R), R, 0.9); p < 0.001 {
		t.Errorf("borrowed share: 90%% coverage %.2f is implausibly low for %d replicates (P = %.2g)", b90, R, p)
	}
	if lo, hi := score.BinomialLowerTail(b50*float64(R), R, 0.5), score.BinomialUpperTail(b50*float64(R), R, 0.5); lo < 0.001 || hi < 0.001 {
		t.Errorf("borrowed share: 50%% coverage %.2f is implausible for %d replicates (lower tail %.2g, upper tail %.2g)", b50, R, lo, hi)
	}
}
