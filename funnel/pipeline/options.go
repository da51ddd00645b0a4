package pipeline

import (
	"fmt"
	"slices"
	"strings"

	"spillway/funnel/model"
)

// Choices are the model choices a user makes beyond the data roles; the
// commands take them from --linear and --priors, or from a fit folder's
// spec.json and priors.csv.
type Choices struct {
	// Linear names spend columns whose effect is linear (no adstock, no
	// saturation).
	Linear []string
	// Priors is a priors file (see model.LoadPriors); empty keeps the
	// default priors.
	Priors string
	// Drift names spend columns whose coefficients drift by week (model
	// Options.Drift); DriftAll among them means every spend column.
	Drift []string
	// DriftShape is "" or model.DriftSmooth (a smooth drift) or
	// model.DriftJumps (a smooth drift that can also jump); only with
	// Drift.
	DriftShape string
	// Baseline is "" (a trend line) or model.BaselineSmooth.
	Baseline string
}

// DriftAll as a Drift column means every spend column.
const DriftAll = "all"

// ChoiceError is a choice that does not fit the data: the flag it came from
// and what is wrong.
type ChoiceError struct {
	Flag string
	Err  error
}

func (e *ChoiceError) Error() string { return e.Err.Error() }

func (e *ChoiceError) Unwrap() error { return e.Err }

// LinearError is a Linear column that is not a spend column of the data.
type LinearError struct {
	Column string
	// Spend lists the upper-funnel and paid-search columns.
	Spend []string
}

func (e *LinearError) Error() string {
	return fmt.Sprintf("%s: not an upper-funnel or paid-search column (%s)", e.Column, strings.Join(e.Spend, ", "))
}

// Options checks the choices against the data and returns the model
// options, before any sampling. A Linear column that is not a spend column
// of sc is a *LinearError. The priors file is read against the parameters
// of the stages the linear choices give (its errors name the line and
// column, see model.PriorError), and every stage is then compiled with the
// priors, so that a prior that does not fit its parameter is reported
// with the file's name.
func (c Choices) Options(sc *model.Scaled) (model.Options, error) {
	o := model.Options{Linear: map[string]bool{}}
	spend := slices.Concat(sc.UpperNames, sc.SearchNames)
	for _, col := range c.Linear {
		if !slices.Contains(spend, col) {
			return o, &LinearError{Column: col, Spend: spend}
		}
		o.Linear[col] = true
	}
	for _, col := range c.Drift {
		switch {
		case col == DriftAll:
			for _, sp := range spend {
				o.Drift = setTrue(o.Drift, sp)
			}
		case slices.Contains(spend, col):
			o.Drift = setTrue(o.Drift, col)
		default:
			return o, &ChoiceError{Flag: "drift", Err: fmt.Errorf("%s: not an upper-funnel or paid-search column (%s), nor %s", col, strings.Join(spend, ", "), DriftAll)}
		}
	}
	switch c.DriftShape {
	case "", model.DriftSmooth:
	case model.DriftJumps:
		if len(o.Drift) == 0 {
			return o, &ChoiceError{Flag: "drift-shape", Err: fmt.Errorf("%s: needs --drift (the channels whose effectiveness drifts)", c.DriftShape)}
		}
		o.DriftShape = model.DriftJumps
	default:
		return o, &ChoiceError{Flag: "drift-shape", Err: fmt.Errorf("%q: expected %s (a smooth drift, the default) or %s (a smooth drift that can also jump, about monthly)", c.DriftShape, model.DriftSmooth, model.DriftJumps)}
	}
	switch c.Baseline {
	case "", "line":
	case model.BaselineSmooth:
		o.Baseline = model.BaselineSmooth
	default:
		return o, &ChoiceError{Flag: "baseline", Err: fmt.Errorf("%q: expected line (the default: a trend line plus seasons) or %s (a smooth function of time in place of the line)", c.Baseline, model.BaselineSmooth)}
	}
	if c.Priors == "" {
		return o, nil
	}
	st, err := Stages(sc, o)
	if err != nil {
		return o, err
	}
	pf, err := model.LoadPriorFile(c.Priors, CheckPrior(st), sc)
	if err != nil {
		return o, err
	}
	o.Priors, o.Returns = pf.Priors, pf.Returns
	if st, err = Stages(sc, o); err != nil {
		return o, err
	}
	for _, s := range st {
		if _, err := s.Target(); err != nil {
			return o, fmt.Errorf("%s: %w", c.Priors, err)
		}
	}
	if ties := DriftTies(st[0], st[1], o); len(ties) > 0 {
		// a prior on a drift weight must leave the tie its normal smooth
		// weights and Student-t jump weights to join
		cross := make([]model.CrossTerm, len(ties))
		for i, t := range ties {
			cross[i] = t
		}
		if _, err := model.NewJoint(st[:2], cross...); err != nil {
			return o, fmt.Errorf("%s: %w", c.Priors, err)
		}
	}
	return o, nil
}

func setTrue(m map[string]bool, k string) map[string]bool {
	if m == nil {
		m = map[string]bool{}
	}
	m[k] = true
	return m
}
