package validation_test

import (
	"bytes"
	"image/png"
	"math"
	"strings"
	"testing"

	"spillway/funnel/validate"
	"spillway/plots/validation"
)

// report returns a validation report with every section: two effects'
// coverage (one flagged), two origins of outcome forecasts and two shifts.
func report() *validate.Report {
	days := []float64{19700, 19707, 19714, 19763, 19770, 19777}
	fc := validate.ForecastSeries{Stage: "outcome", Days: days,
		Actual:   []float64{100, 120, 110, 130, 125, 140},
		Mean:     []float64{105, 115, 112, 128, 130, 135},
		Lo:       []float64{90, 100, 98, 110, 112, 118},
		Hi:       []float64{120, 130, 126, 146, 148, 152},
		Baseline: []float64{95, 125, 100, 120, 135, 150},
		Origins:  []float64{19700, 19763}}
	return &validate.Report{
		Verdicts: []validate.Verdict{{Check: validate.Recovery, Headline: "over-confident: 90% intervals of video direct cover 0%"}},
		Coverage: []validate.CoverageBar{
			{Label: "video via search", Path: "via_search", Cover50: 0.5, Cover90: 0.9},
			{Label: "video direct", Path: "direct", Cover50: 0, Cover90: 0, Flagged: true}},
		Forecasts:  []validate.ForecastSeries{{Stage: "demand", Days: days[:1], Actual: fc.Actual[:1], Mean: fc.Mean[:1], Lo: fc.Lo[:1], Hi: fc.Hi[:1], Baseline: fc.Baseline[:1]}, fc},
		Shifts:     []validate.ShiftBar{{Label: "video via search", Path: "via_search", Shift: 2.4, Level: 1.32, Flagged: true}, {Label: "video direct", Path: "direct", Shift: 0.3, Level: 1}},
		Replicates: 10,
		Caption:    "10 replicates, 1 origin, 1 quarter left out; 2 chains x (60 + 60) per refit.",
	}
}

func TestPNGIsASlide(t *testing.T) {
	for name, rep := range map[string]*validate.Report{"every section": report(), "no check": {}} {
		b, err := validation.PNG(rep)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		img, err := png.Decode(bytes.NewReader(b))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if b := img.Bounds(); b.Dx() != 1600 || b.Dy() != 900 {
			t.Errorf("%s: validation.png is %dx%d, want 1600x900", name, b.Dx(), b.Dy())
		}
	}
}

func TestPNGRefusesNonNumbers(t *testing.T) {
	rep := report()
	rep.Coverage[0].Cover90 = math.NaN()
	if _, err := validation.PNG(rep); err == nil || !strings.Contains(err.Error(), "coverage of video via search is not a number") {
		t.Errorf("NaN coverage: err %v", err)
	}
	rep = report()
	rep.Forecasts[1].Mean[2] = math.Inf(1)
	if _, err := validation.PNG(rep); err == nil || !strings.Contains(err.Error(), "outcome forecast is not a number") {
		t.Errorf("infinite forecast: err %v", err)
	}
}
