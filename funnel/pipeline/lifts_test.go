package pipeline

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"spillway/funnel/lifts"
)

// TestLeaveTestOut checks the lift-test check against the conjugate normal
// model, where leaving a test out is exact (the textbook normal-normal
// update, e.g. Gelman et al., Bayesian Data Analysis, 3rd ed., section
// 2.5): the rest of the data give the lift L ~ Normal(m0, v0), the test
// adds Normal(estimate | L, se), the posterior with it is Normal(m1, v1),
// 1/v1 = 1/v0 + 1/se^2, m1 = v1 (m0/v0 + estimate/se^2), and the test's
// predictive distribution from the rest is Normal(m0, v0 + se^2).
func TestLeaveTestOut(t *testing.T) {
	const S = 4000
	m0, sd0 := 100.0, 20.0
	post := func(est, se float64, seed uint64) []float64 {
		v1 := 1 / (1/(sd0*sd0) + 1/(se*se))
		m1 := v1 * (m0/(sd0*sd0) + est/(se*se))
		rng := rand.New(rand.NewPCG(seed, 1))
		d := make([]float64, S)
		for i := range d {
			d[i] = m1 + math.Sqrt(v1)*rng.NormFloat64()
		}
		return d
	}
	exactP := func(est, se float64) float64 {
		return 2 * distuv.UnitNormal.CDF(-math.Abs(est-m0)/math.Sqrt(sd0*sd0+se*se))
	}

	// a test that agrees: importance weights are reliable and recover the
	// rest of the data's mean, sd and the predictive tail probability
	agree := lifts.Test{Estimate: 110, SE: 15}
	c := loCheck(agree, post(agree.Estimate, agree.SE, 1))
	if c.K > MaxParetoK {
		t.Fatalf("agreeing test: Pareto k %.2f, want <= %.1f", c.K, MaxParetoK)
	}
	// Monte Carlo tolerances: a few standard errors of 4000 draws
	t.Logf("agreeing test: k %.2f, rest %.2f (sd %.2f), p %.3f (exact %.3f)", c.K, c.Without, c.WithoutSD, c.P, exactP(agree.Estimate, agree.SE))
	if math.Abs(c.Without-m0) > 3 || math.Abs(c.WithoutSD-sd0)/sd0 > 0.15 { // the sd: the smoothing truncates the weights tail (here 12% low)
		t.Errorf("agreeing test: rest of the data %.2f (sd %.2f), want %.0f (sd %.0f)", c.Without, c.WithoutSD, m0, sd0)
	}
	if p := exactP(agree.Estimate, agree.SE); math.Abs(c.P-p) > 0.04 {
		t.Errorf("agreeing test: p %.3f, want %.3f", c.P, p)
	}
	if c.Verdict() != LiftAgrees {
		t.Errorf("agreeing test: verdict %s", c.Verdict())
	}

	// a test five times the rest of the data's value, and precise: the
	// posterior with it sits far from the one without, the importance
	// ratios have a heavy tail, and the check asks for a refit
	far := lifts.Test{Estimate: 500, SE: 20}
	c = loCheck(far, post(far.Estimate, far.SE, 2))
	if !(c.K > MaxParetoK) {
		t.Errorf("a test 5x the rest: Pareto k %.2f, want > %.1f (a refit)", c.K, MaxParetoK)
	}

	// the refit's draws are the rest of the data's posterior itself
	rng := rand.New(rand.NewPCG(3, 1))
	rest := make([]float64, S)
	for i := range rest {
		rest[i] = m0 + sd0*rng.NormFloat64()
	}
	c = refitCheck(far, rest)
	if c.P > 1e-6 || c.Verdict() != LiftContradicts {
		t.Errorf("a test 5x the rest, refitted: p %.3g (exact %.3g), verdict %s", c.P, exactP(far.Estimate, far.SE), c.Verdict())
	}
	near := lifts.Test{Estimate: 140, SE: 20}
	c = refitCheck(near, rest)
	if p := exactP(near.Estimate, near.SE); math.Abs(c.P-p) > 0.02 || c.Verdict() != LiftAgrees {
		t.Errorf("refitted test at z = 1.41: p %.3f, want %.3f; verdict %s", c.P, p, c.Verdict())
	}

	// the rest of the data say almost nothing (sd 50 times the test's):
	// unchecked, unless the test is far outside even that
	wide := make([]float64, S)
	for i := range wide {
		wide[i] = m0 + 1000*rng.NormFloat64()
	}
	if c = refitCheck(lifts.Test{Estimate: 300, SE: 20}, wide); c.Verdict() != LiftUnchecked {
		t.Errorf("uninformed rest: verdict %s (p %.3f, sd %.0f)", c.Verdict(), c.P, c.WithoutSD)
	}
	if c = refitCheck(lifts.Test{Estimate: 5000, SE: 20}, wide); c.Verdict() != LiftContradicts {
		t.Errorf("a test 5 sd outside an uninformed rest: verdict %s (p %.3g)", c.Verdict(), c.P)
	}
}
