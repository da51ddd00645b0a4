package ols

import (
	"bufio"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// certified holds NIST StRD certified values for one linear-regression data set.
type certified struct {
	name      string
	file      string
	coef, se  []float64
	sigma, r2 float64
	minLRE    float64 // required log relative error in every value
}

// nistCases are the NIST StRD certified values, copied from the NIST
// certificates (https://www.itl.nist.gov/div898/strd/lls/data/Longley.shtml and
// .../Norris.shtml), as listed in the project's REFERENCES.md section 1.
var nistCases = []certified{
	{
		name: "Longley", file: "../../testdata/nist/longley.txt",
		coef: []float64{-3482258.63459582, 15.0618722713733, -0.358191792925910e-01,
			-2.02022980381683, -1.03322686717359, -0.511041056535807e-01, 1829.15146461355},
		se: []float64{890420.383607373, 84.9149257747669, 0.334910077722432e-01,
			0.488399681651699, 0.214274163161675, 0.226073200069370, 455.478499142212},
		sigma: 304.854073561965, r2: 0.995479004577296,
		minLRE: 9, // the task asks for 7; Householder QR achieves about 11 here (Longley is ill-conditioned)
	},
	{
		name: "Norris", file: "../../testdata/nist/norris.txt",
		coef:  []float64{-0.262323073774029, 1.00211681802045},
		se:    []float64{0.232818234301152, 0.429796848199937e-03},
		sigma: 0.884796396144373, r2: 0.999993745883712,
		minLRE: 11, // the task asks for 9; about 12 is achieved
	},
}

// lre is NIST's log relative error -log10(|got-want|/|want|), capped at 15
// (the certificates print 15 significant digits).
func lre(got, want float64) float64 {
	if got == want {
		return 15
	}
	return min(15, -math.Log10(math.Abs(got-want)/math.Abs(want)))
}

// readTable reads a whitespace-separated file with one header line; column 0
// is y and the rest form x after a leading intercept column.
func readTable(t *testing.T, path string) (*mat.Dense, []float64) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")[1:]
	var y, data []float64
	p := 0
	for _, l := range lines {
		f := strings.Fields(l)
		p = len(f)
		data = append(data, 1)
		for j, s := range f {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatalf("%s: %v", path, err)
			}
			if j == 0 {
				y = append(y, v)
			} else {
				data = append(data, v)
			}
		}
	}
	return mat.NewDense(len(lines), p, data), y
}

// readReference parses "name value" lines written by testdata/*/reference.R.
func readReference(t *testing.T, path string) map[string]float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	ref := map[string]float64{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		k, v, ok := strings.Cut(sc.Text(), " ")
		if !ok {
			continue
		}
		if x, err := strconv.ParseFloat(v, 64); err == nil {
			ref[k] = x
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return ref
}

func TestSolveNIST(t *testing.T) {
	for _, c := range nistCases {
		x, y := readTable(t, c.file)
		fit, err := Solve(x, y)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		worst := 15.0
		for j := range c.coef {
			lc, ls := lre(fit.Coef[j], c.coef[j]), lre(fit.SE[j], c.se[j])
			t.Logf("%s B%d: LRE coef %.1f, se %.1f", c.name, j, lc, ls)
			worst = min(worst, lc, ls)
			if lc < c.minLRE {
				t.Errorf("%s B%d: got %.15g, want %.15g (LRE %.1f < %g)", c.name, j, fit.Coef[j], c.coef[j], lc, c.minLRE)
			}
			if ls < c.minLRE {
				t.Errorf("%s SE(B%d): got %.15g, want %.15g (LRE %.1f < %g)", c.name, j, fit.SE[j], c.se[j], ls, c.minLRE)
			}
		}
		for _, v := range []struct {
			what      string
			got, want float64
		}{{"residual SD", fit.Sigma, c.sigma}, {"R-squared", fit.R2, c.r2}} {
			l := lre(v.got, v.want)
			t.Logf("%s %s: LRE %.1f", c.name, v.what, l)
			if l < c.minLRE {
				t.Errorf("%s %s: got %.15g, want %.15g (LRE %.1f)", c.name, v.what, v.got, v.want, l)
			}
		}
		t.Logf("%s: worst LRE %.1f", c.name, worst)
		if fit.DF != x.RawMatrix().Rows-len(c.coef) {
			t.Errorf("%s: DF %d", c.name, fit.DF)
		}
	}
}

// TestSolveAgainstR compares with R 4.2.2 lm() on the committed data
// (testdata/nist/reference.out, written by testdata/nist/reference.R).
func TestSolveAgainstR(t *testing.T) {
	ref := readReference(t, "../../testdata/nist/reference.out")
	for _, c := range []struct {
		name, file, prefix string
		tol                float64
	}{
		{"Longley", "../../testdata/nist/longley.txt", "longley", 1e-9},
		{"Norris", "../../testdata/nist/norris.txt", "norris", 1e-11},
	} {
		x, y := readTable(t, c.file)
		fit, err := Solve(x, y)
		if err != nil {
			t.Fatal(err)
		}
		check := func(key string, got float64) {
			want, ok := ref[key]
			if !ok {
				t.Fatalf("%s: %s missing from reference.out", c.name, key)
			}
			if !scalar.EqualWithinAbsOrRel(got, want, 0, c.tol) {
				t.Errorf("%s %s: got %.17g, R lm() %.17g", c.name, key, got, want)
			}
		}
		for j := range fit.Coef {
			check(c.prefix+"_b"+strconv.Itoa(j), fit.Coef[j])
			check(c.prefix+"_se"+strconv.Itoa(j), fit.SE[j])
		}
		check(c.prefix+"_sigma", fit.Sigma)
		check(c.prefix+"_r2", fit.R2)
	}
	// The committed Longley data equal R's datasets::longley after NIST's units
	// (checked by reference.R; rounding of the unit conversion only).
	if d := ref["longley_max_abs_diff_vs_datasets"]; !(d < 1e-9) {
		t.Errorf("committed Longley differs from datasets::longley by %g", d)
	}
}

// TestSolveClosedForm checks a regression through the origin and a
// two-column fit against their closed forms, including the uncentred R².
func TestSolveClosedForm(t *testing.T) {
	xs := []float64{1, 2, 3, 4, 5}
	y := []float64{1.2, 1.9, 3.2, 3.8, 5.1}
	// Through the origin: b = Σxy/Σx², R² = 1 - RSS/Σy² (closed form; as R's
	// summary.lm without an intercept).
	fit, err := Solve(mat.NewDense(5, 1, xs), y)
	if err != nil {
		t.Fatal(err)
	}
	var sxy, sxx, syy float64
	for i := range xs {
		sxy += xs[i] * y[i]
		sxx += xs[i] * xs[i]
		syy += y[i] * y[i]
	}
	b := sxy / sxx
	rss := syy - b*sxy
	if !scalar.EqualWithinAbsOrRel(fit.Coef[0], b, 1e-14, 1e-14) ||
		!scalar.EqualWithinAbsOrRel(fit.RSS, rss, 1e-12, 1e-12) ||
		!scalar.EqualWithinAbsOrRel(fit.R2, 1-rss/syy, 1e-13, 1e-13) ||
		!scalar.EqualWithinAbsOrRel(fit.SE[0], math.Sqrt(rss/4/sxx), 1e-12, 1e-12) {
		t.Errorf("origin fit: got %+v, want b %v rss %v", fit, b, rss)
	}
	// With an intercept: slope = Sxy/Sxx about the means, intercept = ȳ - slope·x̄.
	d := mat.NewDense(5, 2, nil)
	for i, v := range xs {
		d.Set(i, 0, 1)
		d.Set(i, 1, v)
	}
	fit, err = Solve(d, y)
	if err != nil {
		t.Fatal(err)
	}
	// x̄ = 3, Sxx = 10, ȳ = 3.04, Sxy = 9.7 (hand arithmetic).
	if !scalar.EqualWithinAbsOrRel(fit.Coef[1], 0.97, 1e-14, 1e-14) ||
		!scalar.EqualWithinAbsOrRel(fit.Coef[0], 3.04-0.97*3, 1e-14, 1e-14) {
		t.Errorf("line fit: got %v, want [0.13 0.97]", fit.Coef)
	}
	sum := 0.0
	for _, r := range fit.Resid {
		sum += r
	}
	if math.Abs(sum) > 1e-13 {
		t.Errorf("residuals of a fit with intercept sum to %g, want 0", sum)
	}
}

func TestRankDeficient(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	const n = 30
	y := make([]float64, n)
	for i := range y {
		y[i] = rnd.NormFloat64()
	}
	for _, c := range []struct {
		name   string
		col    int
		design func(i int, v float64) []float64
	}{
		{"copy of x scaled", 2, func(i int, v float64) []float64 { return []float64{1, v, 2 * v, float64(i)} }},
		{"zero column", 1, func(i int, v float64) []float64 { return []float64{1, 0, v} }},
		{"sum of earlier columns", 3, func(i int, v float64) []float64 { return []float64{1, v, float64(i), 3 + v - 1e-3*float64(i)} }},
		{"near copy (1e-10)", 2, func(i int, v float64) []float64 { return []float64{1, v, v + 1e-10*float64(i%2)} }},
	} {
		var data []float64
		p := 0
		for i := range n {
			row := c.design(i, rnd.NormFloat64())
			p = len(row)
			data = append(data, row...)
		}
		x := mat.NewDense(n, p, data)
		_, err := Solve(x, y)
		var re *RankError
		if !errors.As(err, &re) || re.Column != c.col {
			t.Errorf("Solve %s: got error %v, want RankError at column %d", c.name, err, c.col)
		}
		_, err = NewSolver(n, p).Coef(nil, x, y)
		if !errors.As(err, &re) || re.Column != c.col {
			t.Errorf("Solver %s: got error %v, want RankError at column %d", c.name, err, c.col)
		}
	}
}

func TestDataErrors(t *testing.T) {
	x := mat.NewDense(4, 2, []float64{1, 1, 1, 2, 1, 3, 1, 4})
	y := []float64{1, 2, 3, 5}
	x.Set(2, 1, math.NaN())
	var ne *NonFiniteError
	if _, err := Solve(x, y); !errors.As(err, &ne) || ne.Row != 2 || ne.Column != 1 {
		t.Errorf("NaN in x: got %v", err)
	}
	x.Set(2, 1, 3)
	y[3] = math.Inf(1)
	if _, err := NewSolver(4, 2).Coef(nil, x, y); !errors.As(err, &ne) || ne.Row != 3 || ne.Column != -1 {
		t.Errorf("Inf in y: got %v", err)
	}
	if _, err := Solve(mat.NewDense(2, 2, []float64{1, 0, 1, 1}), []float64{1, 2}); err == nil {
		t.Error("Solve with no residual degrees of freedom: got nil error")
	}
}

// randomDesign returns an n×p matrix with an intercept and correlated
// Gaussian columns, and a response with known coefficients plus noise.
func randomDesign(n, p int, seed uint64) (*mat.Dense, []float64) {
	rnd := rand.New(rand.NewPCG(seed, 7))
	x := mat.NewDense(n, p, nil)
	y := make([]float64, n)
	for i := range n {
		x.Set(i, 0, 1)
		common := rnd.NormFloat64()
		for j := 1; j < p; j++ {
			x.Set(i, j, 0.6*common+rnd.NormFloat64()+float64(j))
		}
		for j := range p {
			y[i] += float64(j+1) * 0.1 * x.At(i, j)
		}
		y[i] += 0.3 * rnd.NormFloat64()
	}
	return x, y
}

func TestSolverMatchesSolve(t *testing.T) {
	type problem struct {
		name string
		x    *mat.Dense
		y    []float64
		tol  float64
	}
	var probs []problem
	for _, c := range nistCases {
		x, y := readTable(t, c.file)
		tol := 1e-12
		if c.name == "Longley" {
			tol = 1e-8 // condition ~1e9 after column scaling; rounding differences are amplified
		}
		probs = append(probs, problem{c.name, x, y, tol})
	}
	x, y := randomDesign(156, 12, 3)
	probs = append(probs, problem{"random 156x12", x, y, 1e-12})
	// A view with stride > cols exercises the row copy.
	big, ybig := randomDesign(60, 9, 4)
	probs = append(probs, problem{"strided view", big.Slice(0, 60, 2, 8).(*mat.Dense), ybig, 1e-12})

	for _, pr := range probs {
		n, p := pr.x.Dims()
		fit, err := Solve(pr.x, pr.y)
		if err != nil {
			t.Fatalf("%s: %v", pr.name, err)
		}
		s := NewSolver(n, p)
		dst := make([]float64, p)
		for rep := range 2 { // reuse must give the same answer
			got, err := s.Coef(dst, pr.x, pr.y)
			if err != nil {
				t.Fatalf("%s: %v", pr.name, err)
			}
			for j := range got {
				if !scalar.EqualWithinAbsOrRel(got[j], fit.Coef[j], 1e-13, pr.tol) {
					t.Errorf("%s rep %d coef %d: Solver %.17g, Solve %.17g", pr.name, rep, j, got[j], fit.Coef[j])
				}
			}
		}
	}
}

func TestSolverNoAlloc(t *testing.T) {
	x, y := randomDesign(156, 12, 5)
	s := NewSolver(156, 12)
	dst := make([]float64, 12)
	if a := testing.AllocsPerRun(20, func() {
		if _, err := s.Coef(dst, x, y); err != nil {
			t.Fatal(err)
		}
	}); a != 0 {
		t.Errorf("Solver.Coef: %v allocs/op, want 0", a)
	}
}

func BenchmarkSolverCoef(b *testing.B) {
	x, y := randomDesign(156, 12, 6)
	s := NewSolver(156, 12)
	dst := make([]float64, 12)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := s.Coef(dst, x, y); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSolve(b *testing.B) {
	x, y := randomDesign(156, 12, 6)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Solve(x, y); err != nil {
			b.Fatal(err)
		}
	}
}
