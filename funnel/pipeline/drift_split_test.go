package pipeline

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/model"
)

// oracleLS regresses y on the columns by least squares and returns the
// coefficient of column j and its standard error (the usual OLS formula,
// s^2 (X'X)^-1).
func oracleLS(t *testing.T, y []float64, cols [][]float64, j int) (b, se float64) {
	t.Helper()
	X := mat.NewDense(len(y), len(cols), nil)
	for k, c := range cols {
		for i, v := range c {
			X.Set(i, k, v)
		}
	}
	yv := mat.NewVecDense(len(y), append([]float64(nil), y...))
	var beta, r mat.VecDense
	if err := beta.SolveVec(X, yv); err != nil {
		t.Fatal(err)
	}
	r.MulVec(X, &beta)
	r.SubVec(yv, &r)
	s2 := mat.Dot(&r, &r) / float64(len(y)-len(cols))
	var xtx, inv mat.Dense
	xtx.Mul(X.T(), X)
	if err := inv.Inverse(&xtx); err != nil {
		t.Fatal(err)
	}
	return beta.AtVec(j), math.Sqrt(s2 * inv.At(j, j))
}

// oracleZ returns, for one replicate of the fixed-effects scenario, how far
// the data put gamma and video's demand coefficient alpha from their truth
// when every transform is known: each stage's least-squares fit on its
// true regressors (the true adstock and saturation of every channel), as
// z = (estimate - truth) / se. No prior, no sampler, no two-stage split
// and no effect definition enter: only the replicate's data.
func oracleZ(t *testing.T, seed uint64) (zGamma, zAlpha float64) {
	_, tm := driftReplicate(t, "fixed", seed, 0)
	sc := tm.sc
	one := make([]float64, sc.T)
	for i := range one {
		one[i] = 1
	}
	base := [][]float64{one, sc.Tau, sc.Season[0], sc.Season[1], sc.Season[2], sc.Season[3], sc.Controls[0]}
	demand := append([][]float64(nil), base...)
	for c, col := range sc.UpperNames {
		demand = append(demand, tm.media(tm.dem, "alpha", "lam", "K", "S", col).Response(nil, sc.Upper[c]))
	}
	a, se := oracleLS(t, sc.Queries, demand, len(base)) // video's column
	zAlpha = (a - tm.dem["alpha[video_spend]"]) / se
	outcome := append(append([][]float64(nil), base...), sc.Queries,
		tm.media(tm.out, "beta", "lam_s", "K_s", "S_s", "search_spend").Response(nil, sc.Search[0]))
	for c, col := range sc.UpperNames {
		outcome = append(outcome, tm.media(tm.out, "delta", "lam2", "K2", "S2", col).Response(nil, sc.Upper[c]))
	}
	g, se := oracleLS(t, sc.Outcome, outcome, len(base))
	return (g - tm.out["gamma"]) / se, zAlpha
}

// TestSplitMissIsTheReplicate pins down why TestDriftRecovery's replicate
// (the demo scenario at seed 11) misses video's quarterly effects together,
// via search too high and direct too low, with the default model as with
// the drift model: its data put gamma high. With every transform known,
// least squares on that replicate's outcome stage gives gamma 1.77 standard
// errors above the truth (the default model's posterior: 0.547 [0.420,
// 0.669] against 0.385), while video's demand coefficient is on target.
// Video's via-search effect is gamma times its lift of queries, and its
// direct effect is what the outcome stage leaves to video once gamma has
// taken its share, so a high gamma moves both paths, in every quarter,
// the opposite ways. Over 40 replicates the same oracle z is centred and
// of unit spread: the estimand is recovered and the replicate is one
// draw in its tail (about 1 in 26 lies that far above the truth), not a
// bias of the simulator, the truth's definition or the prior.
func TestSplitMissIsTheReplicate(t *testing.T) {
	zg, za := oracleZ(t, 11)
	t.Logf("seed 11: gamma z %.2f, video's alpha z %.2f", zg, za)
	if zg < 1.5 || math.Abs(za) > 1 {
		t.Errorf("seed 11: oracle z of gamma %.2f (want above 1.5), of video's alpha %.2f (want within 1)", zg, za)
	}
	const R = 40
	var sum, ss float64
	for s := uint64(1); s <= R; s++ {
		z, _ := oracleZ(t, s)
		sum += z
		ss += z * z
	}
	mean := sum / R
	sd := math.Sqrt((ss - R*mean*mean) / (R - 1))
	t.Logf("gamma's oracle z over %d replicates: mean %.3f, sd %.3f", R, mean, sd)
	// mean within 3 standard errors of 0 (3/sqrt(40) = 0.47); the sd of 40
	// standard normals lies in [0.7, 1.3] with probability about 0.99
	if math.Abs(mean) > 0.47 || sd < 0.7 || sd > 1.3 {
		t.Errorf("gamma's oracle z over %d replicates: mean %.3f, sd %.3f: the simulator's gamma is not what the data estimate", R, mean, sd)
	}
}

// stepOracleZ returns, for one replicate of the step scenario (104 weeks),
// gamma's oracle z (as oracleZ: true transforms, least squares on the
// outcome stage) when video's direct coefficient is allowed to change over
// time in three ways: "smooth", any combination of a constant and the
// drift basis's sine functions (model.NewBasis's M frequencies, with no
// prior: more freedom than the drift's length-scale prior gives);
// "smooth3", the three lowest frequencies only (about what the prior's
// median length-scale, 46 weeks, leaves: the weights of the fourth and
// higher are below 3% of the first's); "fixed", a constant; "jump",
// the same plus a step at the true week; "true", the true multiplier.
func stepOracleZ(t *testing.T, seed uint64, how string) float64 {
	_, tm := driftReplicate(t, "step", seed, calibWeeks)
	sc := tm.sc
	one := make([]float64, sc.T)
	for i := range one {
		one[i] = 1
	}
	cols := [][]float64{one, sc.Tau, sc.Season[0], sc.Season[1], sc.Season[2], sc.Season[3], sc.Controls[0], sc.Queries,
		tm.media(tm.out, "beta", "lam_s", "K_s", "S_s", "search_spend").Response(nil, sc.Search[0])}
	gammaCol := 7
	for c, col := range sc.UpperNames {
		h := tm.media(tm.out, "delta", "lam2", "K2", "S2", col).Response(nil, sc.Upper[c])
		if col != "video_spend" {
			cols = append(cols, h)
			continue
		}
		times := func(m func(t int) float64) []float64 {
			x := make([]float64, sc.T)
			for i := range x {
				x[i] = h[i] * m(i)
			}
			return x
		}
		if how == "true" {
			cols = append(cols, times(func(t int) float64 { return tm.drift.Direct[c][t] }))
			continue
		}
		b := model.NewBasis(sc.T, nil)
		half := float64(sc.T-1) / 2
		cols = append(cols, h)
		M := b.M
		switch how {
		case "fixed":
			M = 0
		case "smooth3":
			M = 3
		}
		for j := 1; j <= M; j++ {
			cols = append(cols, times(func(t int) float64 { return math.Sin(math.Pi * float64(j) * (float64(t) - half + b.L) / (2 * b.L)) }))
		}
		if how == "jump" {
			cols = append(cols, times(func(t int) float64 {
				if float64(t)/float64(sc.T-1) < 0.5 {
					return 0
				}
				return 1
			}))
		}
	}
	g, se := oracleLS(t, sc.Outcome, cols, gammaCol)
	return (g - tm.out["gamma"]) / se
}

// TestStepMissIsTheSmoothDrift tests the likely cause of the drift model's
// missed gamma under a step change (5 of 10 replicates covered in
// TestDriftCalibration): a smooth multiplier cannot follow video's direct
// effect across the step, and what it misses moves with the queries, which
// step in the same week (video's lift of them steps too), so gamma takes
// it. With every transform known and video's direct coefficient free to
// follow any smooth curve of the drift basis's frequencies, least squares
// puts gamma above its truth over replicates; with a step at the true week
// added, or the true multiplier, it does not. Measured (seeds 101-140):
// mean z 1.68 with a constant coefficient, 0.58 with the three lowest
// frequencies, 0.40 with all of the basis's, -0.07 with the step added,
// -0.14 with the true multiplier (sd 0.8-0.95 each).
func TestStepMissIsTheSmoothDrift(t *testing.T) {
	const R = 40
	for _, how := range []string{"fixed", "smooth3", "smooth", "jump", "true"} {
		var sum, ss float64
		for s := uint64(1); s <= R; s++ {
			z := stepOracleZ(t, 100+s, how)
			sum += z
			ss += z * z
		}
		mean := sum / R
		sd := math.Sqrt((ss - R*mean*mean) / (R - 1))
		t.Logf("step scenario, video's direct coefficient %s: gamma's oracle z over %d replicates: mean %.3f, sd %.3f", how, R, mean, sd)
		// the mean of 40 z of sd about 1 has a standard error of about
		// 0.16: 0.47 is 3 of them
		switch how {
		case "fixed", "smooth3":
			if mean < 0.47 {
				t.Errorf("%s: gamma's oracle z has mean %.3f: the step no longer moves gamma", how, mean)
			}
		case "jump", "true":
			if math.Abs(mean) > 0.47 {
				t.Errorf("%s: gamma's oracle z has mean %.3f: a step at the true week does not bring gamma back", how, mean)
			}
		}
	}
}
