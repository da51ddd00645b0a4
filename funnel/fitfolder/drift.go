package fitfolder

import (
	"time"

	"spillway/funnel/table"
)

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
	// Z and P: the test's standardised distance from RestMean and its
	// two-sided tail probability.
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
	Z        table.Float   `csv:"z"`
	P        table.Float   `csv:"p"`
	Verdict  string        `csv:"verdict"`
}

// LiftsFile renders lifts.csv.
func LiftsFile(rows []Lift) ([]byte, error) {
	out := make([]liftRow, len(rows))
	for i, r := range rows {
		out[i] = liftRow{r.Channel, r.Metric, table.Date(r.Start), table.Date(r.End), table.Float(r.Estimate), table.Float(r.SE),
			table.Float(r.Mean), table.Float(r.Q05), table.Float(r.Q95), table.OptStat(r.RestMean), table.OptStat(r.RestSD),
			table.Float(r.Z), table.Float(r.P), r.Verdict}
	}
	return tableFile(out)
}
