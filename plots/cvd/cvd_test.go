package cvd

import (
	"image/color"
	"math"
	"testing"
)

// sharmaTests are pairs from Table 1 of Sharma, Wu and Dalal (2005), "The
// CIEDE2000 color-difference formula: implementation notes, supplementary
// test data, and mathematical observations" (pairs 1-4, 17-21, 25-26,
// ΔE00 to 4 decimals as printed there).
var sharmaTests = []struct {
	p, q Lab
	want float64
}{
	{Lab{50, 2.6772, -79.7751}, Lab{50, 0, -82.7485}, 2.0425},
	{Lab{50, 3.1571, -77.2803}, Lab{50, 0, -82.7485}, 2.8615},
	{Lab{50, 2.8361, -74.0200}, Lab{50, 0, -82.7485}, 3.4412},
	{Lab{50, -1.3802, -84.2814}, Lab{50, 0, -82.7485}, 1.0000},
	{Lab{50, 2.5, 0}, Lab{73, 25, -18}, 27.1492},
	{Lab{50, 2.5, 0}, Lab{61, -5, 29}, 22.8977},
	{Lab{50, 2.5, 0}, Lab{56, -27, -3}, 31.9030},
	{Lab{50, 2.5, 0}, Lab{58, 24, 15}, 19.4535},
	{Lab{50, 2.5, 0}, Lab{50, 3.1736, 0.5854}, 1.0000},
	{Lab{84.25, 5.74, 96.0}, Lab{84.46, 8.88, 96.49}, 1.6743},
	{Lab{84.25, 5.74, 96.0}, Lab{84.52, 5.75, 93.09}, 0.5887},
}

func TestDeltaE2000(t *testing.T) {
	for i, c := range sharmaTests {
		got := DeltaE2000(c.p, c.q)
		if math.Abs(got-c.want) > 5e-5 {
			t.Errorf("pair %d: got %.5f, want %.4f", i, got, c.want)
		}
		if back := DeltaE2000(c.q, c.p); math.Abs(back-got) > 1e-12 {
			t.Errorf("pair %d: not symmetric: %v vs %v", i, got, back)
		}
	}
}

func TestToLab(t *testing.T) {
	// White is L=100, a=b=0 under D65 (definition); sRGB pure red is
	// L*a*b* (53.24, 80.09, 67.20) (common practice, e.g. Lindbloom's
	// calculator with sRGB/D65; from memory, to 2 decimals).
	for _, c := range []struct {
		in   color.Color
		want Lab
		tol  float64
	}{
		{color.White, Lab{100, 0, 0}, 0.01},
		{color.Black, Lab{0, 0, 0}, 1e-9},
		{color.NRGBA{255, 0, 0, 255}, Lab{53.24, 80.09, 67.20}, 0.05},
	} {
		got := ToLab(c.in)
		if math.Abs(got.L-c.want.L) > c.tol || math.Abs(got.A-c.want.A) > c.tol || math.Abs(got.B-c.want.B) > c.tol {
			t.Errorf("%v: got %+v, want %+v", c.in, got, c.want)
		}
	}
}

func TestSimulate(t *testing.T) {
	// Greys stay grey: each Machado matrix's rows sum to 1 (Machado et al.
	// 2009, by construction), so (v,v,v) maps to itself up to rounding.
	for _, d := range Deficiencies {
		for _, v := range []uint8{0, 60, 128, 200, 255} {
			s := Simulate(color.NRGBA{v, v, v, 255}, d)
			for _, ch := range []uint8{s.R, s.G, s.B} {
				if int(ch)-int(v) > 1 || int(v)-int(ch) > 1 {
					t.Errorf("%v grey %d: got %v", d, v, s)
				}
			}
		}
	}
	// The textbook confusion: pure red and pure green, far apart for normal
	// vision, come much closer for protanopes and deuteranopes but not for
	// tritanopes.
	red, green := color.NRGBA{200, 40, 40, 255}, color.NRGBA{40, 160, 40, 255}
	n := Difference(red, green, Normal)
	for _, d := range []Deficiency{Protanopia, Deuteranopia} {
		if got := Difference(red, green, d); got > n/2 {
			t.Errorf("%v: red-green ΔE %.1f, want well below normal %.1f", d, got, n)
		}
	}
	if got := Difference(red, green, Tritanopia); got < n/2 {
		t.Errorf("tritanopia: red-green ΔE %.1f, want near normal %.1f", got, n)
	}
}
