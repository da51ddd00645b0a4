package fitfolder

import (
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"time"

	"spillway/funnel/table"
)

// File names of a fit with drifting coefficients or lift tests.
const (
	DriftFileName       = "drift.csv"
	DriftChangeFileName = "drift_change.csv"
	LiftsFileName       = "lifts.csv"
)

// DriftChange is one row of drift_change.csv: whether a drifting
// coefficient's effectiveness changed from the first full quarter to the
// last (the ratio of their mean multipliers, per draw), and the quarters
// where it was highest and lowest.
type DriftChange struct {
	Channel, Path        string
	First, Last          string
	Mean, Q05, Q95       float64 // the ratio last / first
	Up, Down             float64 // P(ratio > 1.1), P(ratio < 1/1.1)
	Peak, Trough         string
	PeakMean, TroughMean float64
}

type driftChangeRow struct {
	Channel    string      `csv:"channel"`
	Path       string      `csv:"path"`
	First      string      `csv:"first_quarter"`
	Last       string      `csv:"last_quarter"`
	Mean       table.Float `csv:"ratio_mean"`
	Q05        table.Float `csv:"ratio_q05"`
	Q95        table.Float `csv:"ratio_q95"`
	Up         table.Float `csv:"p_up_10pct"`
	Down       table.Float `csv:"p_down_10pct"`
	Peak       string      `csv:"peak_quarter"`
	PeakMean   table.Float `csv:"peak_mean"`
	Trough     string      `csv:"trough_quarter"`
	TroughMean table.Float `csv:"trough_mean"`
}

// DriftChangeFile renders drift_change.csv.
func DriftChangeFile(rows []DriftChange) ([]byte, error) {
	out := make([]driftChangeRow, len(rows))
	for i, r := range rows {
		out[i] = driftChangeRow{r.Channel, r.Path, r.First, r.Last, table.Float(r.Mean), table.Float(r.Q05), table.Float(r.Q95),
			table.Float(r.Up), table.Float(r.Down), r.Peak, table.Float(r.PeakMean), r.Trough, table.Float(r.TroughMean)}
	}
	return tableFile(out)
}

// readDriftChange reads drift_change.csv.
func readDriftChange(path string, run Run) ([]DriftChange, error) {
	var rows []driftChangeRow
	lines, err := readTable(path, hintFit, &rows)
	if err != nil {
		return nil, err
	}
	out := make([]DriftChange, len(rows))
	for i, r := range rows {
		bad := func(col, f string, args ...any) error {
			return &Error{File: path, Line: lines[i], Column: col, Err: fmt.Errorf(f, args...)}
		}
		ok, search := run.channelOf(r.Channel)
		switch {
		case !ok:
			return nil, bad("channel", "%q is not a spend column of this fit", r.Channel)
		case !among(r.Path, driftPaths) || search != (r.Path == "controlled"):
			return nil, bad("path", "%s has no path %q", r.Channel, r.Path)
		case !(r.Q05 > 0 && r.Q05 <= r.Mean && r.Mean <= r.Q95):
			return nil, bad("ratio_mean", "mean %v is not within [ratio_q05, ratio_q95] = [%v, %v] above 0", float64(r.Mean), float64(r.Q05), float64(r.Q95))
		case !(r.Up >= 0 && r.Up <= 1):
			return nil, bad("p_up_10pct", "a probability must be within [0, 1]")
		case !(r.Down >= 0 && r.Down <= 1 && r.Up+r.Down <= 1):
			return nil, bad("p_down_10pct", "a probability must be within [0, 1 - p_up_10pct]")
		}
		out[i] = DriftChange{r.Channel, r.Path, r.First, r.Last, float64(r.Mean), float64(r.Q05), float64(r.Q95),
			float64(r.Up), float64(r.Down), r.Peak, r.Trough, float64(r.PeakMean), float64(r.TroughMean)}
	}
	return out, nil
}

// Drift is one row of drift.csv: the posterior of a drifting coefficient's
// multiplier in one week (1 is the channel's average effectiveness).
type Drift struct {
	Channel, Path  string
	Week           time.Time
	Mean, Q05, Q95 float64
}

type driftRow struct {
	Channel string      `csv:"channel"`
	Path    string      `csv:"path"`
	Week    table.Date  `csv:"week"`
	Mean    table.Float `csv:"mean"`
	Q05     table.Float `csv:"q05"`
	Q95     table.Float `csv:"q95"`
}

// DriftFile renders drift.csv.
func DriftFile(rows []Drift) ([]byte, error) {
	out := make([]driftRow, len(rows))
	for i, r := range rows {
		out[i] = driftRow{r.Channel, r.Path, table.Date(r.Week), table.Float(r.Mean), table.Float(r.Q05), table.Float(r.Q95)}
	}
	return tableFile(out)
}

// Lift is one row of lifts.csv: a lift test beside the model's posterior
// of the same quantity (the metric summed over the test's weeks, in the
// metric's units) and how surprising the test is given the rest of the
// data.
type Lift struct {
	// Region is the region of a test in one region of a region panel; ""
	// for a national test (on a panel: every region's spend removed, the
	// metric summed over the regions).
	Region          string
	Channel, Metric string
	Start, End      time.Time
	Estimate, SE    float64
	// Mean, Q05 and Q95: the model's posterior of the lift (the fit
	// includes the test).
	Mean, Q05, Q95 float64
	// RestMean and RestSD: what the rest of the data say, the test's own
	// likelihood divided out (normal approximation; NaN when they say
	// nothing the test does not).
	RestMean, RestSD float64
	// ParetoK is the Pareto shape of the importance ratios that left the
	// test out of the fit's draws; Refit reports that it was too large and
	// the test was left out by a refit without it.
	ParetoK float64
	Refit   bool
	// Z and P: the test's standardised distance from RestMean and the
	// two-sided tail probability of the estimate under the rest of the
	// data's predictive distribution.
	Z, P float64
	// Verdict is agrees, contradicts (P below 0.01) or unchecked (the rest
	// of the data say too little about the quantity to check the test).
	Verdict string
}

type liftRow struct {
	Channel  string        `csv:"channel"`
	Metric   string        `csv:"metric"`
	Start    table.Date    `csv:"start"`
	End      table.Date    `csv:"end"`
	Estimate table.Float   `csv:"estimate"`
	SE       table.Float   `csv:"se"`
	Mean     table.Float   `csv:"model_mean"`
	Q05      table.Float   `csv:"model_q05"`
	Q95      table.Float   `csv:"model_q95"`
	RestMean table.OptStat `csv:"rest_mean"`
	RestSD   table.OptStat `csv:"rest_sd"`
	ParetoK  table.OptStat `csv:"pareto_k"`
	Refit    string        `csv:"left_out_by"`
	Z        table.Float   `csv:"z"`
	P        table.Float   `csv:"p"`
	Verdict  string        `csv:"verdict"`
}

// panelLiftRow is a row of a region panel's lifts.csv: liftRow's columns
// after the region (empty for a national test). A national fit's file has
// no region column and reads as before.
type panelLiftRow struct {
	Region   string        `csv:"region"`
	Channel  string        `csv:"channel"`
	Metric   string        `csv:"metric"`
	Start    table.Date    `csv:"start"`
	End      table.Date    `csv:"end"`
	Estimate table.Float   `csv:"estimate"`
	SE       table.Float   `csv:"se"`
	Mean     table.Float   `csv:"model_mean"`
	Q05      table.Float   `csv:"model_q05"`
	Q95      table.Float   `csv:"model_q95"`
	RestMean table.OptStat `csv:"rest_mean"`
	RestSD   table.OptStat `csv:"rest_sd"`
	ParetoK  table.OptStat `csv:"pareto_k"`
	Refit    string        `csv:"left_out_by"`
	Z        table.Float   `csv:"z"`
	P        table.Float   `csv:"p"`
	Verdict  string        `csv:"verdict"`
}

// liftRegion reads the region column of a region panel's lifts.csv.
type liftRegion struct {
	Region string `csv:"region"`
}

// LiftsFile renders a national fit's lifts.csv.
func LiftsFile(rows []Lift) ([]byte, error) {
	out := make([]liftRow, len(rows))
	for i, r := range rows {
		out[i] = r.row()
	}
	return tableFile(out)
}

// PanelLiftsFile renders a region panel's lifts.csv, with the region
// column.
func PanelLiftsFile(rows []Lift) ([]byte, error) {
	out := make([]panelLiftRow, len(rows))
	for i, r := range rows {
		l := r.row()
		out[i] = panelLiftRow{r.Region, l.Channel, l.Metric, l.Start, l.End, l.Estimate, l.SE, l.Mean, l.Q05, l.Q95,
			l.RestMean, l.RestSD, l.ParetoK, l.Refit, l.Z, l.P, l.Verdict}
	}
	return tableFile(out)
}

func (r Lift) row() liftRow {
	return liftRow{r.Channel, r.Metric, table.Date(r.Start), table.Date(r.End), table.Float(r.Estimate), table.Float(r.SE),
		table.Float(r.Mean), table.Float(r.Q05), table.Float(r.Q95), table.OptStat(r.RestMean), table.OptStat(r.RestSD),
		table.OptStat(r.ParetoK), leftOutBy(r.Refit), table.Float(r.Z), table.Float(r.P), r.Verdict}
}

// How a lift test was left out, the left_out_by column of lifts.csv.
const (
	LeftOutWeights = "weights" // the fit's draws reweighted (Pareto-smoothed importance sampling)
	LeftOutRefit   = "refit"   // a refit without the test
)

func leftOutBy(refit bool) string {
	if refit {
		return LeftOutRefit
	}
	return LeftOutWeights
}

// Paths of drift.csv and verdicts of lifts.csv, as the fit writes them.
var (
	driftPaths   = []string{"via_search", "direct", "controlled"}
	liftVerdicts = []string{"agrees", "contradicts", "unchecked"}
	liftMetrics  = []string{"outcome", "queries"}
)

func among(v string, set []string) bool {
	for _, s := range set {
		if v == s {
			return true
		}
	}
	return false
}

// channelOf reports whether col is a spend column of the fit, and whether
// it is paid search.
func (r Run) channelOf(col string) (ok, search bool) {
	for _, c := range r.Spec.Upper {
		if c == col {
			return true, false
		}
	}
	for _, c := range r.Spec.Search {
		if c == col {
			return true, true
		}
	}
	return false, false
}

// ReadDrift reads into f what a fit with drifting coefficients or lift
// tests writes besides the fit folder (drift.csv, drift_change.csv,
// lifts.csv) from folder dir, as f.Run says the fit had them; Load calls
// it, and run calls it on its folder before the charts.
func (f *Fit) ReadDrift(dir string) error {
	var err error
	if len(f.Run.Drift) > 0 {
		if f.Drift, err = readDrift(filepath.Join(dir, DriftFileName), f.Run); err != nil {
			return err
		}
		if f.DriftChange, err = readDriftChange(filepath.Join(dir, DriftChangeFileName), f.Run); err != nil {
			return err
		}
	}
	if f.Run.Lifts != "" {
		if f.Lifts, err = readLifts(filepath.Join(dir, LiftsFileName), f.Run); err != nil {
			return err
		}
	}
	return nil
}

// readDrift reads drift.csv: every row a spend column of the fit on a path
// it has, its interval ordered, the multiplier positive.
func readDrift(path string, run Run) ([]Drift, error) {
	var rows []driftRow
	lines, err := readTable(path, hintFit, &rows)
	if err != nil {
		return nil, err
	}
	out := make([]Drift, len(rows))
	for i, r := range rows {
		bad := func(col, f string, args ...any) error {
			return &Error{File: path, Line: lines[i], Column: col, Err: fmt.Errorf(f, args...)}
		}
		ok, search := run.channelOf(r.Channel)
		switch {
		case !ok:
			return nil, bad("channel", "%q is not a spend column of this fit", r.Channel)
		case !among(r.Path, driftPaths):
			return nil, bad("path", "%q is not one of via_search, direct, controlled", r.Path)
		case search != (r.Path == "controlled"):
			return nil, bad("path", "%s has no path %s", r.Channel, r.Path)
		case !(r.Q05 > 0):
			return nil, bad("q05", "a multiplier must be > 0, got %v", float64(r.Q05))
		case !(r.Q05 <= r.Mean && r.Mean <= r.Q95):
			return nil, bad("mean", "mean %v is not within [q05, q95] = [%v, %v]", float64(r.Mean), float64(r.Q05), float64(r.Q95))
		}
		out[i] = Drift{Channel: r.Channel, Path: r.Path, Week: time.Time(r.Week), Mean: float64(r.Mean), Q05: float64(r.Q05), Q95: float64(r.Q95)}
	}
	return out, nil
}

// readLifts reads lifts.csv, a region panel's with its region column.
func readLifts(path string, run Run) ([]Lift, error) {
	var rows []liftRow
	lines, err := readTable(path, hintFit, &rows)
	if err != nil {
		return nil, err
	}
	regions := make([]liftRegion, len(rows))
	if has, err := hasColumn(path, "region"); err != nil {
		return nil, err
	} else if has {
		if _, err := readTable(path, hintFit, &regions); err != nil {
			return nil, err
		}
	}
	out := make([]Lift, len(rows))
	for i, r := range rows {
		bad := func(col, f string, args ...any) error {
			return &Error{File: path, Line: lines[i], Column: col, Err: fmt.Errorf(f, args...)}
		}
		start, end := time.Time(r.Start), time.Time(r.End)
		switch ok, _ := run.channelOf(r.Channel); {
		case !ok:
			return nil, bad("channel", "%q is not a spend column of this fit", r.Channel)
		case !among(r.Metric, liftMetrics):
			return nil, bad("metric", "%q is not outcome or queries", r.Metric)
		case end.Before(start):
			return nil, bad("end", "the window ends before it starts")
		case !(r.SE > 0):
			return nil, bad("se", "the standard error must be > 0")
		case !(r.Q05 <= r.Mean && r.Mean <= r.Q95):
			return nil, bad("model_mean", "mean %v is not within [model_q05, model_q95] = [%v, %v]", float64(r.Mean), float64(r.Q05), float64(r.Q95))
		case r.Refit != LeftOutWeights && r.Refit != LeftOutRefit:
			return nil, bad("left_out_by", "%q is not weights or refit", r.Refit)
		case !(r.P >= 0 && r.P <= 1):
			return nil, bad("p", "a probability must be within [0, 1]")
		case !among(r.Verdict, liftVerdicts):
			return nil, bad("verdict", "%q is not agrees, contradicts or unchecked", r.Verdict)
		}
		k := float64(r.ParetoK)
		if math.IsNaN(k) && r.Refit == LeftOutWeights {
			return nil, bad("pareto_k", "no Pareto shape for a test left out by weights")
		}
		out[i] = Lift{Region: regions[i].Region, Channel: r.Channel, Metric: r.Metric, Start: start, End: end, Estimate: float64(r.Estimate), SE: float64(r.SE),
			Mean: float64(r.Mean), Q05: float64(r.Q05), Q95: float64(r.Q95), RestMean: float64(r.RestMean), RestSD: float64(r.RestSD),
			ParetoK: k, Refit: r.Refit == LeftOutRefit, Z: float64(r.Z), P: float64(r.P), Verdict: r.Verdict}
	}
	return out, nil
}

// hasColumn reports whether the header of the CSV file at path names col.
func hasColumn(path, col string) (bool, error) {
	f, err := os.Open(path)
	if err != nil {
		return false, openError(path, hintFit, err)
	}
	defer f.Close()
	head, err := csv.NewReader(f).Read()
	if err != nil {
		return false, &Error{File: path, Line: 1, Err: err}
	}
	for _, h := range head {
		if strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")) == col {
			return true, nil
		}
	}
	return false, nil
}
