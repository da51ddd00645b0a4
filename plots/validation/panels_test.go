package validation

import (
	"testing"

	"spillway/funnel/validate"
)

// TestBothStagesHaveAHoldoutPanel: the holdout section draws the demand
// stage and the outcome stage, each titled with its stage and its axis with its column
// (it used to draw the outcome only).
func TestBothStagesHaveAHoldoutPanel(t *testing.T) {
	days := []float64{19700, 19707, 19714}
	one := func(stage, col string) validate.ForecastSeries {
		return validate.ForecastSeries{Stage: stage, Column: col, Days: days, Actual: []float64{1, 2, 3}, Mean: []float64{1, 2, 3},
			Lo: []float64{0, 1, 2}, Hi: []float64{2, 3, 4}, Baseline: []float64{1, 1, 1}, NoMedia: []float64{2, 2, 2}, Origins: days[:1]}
	}
	f := &page{rep: &validate.Report{Forecasts: []validate.ForecastSeries{one("demand", "branded_queries"), one("outcome", "conversions")}}}
	ps, err := f.forecastPanels()
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"Holdout: demand", "Holdout: outcome"}
	if len(ps) != 2 {
		t.Fatalf("%d holdout panels, want 2", len(ps))
	}
	axis := []string{"branded queries per week", "conversions per week"}
	for i, p := range ps {
		if p.Title.Text != want[i] || p.Y.Label.Text != axis[i] {
			t.Errorf("panel %d: title %q, axis %q; want %q, %q", i, p.Title.Text, p.Y.Label.Text, want[i], axis[i])
		}
	}
}
