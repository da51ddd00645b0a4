package validate

import (
	"fmt"

	"spillway/funnel/model"
	"spillway/mediation"
)

// truthValues returns the truth as draws of the sweep's demand and outcome
// stages. A truth.json holds the default model's parameters; when the
// sweep's options make coefficients drift or the baseline move, they are
// read as a draw of the stages without those options and carried over by
// model's FromFixed (no drift: multipliers of 1; the trend line as the
// moving baseline), so the replicates are simulated from the truth as
// given and the drift fits are judged against it. Without those options
// the values are read as they are.
func truthValues(sw *Sweep, t *Truth) (v1, v2 []float64, err error) {
	return truthValuesOn(sw.base, sw.stages, sw.in.Options, t)
}

// truthValuesOn is truthValues for stages st built on sc with options o
// (a region panel's region: its own scaling and national-shaped stages).
func truthValuesOn(sc *model.Scaled, st [2]*model.Stage, o model.Options, t *Truth) (v1, v2 []float64, err error) {
	if len(o.Drift) == 0 && o.Baseline == "" {
		return truthPoint(st[0], st[1], t)
	}
	o.Drift, o.Baseline = nil, ""
	f1, err := model.Demand(sc, o)
	if err != nil {
		return nil, nil, err
	}
	f2, err := model.Outcome(sc, o)
	if err != nil {
		return nil, nil, err
	}
	u1, u2, err := truthPoint(f1, f2, t)
	if err != nil {
		return nil, nil, err
	}
	if v1, _, err = st[0].FromFixed(f1, u1); err != nil {
		return nil, nil, fmt.Errorf("validate: the truth's demand parameters: %w", err)
	}
	if v2, _, err = st[1].FromFixed(f2, u2); err != nil {
		return nil, nil, fmt.Errorf("validate: the truth's outcome parameters: %w", err)
	}
	return v1, v2, nil
}

// truthPoint reads the truth's values in the order of the stages' names.
func truthPoint(s1, s2 *model.Stage, t *Truth) (v1, v2 []float64, err error) {
	d1, err := mediation.Point(s1.Names(), t.Demand)
	if err != nil {
		return nil, nil, fmt.Errorf("validate: the truth's demand parameters: %w", err)
	}
	d2, err := mediation.Point(s2.Names(), t.Outcome)
	if err != nil {
		return nil, nil, fmt.Errorf("validate: the truth's outcome parameters: %w", err)
	}
	return d1.Rows[0], d2.Rows[0], nil
}
