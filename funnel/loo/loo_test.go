package loo

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// TestPSISConjugate compares PSIS-LOO with the exact leave-one-out
// predictive densities of y_i ~ Normal(mu, 1) under a flat prior on mu
// (textbook conjugate algebra: mu | y_-i ~ Normal(mean(y_-i), 1/(n-1)), so
// y_i | y_-i ~ Normal(mean(y_-i), 1 + 1/(n-1))). One far outlier makes its
// importance ratios heavy-tailed, so the smoothing is exercised.
func TestPSISConjugate(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	n := 30
	y := make([]float64, n)
	var sum float64
	for i := range y {
		y[i] = rng.NormFloat64()
	}
	y[0] = 4.5
	for _, v := range y {
		sum += v
	}
	S := 4000
	ll := make([][]float64, S)
	for s := range ll {
		mu := sum/float64(n) + rng.NormFloat64()/math.Sqrt(float64(n))
		ll[s] = make([]float64, n)
		for i, v := range y {
			ll[s][i] = -0.5*(v-mu)*(v-mu) - 0.5*math.Log(2*math.Pi)
		}
	}
	r := PSIS(ll)
	var exact float64
	for i, v := range y {
		m := (sum - v) / float64(n-1)
		s2 := 1 + 1/float64(n-1)
		e := -0.5*(v-m)*(v-m)/s2 - 0.5*math.Log(2*math.Pi*s2)
		exact += e
		if math.Abs(r.Pointwise[i]-e) > 0.02 {
			t.Errorf("obs %d (y %.2f): PSIS %.4f, exact %.4f, k %.2f", i, v, r.Pointwise[i], e, r.K[i])
		}
	}
	if math.Abs(r.ELPD-exact) > 0.1 {
		t.Errorf("elpd %.3f, exact %.3f", r.ELPD, exact)
	}
	if r.MaxK() > 0.7 {
		t.Errorf("max k %.2f on a well-behaved posterior", r.MaxK())
	}
	t.Logf("elpd %.3f (exact %.3f), se %.3f, max k %.2f", r.ELPD, exact, r.SE, r.MaxK())
}

// TestGPDFit recovers a known shape from generalized Pareto draws (by
// inversion of the quantile function).
func TestGPDFit(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, k := range []float64{0.2, 0.7} {
		x := make([]float64, 2000)
		for i := range x {
			x[i] = gpdQuantile(rng.Float64(), k, 2)
		}
		sort.Float64s(x)
		kh, sh := gpdFit(x)
		if math.Abs(kh-k) > 0.1 || math.Abs(sh-2) > 0.3 {
			t.Errorf("k %.2f sigma 2: fitted %.3f, %.3f", k, kh, sh)
		}
	}
}
