package fitfolder

import (
	"bytes"
	"encoding/json"
	"errors"
	"os"

	"spillway/funnel/data"
)

// Run is spec.json: everything needed to rerun a fit.
type Run struct {
	Spec   data.Spec `json:"spec"`
	Demo   string    `json:"demo,omitempty"` // the scenario name when the data are the built-in demo
	Seed   uint64    `json:"seed"`
	Chains int       `json:"chains"`
	Warmup int       `json:"warmup"`
	Draws  int       `json:"draws"`
	Accept float64   `json:"target_accept"`
	Linear []string  `json:"linear,omitempty"`
	Priors string    `json:"priors,omitempty"` // the priors file given; copied into the folder as priors.csv
	Drift  []string  `json:"drift,omitempty"`  // spend columns (or all) whose effectiveness drifts
	// DriftShape is "jumps" for a drift that can jump (empty: smooth).
	DriftShape string `json:"drift_shape,omitempty"`
	Baseline   string `json:"baseline,omitempty"` // "smooth" for a baseline that moves
	Lifts      string `json:"lifts,omitempty"`    // the lift-test file given; copied into the folder as LiftTestsFile
	// National is set when regional data were fitted as their national sum
	// on request (--national).
	National bool   `json:"national,omitempty"`
	Command  string `json:"command"`
	DataFile string `json:"data_file"`
	Version  string `json:"version"`
	// Labels are the display names the charts and the report use; zero
	// means names made from the column names.
	Labels Labels `json:"labels,omitzero"`
}

// Labels are the names a review shows instead of column names: a label
// per spend column ("Online video" for video_spend), the outcome's name
// ("orders") and the currency of spend ("EUR"). Empty fields fall back on
// the column names and no currency.
type Labels struct {
	Channels map[string]string `json:"channels,omitempty"`
	Outcome  string            `json:"outcome,omitempty"`
	Currency string            `json:"currency,omitempty"`
}

// LiftTestsFile is the fit folder's copy of the lift-test file a fit was
// given (lifts.csv is the tests beside the model's posterior).
const LiftTestsFile = "lift_tests.csv"

// jsonFile renders v as an indented JSON file.
func jsonFile(v any) ([]byte, error) {
	b, err := json.MarshalIndent(v, "", "  ")
	return append(b, '\n'), err
}

// readJSON decodes the JSON file at path into v; a decoding error is an
// *Error at the line (and field) at fault.
func readJSON(path string, v any) error { return readJSONHint(path, hintFit, v) }

// readJSONHint is readJSON with hint saying what writes the file, for the
// message when it is missing.
func readJSONHint(path, hint string, v any) error {
	b, err := os.ReadFile(path)
	if err != nil {
		return openError(path, hint, err)
	}
	if err := json.NewDecoder(bytes.NewReader(b)).Decode(v); err != nil {
		var se *json.SyntaxError
		var te *json.UnmarshalTypeError
		switch {
		case errors.As(err, &se):
			return &Error{File: path, Line: lineAt(b, se.Offset), Err: err}
		case errors.As(err, &te):
			return &Error{File: path, Line: lineAt(b, te.Offset), Column: te.Field, Err: err}
		}
		return &Error{File: path, Err: err}
	}
	return nil
}

// readRun reads spec.json and checks that it names the columns every fit
// has.
func readRun(path string) (Run, error) {
	var r Run
	if err := readJSON(path, &r); err != nil {
		return r, err
	}
	s := r.Spec
	for _, c := range []struct {
		key string
		ok  bool
	}{{"spec.date", s.Date != ""}, {"spec.upper", len(s.Upper) > 0}, {"spec.search", len(s.Search) > 0},
		{"spec.queries", s.Queries != ""}, {"spec.outcome", s.Outcome != ""}} {
		if !c.ok {
			return r, &Error{File: path, Column: c.key, Err: errors.New("missing or empty")}
		}
	}
	return r, nil
}
