package main

import (
	"context"
	"fmt"
	"io"
	"time"

	"spillway/funnel/fitfolder"
	"spillway/funnel/pipeline"
)

// driftFiles adds to files what a fit with drifting effectiveness or lift
// tests writes besides the fit folder: drift.csv (each drifting
// coefficient's weekly multiplier), lifts.csv (each lift test beside the
// model's posterior of the same quantity), drift_change.csv (whether
// effectiveness changed from the first full quarter to the last) and the
// copy of the lift-test file. It returns the lift tests' checks (a test the fit's draws cannot
// leave out reliably is checked by a refit without it: hook shows its
// progress).
func driftFiles(ctx context.Context, files map[string][]byte, f *pipeline.Fitted, liftFile []byte, hook pipeline.StageHook) ([]pipeline.LiftCheck, error) {
	if err := driftTables(files, f.Drifts(), f.DriftChanges); err != nil {
		return nil, err
	}
	if len(f.Tests) == 0 {
		return nil, nil
	}
	checks, err := f.CheckLifts(ctx, hook)
	if err != nil {
		return nil, err
	}
	return checks, liftFiles(files, checks, liftFile, false)
}

// driftTables adds drift.csv and drift_change.csv (changes, called only
// when something drifts) to files; nothing when d is empty. A national fit
// and a region panel (whose multiplier every region shares) write the same
// files.
func driftTables(files map[string][]byte, d []pipeline.DriftWeek, changes func() []pipeline.DriftChange) error {
	if len(d) == 0 {
		return nil
	}
	rows := make([]fitfolder.Drift, len(d))
	for i, w := range d {
		rows[i] = fitfolder.Drift{Channel: w.Channel, Path: w.Path, Week: w.Week, Mean: w.Mean, Q05: w.Q05, Q95: w.Q95}
	}
	b, err := fitfolder.DriftFile(rows)
	if err != nil {
		return fmt.Errorf("drift.csv: %w", err)
	}
	files[fitfolder.DriftFileName] = b
	ch := changes()
	crow := make([]fitfolder.DriftChange, len(ch))
	for i, c := range ch {
		crow[i] = fitfolder.DriftChange{Channel: c.Channel, Path: c.Path, First: c.First, Last: c.Last, Mean: c.Mean, Q05: c.Q05, Q95: c.Q95,
			Up: c.Up, Down: c.Down, Peak: c.Peak, Trough: c.Trough, PeakMean: c.PeakMean, TroughMean: c.TroughMean}
	}
	if files[fitfolder.DriftChangeFileName], err = fitfolder.DriftChangeFile(crow); err != nil {
		return fmt.Errorf("%s: %w", fitfolder.DriftChangeFileName, err)
	}
	return nil
}

// liftFiles adds lifts.csv (a region panel's, panel, with the region
// column) and the copy of the lift-test file to files.
func liftFiles(files map[string][]byte, checks []pipeline.LiftCheck, liftFile []byte, panel bool) error {
	rows := make([]fitfolder.Lift, len(checks))
	for i, c := range checks {
		t := c.Test
		rows[i] = fitfolder.Lift{Region: t.Region, Channel: t.Channel, Metric: t.Metric.String(), Start: t.Start, End: t.End, Estimate: t.Estimate, SE: t.SE,
			Mean: c.Mean, Q05: c.Q05, Q95: c.Q95, RestMean: c.Without, RestSD: c.WithoutSD, ParetoK: c.K, Refit: c.Refit, Z: c.Z, P: c.P, Verdict: c.Verdict()}
	}
	render := fitfolder.LiftsFile
	if panel {
		render = fitfolder.PanelLiftsFile
	}
	b, err := render(rows)
	if err != nil {
		return fmt.Errorf("%s: %w", fitfolder.LiftsFileName, err)
	}
	files[fitfolder.LiftsFileName] = b
	files[fitfolder.LiftTestsFile] = liftFile
	return nil
}

// printLiftChecks prints a line for every lift test the model cannot
// reconcile with the rest of the data, and for every test the rest of the
// data cannot check.
func printLiftChecks(w io.Writer, checks []pipeline.LiftCheck) {
	bad := 0
	for _, c := range checks {
		t := c.Test
		where := ""
		if t.Region != "" {
			where = " in region " + t.Region
		}
		what := fmt.Sprintf("lift test (line %d) of %s%s on %s, %s to %s: %.4g (se %.3g)",
			t.Line, t.Channel, where, t.Metric, t.Start.Format(time.DateOnly), t.End.Format(time.DateOnly), t.Estimate, t.SE)
		switch c.Verdict() {
		case pipeline.LiftContradicts:
			fmt.Fprintf(w, "%s, but the rest of the data say %.4g (sd %.3g): p = %.2g; the model cannot reconcile them\n", what, c.Without, c.WithoutSD, c.P)
		case pipeline.LiftUnchecked:
			fmt.Fprintf(w, "%s: the model follows the test (%.4g [%.4g, %.4g]); the rest of the data say too little about it to check it\n", what, c.Mean, c.Q05, c.Q95)
		default:
			continue
		}
		bad++
	}
	if len(checks) > 0 && bad == 0 {
		fmt.Fprintf(w, "lift tests: all %d agree with the rest of the data (lifts.csv)\n", len(checks))
	}
}
