package validation

import (
	"testing"

	"spillway/funnel/validate"
)

// TestBothStagesHaveAHoldoutPanel: the holdout section draws the demand
// stage and the outcome stage, each labelled with its column and stage
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
	want := []string{"Holdout: branded queries (demand stage), forecast vs actual", "Holdout: conversions (outcome stage), forecast vs actual"}
	if len(ps) != 2 {
		t.Fatalf("%d holdout panels, want 2", len(ps))
	}
	for i, p := range ps {
		if p.Title.Text != want[i] {
			t.Errorf("panel %d: title %q, want %q", i, p.Title.Text, want[i])
		}
	}
	if got := ps[0].Y.Label.Text; got != "branded queries per week" {
		t.Errorf("demand panel's axis %q", got)
	}
}
