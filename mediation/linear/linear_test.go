package linear

import (
	"bufio"
	"encoding/csv"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"

	"spillway/mediation/ols"
)

const (
	talOrCSV = "../../testdata/talor/tal_or.csv"
	talOrRef = "../../testdata/talor/reference.out"
)

type talOr struct{ cond, pmi, imp, reaction []float64 }

func readTalOr(t *testing.T) talOr {
	t.Helper()
	f, err := os.Open(talOrCSV)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(rows[0], ",") != "cond,pmi,import,reaction" {
		t.Fatalf("%s: header %v", talOrCSV, rows[0])
	}
	var d talOr
	cols := []*[]float64{&d.cond, &d.pmi, &d.imp, &d.reaction}
	for i, r := range rows[1:] {
		for j, s := range r {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatalf("%s line %d: %v", talOrCSV, i+2, err)
			}
			*cols[j] = append(*cols[j], v)
		}
	}
	if len(d.cond) != 123 {
		t.Fatalf("%s: %d rows, want 123", talOrCSV, len(d.cond))
	}
	return d
}

// readReference parses "name value" lines written by testdata/talor/reference.R.
func readReference(t *testing.T) map[string]float64 {
	t.Helper()
	f, err := os.Open(talOrRef)
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

// residuals returns y minus its OLS fit on [1, x].
func residuals(t *testing.T, x, y []float64) []float64 {
	t.Helper()
	d := mat.NewDense(len(x), 2, nil)
	for i, v := range x {
		d.Set(i, 0, 1)
		d.Set(i, 1, v)
	}
	f, err := ols.Solve(d, y)
	if err != nil {
		t.Fatal(err)
	}
	return f.Resid
}

func near(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if !scalar.EqualWithinAbsOrRel(got, want, tol, tol) {
		t.Errorf("%s: got %.17g, want %.17g", what, got, want)
	}
}

func TestSobelVariants(t *testing.T) {
	for _, c := range []struct {
		name           string
		a, seA, b, seB float64
		fn             func(a, seA, b, seB float64) (float64, float64)
		se, z, tol     float64
	}{
		// Example A: easycalculation.com "Sobel test" page (z = 4.983); full
		// precision closed form, REFERENCES.md section 3.
		{"Sobel A", 2, 0.3, 3, 0.4, Sobel, 1.2041594578792296, 4.982728791224398, 1e-14},
		{"Aroian A", 2, 0.3, 3, 0.4, Aroian, math.Sqrt(1.4644), 4.958169737472552, 1e-14},
		// Closed form: 1.45 - 0.0144 = 1.4356.
		{"Goodman A", 2, 0.3, 3, 0.4, Goodman, math.Sqrt(1.4356), 6 / math.Sqrt(1.4356), 1e-14},
		// Example B: Tal_Or a, b and standard errors (Hayes; psych tests), with
		// SEs and z values derived in REFERENCES.md section 3 (10 decimals).
		{"Sobel B", 0.4765251989, 0.2356913073, 0.5064484834, 0.0970482977, Sobel, 0.1280109862, 1.8852715033, 1e-9},
		{"Aroian B", 0.4765251989, 0.2356913073, 0.5064484834, 0.0970482977, Aroian, 0.1300384822, 1.8558772781, 1e-9},
		{"Goodman B", 0.4765251989, 0.2356913073, 0.5064484834, 0.0970482977, Goodman, 0.2413354643 / 1.9161081597, 1.9161081597, 1e-9},
	} {
		se, z := c.fn(c.a, c.seA, c.b, c.seB)
		near(t, c.name+" se", se, c.se, c.tol)
		near(t, c.name+" z", z, c.z, c.tol)
	}
	// Sobel B two-sided p = 0.0593932 (REFERENCES.md section 3): 2(1-Φ(|z|)).
	_, z := Sobel(0.4765251989, 0.2356913073, 0.5064484834, 0.0970482977)
	near(t, "Sobel B p", math.Erfc(z/math.Sqrt2), 0.0593932, 5e-7)
	if se, z := Goodman(0, 0.1, 0, 0.1); !math.IsNaN(se) || !math.IsNaN(z) {
		t.Errorf("Goodman with negative radicand: got %v, %v, want NaN", se, z)
	}
}

func TestACMECheckValues(t *testing.T) {
	// beta2 = 0.5, sigma1 = sigma2 = 1, rhoTilde = 0.3; values derived from the
	// closed form in REFERENCES.md section 3 (Imai, Keele and Yamamoto 2010).
	for _, c := range []struct{ rho, want float64 }{
		{-0.5, 0.42537852736430515},
		{0, 0.15},
		{0.3, 0},
		{0.5, -0.12537852736430513},
		{0.9, -0.8348189788243481},
	} {
		near(t, "ACME("+strconv.FormatFloat(c.rho, 'g', -1, 64)+")", ACME(c.rho, 0.5, 1, 1, 0.3), c.want, 1e-15)
	}
	// Scaling: ACME is proportional to beta2·sigma1/sigma2 (closed form).
	near(t, "ACME scaled", ACME(-0.5, 1.5, 4, 2, 0.3), 6*0.42537852736430515, 1e-14)
	prev := math.Inf(1)
	for rho := -0.95; rho < 0.96; rho += 0.05 {
		v := ACME(rho, 0.5, 1, 1, 0.3)
		if v >= prev {
			t.Errorf("ACME not decreasing in rho at %v: %v >= %v", rho, v, prev)
		}
		prev = v
	}
	for _, rho := range []float64{-1, 1, math.NaN()} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("ACME(rho=%v) did not panic", rho)
				}
			}()
			ACME(rho, 0.5, 1, 1, 0.3)
		}()
	}
}

// TestTalOr checks the product of coefficients on Tal_Or against the
// full-precision values in REFERENCES.md section 8 (derived by OLS; rounded
// published values from Hayes' text as reproduced in psych's tests).
func TestTalOr(t *testing.T) {
	d := readTalOr(t)
	pc, err := Estimate(d.cond, d.pmi, d.reaction, nil)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "a", pc.A, 0.47652519893899264, 1e-12)
	near(t, "b", pc.B, 0.5064484834283256, 1e-12)
	near(t, "c", pc.C, 0.49568965517241365, 1e-12)
	near(t, "c'", pc.CPrime, 0.2543541908543803, 1e-12)
	near(t, "ab", pc.Indirect, 0.241335464318034, 1e-12)
	near(t, "se(a)", pc.SEA, 0.2356913073, 1e-10)
	near(t, "se(b)", pc.SEB, 0.0970482977, 1e-10)
	// Published t values (Hayes; psych tests): a t = 2.0218, b t = 5.2185.
	near(t, "t(a)", pc.A/pc.SEA, 2.0218, 5e-5)
	near(t, "t(b)", pc.B/pc.SEB, 5.2185, 5e-5)
	// OLS identity c - c' = ab (closed form).
	if diff := pc.C - pc.CPrime - pc.Indirect; math.Abs(diff) > 1e-12 {
		t.Errorf("c - c' - ab = %g, want 0", diff)
	}

	// Sensitivity: rhoTilde = corr(resid(reaction ~ cond), resid(pmi ~ cond)).
	e1 := residuals(t, d.cond, d.reaction)
	e2 := residuals(t, d.cond, d.pmi)
	rt := ZeroRho(e1, e2)
	near(t, "rhoTilde", rt, 0.430075640318764, 1e-13)
	// REFERENCES.md section 3 (derived, 10 decimals).
	for _, c := range []struct{ rho, want float64 }{
		{-0.5, 0.5338205926}, {-0.2, 0.3447445731}, {0, 0.2413354643}, {0.2, 0.1379263555}, {0.5, -0.0511496640},
	} {
		near(t, "Tal_Or ACME("+strconv.FormatFloat(c.rho, 'g', -1, 64)+")", pc.A*GammaAt(c.rho, e1, e2), c.want, 6e-11)
	}
	// ACME(0) = a·b exactly (Frisch-Waugh-Lovell: cov(e1,e2)/var(e2) = b), and
	// ACME(rhoTilde) = 0 (closed form).
	near(t, "ACME(0) = ab", pc.A*GammaAt(0, e1, e2), pc.Indirect, 1e-13)
	near(t, "ACME(rhoTilde)", pc.A*GammaAt(rt, e1, e2), 0, 1e-14)

	// Two parallel mediators (Hayes p. 135; REFERENCES.md section 8).
	par, err := EstimateParallel(d.cond, [][]float64{d.pmi, d.imp}, d.reaction, nil)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "ab pmi", par.Indirect[0], 0.18895477790645468, 1e-12)
	near(t, "ab import", par.Indirect[1], 0.2033443554875402, 1e-12)
	near(t, "total ab", par.TotalIndirect, 0.3922991333939949, 1e-12)
	near(t, "a import (published 0.6268)", par.A[1], 0.6268, 5e-5)
	near(t, "c' (published 0.1034)", par.CPrime, 0.1034, 5e-5)
	near(t, "b pmi (published 0.3965)", par.B[0], 0.3965, 5e-5)
	near(t, "b import (published 0.3244)", par.B[1], 0.3244, 5e-5)
	if diff := par.C - par.CPrime - par.TotalIndirect; math.Abs(diff) > 1e-12 {
		t.Errorf("two mediators: c - c' - Σab = %g, want 0", diff)
	}
}

// TestTalOrAgainstR compares with R 4.2.2 lm() on the committed CSV
// (testdata/talor/reference.out, written by testdata/talor/reference.R).
func TestTalOrAgainstR(t *testing.T) {
	ref := readReference(t)
	want := func(k string) float64 {
		v, ok := ref[k]
		if !ok {
			t.Fatalf("%s missing from %s", k, talOrRef)
		}
		return v
	}
	if want("matches_psych_Tal_Or") != 1 {
		t.Fatal("reference.R found tal_or.csv differs from psych::Tal_Or")
	}
	d := readTalOr(t)
	const tol = 1e-12
	pc, err := Estimate(d.cond, d.pmi, d.reaction, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		key string
		got float64
	}{
		{"a", pc.A}, {"se_a", pc.SEA}, {"b", pc.B}, {"se_b", pc.SEB},
		{"c", pc.C}, {"cprime", pc.CPrime}, {"ab", pc.Indirect},
	} {
		near(t, "R "+c.key, c.got, want(c.key), tol)
	}
	e1 := residuals(t, d.cond, d.reaction)
	e2 := residuals(t, d.cond, d.pmi)
	near(t, "R rho_tilde", ZeroRho(e1, e2), want("rho_tilde"), tol)
	for _, rho := range []float64{-0.9, -0.5, 0, 0.3, 0.8} {
		near(t, "R-moment ACME", pc.A*GammaAt(rho, e1, e2),
			ACME(rho, want("a"), want("sd_e1"), want("sd_e2"), want("rho_tilde")), tol)
	}

	par, err := EstimateParallel(d.cond, [][]float64{d.pmi, d.imp}, d.reaction, nil)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "R a_import", par.A[1], want("a_import"), tol)
	near(t, "R cprime2", par.CPrime, want("cprime2"), tol)
	near(t, "R b2_pmi", par.B[0], want("b2_pmi"), tol)
	near(t, "R b2_import", par.B[1], want("b2_import"), tol)
	near(t, "R se2_pmi", par.SEB[0], want("se2_pmi"), tol)
	near(t, "R se2_import", par.SEB[1], want("se2_import"), tol)

	// Covariate import entered in every regression.
	cv, err := Estimate(d.cond, d.pmi, d.reaction, [][]float64{d.imp})
	if err != nil {
		t.Fatal(err)
	}
	near(t, "R a_cov", cv.A, want("a_cov"), tol)
	near(t, "R se_a_cov", cv.SEA, want("se_a_cov"), tol)
	near(t, "R c_cov", cv.C, want("c_cov"), tol)
	near(t, "R cprime (cov)", cv.CPrime, want("cprime2"), tol)
	near(t, "R b (cov)", cv.B, want("b2_pmi"), tol)
	if diff := cv.C - cv.CPrime - cv.Indirect; math.Abs(diff) > 1e-12 {
		t.Errorf("with covariate: c - c' - ab = %g, want 0", diff)
	}
}

func TestPanics(t *testing.T) {
	for name, f := range map[string]func(){
		"GammaAt length":     func() { GammaAt(0, []float64{1, 2}, []float64{1}) },
		"GammaAt rho":        func() { GammaAt(1, []float64{1, 2}, []float64{2, 1}) },
		"ZeroRho short":      func() { ZeroRho([]float64{1}, []float64{1}) },
		"Estimate length":    func() { Estimate([]float64{1, 2, 3}, []float64{1, 2}, []float64{1, 2, 3}, nil) },
		"Parallel no mediat": func() { EstimateParallel([]float64{1, 2, 3}, nil, []float64{1, 2, 3}, nil) },
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: did not panic", name)
				}
			}()
			f()
		}()
	}
}
