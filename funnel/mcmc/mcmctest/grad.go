package mcmctest

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/diff/fd"

	"spillway/funnel/mcmc"
)

// GradSettings configures Gradient. A nil *GradSettings means the zero
// value, and each zero field means its documented default.
type GradSettings struct {
	// Seed seeds the random points, rand.NewPCG(Seed, 0).
	Seed uint64
	// Points is the number of random points. Zero means 20.
	Points int
	// Radius bounds the random points: each coordinate is uniform in
	// (−Radius, Radius) on the unconstrained scale. Zero means 2.
	Radius float64
	// Step is the central-difference step. Zero means 1e-6.
	Step float64
	// At lists extra points to check besides the random ones; they are not
	// modified.
	At [][]float64
}

// GradResult reports the worst disagreement found by Gradient.
type GradResult struct {
	// MaxAbs is |Δ|∞, the largest |analytic − numeric| over all points and
	// coordinates.
	MaxAbs float64
	// MaxScaled is the largest |Δ_i| / max(1, |numeric_i|).
	MaxScaled float64
	// Point, Index, Analytic and Numeric locate the largest scaled
	// difference.
	Point             []float64
	Index             int
	Analytic, Numeric float64
	// Checked counts the points with a finite log density; Skipped those
	// without.
	Checked, Skipped int
	// Modified reports that LogProbGrad changed its x argument, and
	// Inconsistent that it returned a different log density for the same x
	// on a second call.
	Modified, Inconsistent bool
}

// String summarises r in one line.
func (r GradResult) String() string {
	return fmt.Sprintf("|Δ|∞ = %.3g, max scaled %.3g at coordinate %d (analytic %.10g, numeric %.10g) over %d points (%d skipped)",
		r.MaxAbs, r.MaxScaled, r.Index, r.Analytic, r.Numeric, r.Checked, r.Skipped)
}

// Gradient compares m's LogProbGrad gradient with gonum's central finite
// differences of its log density (fd.Central) at seeded random points and at
// s.At, and returns the worst difference. Points where the log density is
// not finite are skipped.
func Gradient(m mcmc.Model, s *GradSettings) GradResult {
	var set GradSettings
	if s != nil {
		set = *s
	}
	if set.Points == 0 {
		set.Points = 20
	}
	if set.Radius == 0 {
		set.Radius = 2
	}
	if set.Step == 0 {
		set.Step = 1e-6
	}
	dim := m.Dim()
	rng := rand.New(rand.NewPCG(set.Seed, 0))
	points := make([][]float64, 0, set.Points+len(set.At))
	for range set.Points {
		x := make([]float64, dim)
		for i := range x {
			x[i] = set.Radius * (2*rng.Float64() - 1)
		}
		points = append(points, x)
	}
	for _, x := range set.At {
		if len(x) != dim {
			panic("mcmctest: point length does not match the model dimension")
		}
		points = append(points, slices.Clone(x))
	}

	var res GradResult
	grad := make([]float64, dim)
	scratch := make([]float64, dim)
	f := func(x []float64) float64 { return m.LogProbGrad(scratch, x) }
	fdSet := &fd.Settings{Formula: fd.Central, Step: set.Step}
	for _, x := range points {
		orig := slices.Clone(x)
		lp := m.LogProbGrad(grad, x)
		if !slices.Equal(orig, x) {
			res.Modified = true
			copy(x, orig)
		}
		if math.IsNaN(lp) || math.IsInf(lp, 0) {
			res.Skipped++
			continue
		}
		if lp2 := m.LogProbGrad(scratch, x); lp2 != lp {
			res.Inconsistent = true
		}
		res.Checked++
		num := fd.Gradient(nil, f, x, fdSet)
		for i, g := range grad {
			d := math.Abs(g - num[i])
			if math.IsNaN(d) {
				d = math.Inf(1)
			}
			res.MaxAbs = math.Max(res.MaxAbs, d)
			sc := d / math.Max(1, math.Abs(num[i]))
			if sc > res.MaxScaled || res.Point == nil {
				res.MaxScaled = sc
				res.Point = slices.Clone(x)
				res.Index, res.Analytic, res.Numeric = i, g, num[i]
			}
		}
	}
	return res
}

// CheckGradient runs Gradient and reports through t an error if the largest
// scaled difference |Δ_i| / max(1, |numeric_i|) exceeds tol, if no point had
// a finite log density, or if LogProbGrad modified x or was not repeatable.
// It logs |Δ|∞ and returns the result.
func CheckGradient(t testing.TB, m mcmc.Model, tol float64, s *GradSettings) GradResult {
	t.Helper()
	r := Gradient(m, s)
	switch {
	case r.Checked == 0:
		t.Errorf("gradient check: no point with a finite log density (%d skipped)", r.Skipped)
	case r.MaxScaled > tol:
		t.Errorf("gradient check: %v; point %v; want scaled difference <= %g", r, r.Point, tol)
	default:
		t.Logf("gradient check: %v", r)
	}
	if r.Modified {
		t.Errorf("gradient check: LogProbGrad modified its x argument")
	}
	if r.Inconsistent {
		t.Errorf("gradient check: LogProbGrad returned different values for the same x")
	}
	return r
}

// Ramp returns a fixed point of dimension n off the origin (0, 0.1, ...,
// 0.4, repeated), where the allocation checks evaluate a density.
func Ramp(n int) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = 0.1 * float64(i%5)
	}
	return x
}

// CheckNoAlloc reports through t an error if LogProbGrad at x allocates in
// steady state (testing.AllocsPerRun after one warm-up call).
func CheckNoAlloc(t testing.TB, m mcmc.Model, x []float64) {
	t.Helper()
	grad := make([]float64, m.Dim())
	m.LogProbGrad(grad, x)
	if n := testing.AllocsPerRun(100, func() { m.LogProbGrad(grad, x) }); n != 0 {
		t.Errorf("LogProbGrad allocates %v times per call, want 0", n)
	}
}

// Func adapts a log density with its gradient, written as one function, to
// mcmc.Model: a way to check one piece of a model (a term of a sum) on its
// own with Gradient, CheckGradient and CheckNoAlloc.
type Func struct {
	N int // dimension
	// F returns the log density at x and writes its gradient into grad.
	F func(grad, x []float64) float64
}

var _ mcmc.Model = Func{}

// Dim returns f.N.
func (f Func) Dim() int { return f.N }

// LogProbGrad returns f.F(grad, x).
func (f Func) LogProbGrad(grad, x []float64) float64 { return f.F(grad, x) }
