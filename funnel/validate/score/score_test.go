package score

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/stat/distuv"
)

// crpsNormalTests hold CRPS(N(mu, sigma²), y) from R 4.2.2 evaluating the
// closed form sigma*(z*(2*pnorm(z)-1)+2*dnorm(z)-1/sqrt(pi)); the first
// value also appears in the R package scoringRules' own tests
// (tests/testthat/test-crps_norm.R: crps_norm(-3) = 2.43657473).
var crpsNormalTests = []struct {
	mu, sigma, y, want float64
}{
	{0, 1, -3, 2.43657472508633965},
	{0, 1, 0, 0.23369497725510913}, // = 2 phi(0) - 1/sqrt(pi), closed form
	{0.4, 2.5, 1.3, 0.71211664778863559},
	{12, 0.7, 10, 1.60594556286154799},
}

func TestCRPSNormal(t *testing.T) {
	for _, c := range crpsNormalTests {
		got := CRPSNormal(c.mu, c.sigma, c.y)
		if !scalar.EqualWithinAbsOrRel(got, c.want, 1e-13, 1e-13) {
			t.Errorf("CRPSNormal(%v, %v, %v): got %v, want %v", c.mu, c.sigma, c.y, got, c.want)
		}
		// The definition, CRPS = ∫ (F(x) - 1{x >= y})² dx, integrated
		// numerically (Gneiting and Raftery 2007, eq. for the CRPS), is
		// an independent check of the closed form.
		n := distuv.Normal{Mu: c.mu, Sigma: c.sigma}
		lo, hi := c.mu-12*c.sigma, c.mu+12*c.sigma
		left := quad.Fixed(func(x float64) float64 { f := n.CDF(x); return f * f }, lo, c.y, 2000, nil, 0)
		right := quad.Fixed(func(x float64) float64 { f := 1 - n.CDF(x); return f * f }, c.y, hi, 2000, nil, 0)
		if !scalar.EqualWithinAbsOrRel(left+right, c.want, 1e-8, 1e-8) {
			t.Errorf("integral of the definition at %v: got %v, want %v", c, left+right, c.want)
		}
	}
}

// TestCRPSEmpiricalConverges checks that the score of n draws approaches
// the closed form as n grows. With draws at the normal quantiles
// (i - 1/2)/n the estimate is deterministic and its error must fall with n
// (about as 1/n); with random draws it must lie within Monte Carlo error
// (the score's spread is below 2 sigma per draw, so 1e5 draws put the
// estimate within 0.02 sigma at five standard errors).
func TestCRPSEmpiricalConverges(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	for _, c := range crpsNormalTests {
		want := CRPSNormal(c.mu, c.sigma, c.y)
		n := distuv.Normal{Mu: c.mu, Sigma: c.sigma}
		prev := math.Inf(1)
		for _, size := range []int{100, 1000, 10000, 100000} {
			x := make([]float64, size)
			for i := range x {
				x[i] = n.Quantile((float64(i) + 0.5) / float64(size))
			}
			err := math.Abs(CRPSSorted(x, c.y) - want)
			if err > 2*c.sigma/float64(size) || err >= prev {
				t.Errorf("%v, %d quantile draws: |error| %v, want below %v and below %v (fewer draws)", c, size, err, 2*c.sigma/float64(size), prev)
			}
			prev = err
		}
		x := make([]float64, 100000)
		for i := range x {
			x[i] = c.mu + c.sigma*rng.NormFloat64()
		}
		if got := CRPS(x, c.y); math.Abs(got-want) > 0.02*c.sigma {
			t.Errorf("%v, 1e5 random draws: got %v, want %v within %v", c, got, want, 0.02*c.sigma)
		}
	}
}

func TestCRPSSmallCases(t *testing.T) {
	// one draw: the absolute error (definition)
	if got := CRPS([]float64{3}, 1); got != 2 {
		t.Errorf("CRPS of one draw: got %v, want 2", got)
	}
	// two draws {0, 2} and y = 1: E|X-y| = 1, E|X-X'| = (0+2+2+0)/4 = 1,
	// so CRPS = 1 - 0.5 (by hand from the definition)
	if got := CRPS([]float64{2, 0}, 1); got != 0.5 {
		t.Errorf("CRPS({0,2}, 1): got %v, want 0.5", got)
	}
	x := []float64{5, 1, 3}
	CRPS(x, 2)
	if x[0] != 5 || x[1] != 1 || x[2] != 3 {
		t.Errorf("CRPS modified its draws: %v", x)
	}
	// brute force E|X-X'| over all pairs
	rng := rand.New(rand.NewPCG(2, 2))
	d := make([]float64, 37)
	for i := range d {
		d[i] = rng.ExpFloat64()
	}
	var a, b float64
	for _, u := range d {
		a += math.Abs(u - 0.7)
		for _, v := range d {
			b += math.Abs(u - v)
		}
	}
	n := float64(len(d))
	want := a/n - 0.5*b/(n*n)
	if got := CRPS(d, 0.7); !scalar.EqualWithinAbsOrRel(got, want, 1e-13, 1e-13) {
		t.Errorf("CRPS against the pairwise definition: got %v, want %v", got, want)
	}
}

// Reference values from R 4.2.2: pchisq(x, 4, lower.tail=FALSE) and
// pbinom(k, n, 0.9).
func TestTails(t *testing.T) {
	chi, p := RankUniformity([]int{4, 4, 4, 4, 4})
	if chi != 0 || p != 1 {
		t.Errorf("flat counts: chi2 %v p %v, want 0 and 1", chi, p)
	}
	// counts {8,6,2,2,2}: want 4; chi2 = (16+4+4+4+4)/4 = 8 (by hand);
	// R: pchisq(8, 4, lower.tail=FALSE) = 0.09157819444367
	chi, p = RankUniformity([]int{8, 6, 2, 2, 2})
	if chi != 8 || !scalar.EqualWithinAbsOrRel(p, 0.09157819444367, 1e-10, 1e-10) {
		t.Errorf("counts {8,6,2,2,2}: chi2 %v p %v, want 8 and 0.0915781944", chi, p)
	}
	for _, c := range []struct {
		k    float64
		n    int
		want float64
	}{
		{13, 20, 2.3860894089661193e-03},
		{14, 20, 1.1253134164508977e-02},
		{2, 8, 2.3409999999999967e-05},
		{4, 8, 5.0243499999999943e-03},
		{4.6, 8, 5.0243499999999943e-03}, // fractional counts use floor
	} {
		if got := BinomialLowerTail(c.k, c.n, 0.9); !scalar.EqualWithinAbsOrRel(got, c.want, 1e-12, 1e-12) {
			t.Errorf("BinomialLowerTail(%v, %d, 0.9): got %v, want %v", c.k, c.n, got, c.want)
		}
	}
	// P(X >= 20) = 0.9^20 (closed form)
	if got := BinomialUpperTail(20, 20, 0.9); !scalar.EqualWithinAbsOrRel(got, math.Pow(0.9, 20), 1e-12, 1e-12) {
		t.Errorf("BinomialUpperTail(20, 20): got %v, want 0.9^20", got)
	}
}

// TestRanksCalibration runs simulation-based calibration on a conjugate
// normal model, where the exact posterior is known (textbook): theta ~
// N(0, 1), y | theta ~ N(theta, 1), theta | y ~ N(y/2, 1/2). Ranks from
// the exact posterior must look uniform; from a posterior half as wide
// (over-confident) they must pile up at the ends and fail the test; and
// with autocorrelated draws (an AR(1) chain around the right posterior)
// the thinning must keep the test honest.
func TestRanksCalibration(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	const reps, n = 400, 1000
	run := func(scale, rho float64) (float64, []int) {
		counts := make([]int, SBCBins)
		draws := make([]float64, n)
		for r := 0; r < reps; r++ {
			theta := rng.NormFloat64()
			y := theta + rng.NormFloat64()
			m, s := y/2, math.Sqrt(0.5)*scale
			z := rng.NormFloat64()
			for i := range draws {
				z = rho*z + math.Sqrt(1-rho*rho)*rng.NormFloat64()
				draws[i] = m + s*z
			}
			ess := float64(n) * (1 - rho) / (1 + rho) // AR(1) effective sample size (textbook)
			rank, w := ThinnedRank(draws, ess, theta)
			counts[rank/w]++
		}
		_, p := RankUniformity(counts)
		return p, counts
	}
	if p, c := run(1, 0); p < 0.001 {
		t.Errorf("exact posterior: ranks %v fail uniformity, p = %v", c, p)
	}
	if p, c := run(1, 0.9); p < 0.001 {
		t.Errorf("exact posterior with AR(1) draws: ranks %v fail uniformity, p = %v", c, p)
	}
	if p, c := run(0.5, 0); p > 1e-6 {
		t.Errorf("over-confident posterior: ranks %v pass uniformity, p = %v", c, p)
	}
}

func TestThinnedRankWidth(t *testing.T) {
	x := make([]float64, 1000)
	for i := range x {
		x[i] = float64(i)
	}
	for _, c := range []struct {
		ess       float64
		wantWidth int
	}{{5000, MaxPerBin}, {1000, MaxPerBin}, {60, 12}, {3, 1}} {
		r, w := ThinnedRank(x, c.ess, 1e9)
		if w != c.wantWidth || r != SBCBins*w-1 {
			t.Errorf("ess %v: rank %d width %d, want width %d and rank %d", c.ess, r, w, c.wantWidth, SBCBins*c.wantWidth-1)
		}
	}
	// the kept draws are evenly spread: truth at the median ranks mid-way
	r, w := ThinnedRank(x, 1000, 499.5)
	if r != (SBCBins*w-1)/2 {
		t.Errorf("median truth: rank %d of %d", r, SBCBins*w-1)
	}
}

// TestBinomialRange checks the central 95% ranges of REFERENCES.md
// section 9 (computed there with R's qbinom).
func TestBinomialRange(t *testing.T) {
	for _, c := range []struct {
		n      int
		p      float64
		lo, hi int
	}{
		{20, 0.5, 6, 14}, {20, 0.9, 15, 20},
		{50, 0.5, 18, 32}, {50, 0.9, 41, 49},
		{100, 0.5, 40, 60}, {100, 0.9, 84, 95},
		{200, 0.5, 86, 114}, {200, 0.9, 171, 188},
	} {
		lo, hi := BinomialRange(c.n, c.p, 0.95)
		if lo != c.lo || hi != c.hi {
			t.Errorf("Binomial(%d, %v) central 95%%: got [%d, %d], want [%d, %d] (R qbinom)", c.n, c.p, lo, hi, c.lo, c.hi)
		}
	}
}
