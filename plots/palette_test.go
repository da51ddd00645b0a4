package plots

import (
	"image/color"
	"testing"

	"spillway/plots/cvd"
	"spillway/plots/marks"
)

// TestPaletteColourBlindSafe simulates protanopia, deuteranopia and
// tritanopia with the Machado et al. (2009) severity-1.0 matrices and
// requires every pair of categorical colours to stay at least 20 CIEDE2000
// units apart (and the two paths, blue and amber, at least 40), and every
// colour at least 20 from the white page. The thresholds are this
// project's choice: about 2 is a just-noticeable difference (Sharma et al.
// 2005 discuss the scale); 20 keeps marks apart at a glance on a slide.
func TestPaletteColourBlindSafe(t *testing.T) {
	const minPair, minPaths, minPage = 20.0, 40.0, 20.0
	for _, d := range cvd.Deficiencies {
		for i, a := range Categorical {
			if got := cvd.Difference(a.Color, color.White, d); got < minPage {
				t.Errorf("%v: %s vs white page: ΔE00 %.1f < %.0f", d, a.Role, got, minPage)
			}
			for _, b := range Categorical[i+1:] {
				if got := cvd.Difference(a.Color, b.Color, d); got < minPair {
					t.Errorf("%v: %s vs %s: ΔE00 %.1f < %.0f", d, a.Role, b.Role, got, minPair)
				}
			}
		}
		if got := cvd.Difference(Direct, ViaSearch, d); got < minPaths {
			t.Errorf("%v: direct vs via search: ΔE00 %.1f < %.0f", d, got, minPaths)
		}
		// The band tints over white must stay apart too (bands of the two
		// paths overlap on the curves chart).
		if got := cvd.Difference(over(marks.Tint(Direct, 0.2)), over(marks.Tint(ViaSearch, 0.2)), d); got < 10 {
			t.Errorf("%v: direct vs via-search bands: ΔE00 %.1f < 10", d, got)
		}
	}
}

// over composites c on white.
func over(c color.NRGBA) color.NRGBA {
	a := float64(c.A) / 255
	mix := func(v uint8) uint8 { return uint8(float64(v)*a + 255*(1-a) + 0.5) }
	return color.NRGBA{mix(c.R), mix(c.G), mix(c.B), 255}
}

// TestCheckCatchesBadPalette makes sure the check can fail: the classic
// red/green pair is rejected under deuteranopia.
func TestCheckCatchesBadPalette(t *testing.T) {
	red, green := color.NRGBA{0xD0, 0x30, 0x30, 0xFF}, color.NRGBA{0x30, 0xA0, 0x30, 0xFF}
	if got := cvd.Difference(red, green, cvd.Deuteranopia); got >= 20 {
		t.Errorf("red vs green under deuteranopia: ΔE00 %.1f, expected below the 20 threshold", got)
	}
}

func TestNumberFormats(t *testing.T) {
	for _, c := range []struct {
		v    float64
		want string
	}{
		{12345.4, "12,345"}, {-1234567, "-1,234,567"}, {656.28, "656"}, {99.96, "100"}, {45.31, "45.3"},
		{4.527, "4.53"}, {0.04531, "0.0453"}, {0.0005782, "0.000578"}, {0, "0"}, {-0.0001, "-0.000100"},
	} {
		if got := Number(c.v); got != c.want {
			t.Errorf("Number(%v): got %q, want %q", c.v, got, c.want)
		}
	}
	for _, c := range []struct {
		v    float64
		want string
	}{{0.598, "60%"}, {0.0423, "4.2%"}, {1, "100%"}, {-0.001, "-0.1%"}} {
		if got := Percent(c.v); got != c.want {
			t.Errorf("Percent(%v): got %q, want %q", c.v, got, c.want)
		}
	}
	for _, c := range []struct {
		v    float64
		want string
	}{{5.45, "5.5"}, {31.04, "31"}, {656.3, "660"}, {7253, "7,300"}, {0.0453, "0.045"}} {
		if got := About(c.v); got != c.want {
			t.Errorf("About(%v): got %q, want %q", c.v, got, c.want)
		}
	}
	if got := Channel("video_spend"); got != "video" {
		t.Errorf("Channel: %q", got)
	}
	if got := List([]string{"a", "b", "c"}); got != "a, b and c" {
		t.Errorf("List: %q", got)
	}
}
