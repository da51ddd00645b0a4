package transform

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/floats/scalar"
)

// Half-life of geometric adstock: lam = 0.5^(1/h), h = ln 0.5 / ln lam
// (common practice; check values derived in shared REFERENCES.md section 2).
var halfLifeTests = []struct{ h, lam float64 }{
	{1, 0.5},
	{2, 0.7071067811865476},
	{4, 0.8408964152537145},
	{8, 0.9170040432046712},
	{1.9433582098747315, 0.7},
	{3.1062837195053903, 0.8},
	{6.578813478960585, 0.9},
}

func TestHalfLife(t *testing.T) {
	for _, c := range halfLifeTests {
		if got := HalfLifeToRetention(c.h); !scalar.EqualWithinAbsOrRel(got, c.lam, 1e-14, 1e-14) {
			t.Errorf("HalfLifeToRetention(%v): got %v, want %v", c.h, got, c.lam)
		}
		if got := RetentionToHalfLife(c.lam); !scalar.EqualWithinAbsOrRel(got, c.h, 1e-13, 1e-13) {
			t.Errorf("RetentionToHalfLife(%v): got %v, want %v", c.lam, got, c.h)
		}
		// after h weeks an impulse's weight is half its lag-0 weight, and half
		// the cumulative effect has been delivered (1 - lam^h = 1/2)
		if h := c.h; h == math.Trunc(h) {
			x := make([]float64, int(h)+1)
			x[0] = 1
			a := Adstock(nil, x, c.lam)
			if !scalar.EqualWithinAbsOrRel(a[int(h)], a[0]/2, 1e-14, 1e-14) {
				t.Errorf("h=%v: weight at lag h %v, want half of %v", h, a[int(h)], a[0])
			}
			if s := floats.Sum(a[:int(h)]); !scalar.EqualWithinAbsOrRel(s, 0.5, 1e-14, 1e-14) {
				t.Errorf("h=%v: cumulative weight before lag h %v, want 0.5", h, s)
			}
		}
	}
}

// TestAdstock checks the normalised recursion on the impulse and step cases
// of REFERENCES.md section 2 (derived by hand from the recursion).
func TestAdstock(t *testing.T) {
	got := Adstock(nil, []float64{1, 0, 0, 0, 0}, 0.5)
	if want := []float64{0.5, 0.25, 0.125, 0.0625, 0.03125}; !floats.EqualApprox(got, want, 1e-15) {
		t.Errorf("impulse: got %v, want %v", got, want)
	}
	got = Adstock(nil, []float64{1, 1, 1, 1, 1}, 0.8)
	if want := []float64{0.2, 0.36, 0.488, 0.5904, 0.67232}; !floats.EqualApprox(got, want, 1e-14) {
		t.Errorf("step: got %v, want %v", got, want)
	}
	// a constant input converges to that constant (scale-preserving)
	x := make([]float64, 400)
	for i := range x {
		x[i] = 3
	}
	if a := Adstock(nil, x, 0.9); math.Abs(a[399]-3) > 1e-12 {
		t.Errorf("constant input: got %v, want 3", a[399])
	}
}

// Hill identities (derived by differentiation; REFERENCES.md section 2):
// H(K) = 1/2 for every S, H'(K) = S/(4K), H(2K) = 2^S/(2^S+1).
var hillTests = []struct{ k, s, slopeAtK, at2K float64 }{
	{1, 1, 0.25, 2.0 / 3},
	{0.5, 2, 1.0, 0.8},
	{2, 3, 0.375, 8.0 / 9},
}

func TestHill(t *testing.T) {
	for _, c := range hillTests {
		if h := Hill(c.k, c.k, c.s); !scalar.EqualWithinAbsOrRel(h, 0.5, 1e-15, 1e-15) {
			t.Errorf("H(K=%v; S=%v) = %v, want 1/2", c.k, c.s, h)
		}
		if h := Hill(2*c.k, c.k, c.s); !scalar.EqualWithinAbsOrRel(h, c.at2K, 1e-15, 1e-15) {
			t.Errorf("H(2K) K=%v S=%v: got %v, want %v", c.k, c.s, h, c.at2K)
		}
		_, dA, _, _ := HillGrad(c.k, c.k, c.s)
		if !scalar.EqualWithinAbsOrRel(dA, c.slopeAtK, 1e-14, 1e-14) {
			t.Errorf("H'(K) K=%v S=%v: got %v, want %v", c.k, c.s, dA, c.slopeAtK)
		}
	}
	if Hill(0, 1, 2) != 0 || Hill(1e300, 1, 2) != 1 {
		t.Error("H(0) must be 0 and H tends to 1")
	}
}

// TestGrads compares HillGrad and AdstockGrad with central differences.
func TestGrads(t *testing.T) {
	for _, p := range [][3]float64{{0.7, 1.2, 0.8}, {2.5, 0.6, 3.1}, {0.05, 1, 1}} {
		h, dA, dK, dS := HillGrad(p[0], p[1], p[2])
		if h != Hill(p[0], p[1], p[2]) && math.Abs(h-Hill(p[0], p[1], p[2])) > 1e-15 {
			t.Errorf("HillGrad value %v vs Hill %v", h, Hill(p[0], p[1], p[2]))
		}
		want := fd.Gradient(nil, func(v []float64) float64 { return Hill(v[0], v[1], v[2]) }, p[:], &fd.Settings{Formula: fd.Central, Step: 1e-6})
		if !floats.EqualApprox([]float64{dA, dK, dS}, want, 1e-8) {
			t.Errorf("HillGrad at %v: got %v, want %v", p, []float64{dA, dK, dS}, want)
		}
	}
	x := []float64{1, 0, 2.5, 0.3, 0, 0, 4}
	a, da := make([]float64, len(x)), make([]float64, len(x))
	AdstockGrad(a, da, x, 0.6)
	if !floats.EqualApprox(a, Adstock(nil, x, 0.6), 1e-15) {
		t.Error("AdstockGrad value differs from Adstock")
	}
	for i := range x {
		want := fd.Derivative(func(l float64) float64 { return Adstock(nil, x, l)[i] }, 0.6, &fd.Settings{Formula: fd.Central, Step: 1e-6})
		if math.Abs(da[i]-want) > 1e-8 {
			t.Errorf("da[%d]/dlam: got %v, want %v", i, da[i], want)
		}
	}
}
