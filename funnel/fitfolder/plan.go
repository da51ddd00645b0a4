package fitfolder

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"time"

	"spillway/funnel/table"
)

// Plan is what `spillway allocate` writes: plan.csv (one row per channel),
// plan_weekly.csv (the planned spend per week and channel) and plan.json
// (the plan's summary).
type Plan struct {
	Channels []PlanChannel
	Weekly   []PlanWeek
	Summary  PlanSummary
}

// PlanChannel is one row of plan.csv. Amounts are in the data's currency
// over the plan's weeks; Max is NaN when the channel has no upper limit.
// The incremental outcomes (outcome units, over the plan's weeks and the
// weeks after) are the channel's at its current and at its planned amount;
// Marginal is its marginal return at the plan (outcome per unit of
// currency). AtLimit is "min", "max" or empty.
type PlanChannel struct {
	Channel                    string
	Current, Planned, Min, Max float64
	Locked                     bool
	AtLimit                    string
	IncrementalCurrent         Interval
	IncrementalPlanned         Interval
	Marginal                   Interval
}

// Interval is a posterior mean with its 90% interval (and median).
type Interval struct {
	Mean float64 `json:"mean"`
	Q05  float64 `json:"q05"`
	Q50  float64 `json:"q50"`
	Q95  float64 `json:"q95"`
}

type planRow struct {
	Channel    string         `csv:"channel"`
	Current    table.Money    `csv:"current"`
	Planned    table.Money    `csv:"planned"`
	Min        table.Money    `csv:"min"`
	Max        table.OptMoney `csv:"max"`
	Locked     bool           `csv:"locked"`
	AtLimit    string         `csv:"at_limit"`
	CurMean    table.Float    `csv:"incremental_current_mean"`
	CurQ05     table.Float    `csv:"incremental_current_q05"`
	CurQ95     table.Float    `csv:"incremental_current_q95"`
	PlanMean   table.Float    `csv:"incremental_planned_mean"`
	PlanQ05    table.Float    `csv:"incremental_planned_q05"`
	PlanQ95    table.Float    `csv:"incremental_planned_q95"`
	MarginMean table.Float    `csv:"marginal_return_mean"`
	MarginQ05  table.Float    `csv:"marginal_return_q05"`
	MarginQ95  table.Float    `csv:"marginal_return_q95"`
}

// PlanWeek is one row of plan_weekly.csv: a channel's planned spend in the
// week starting Week.
type PlanWeek struct {
	Week    time.Time
	Channel string
	Spend   float64
}

type planWeekRow struct {
	Week    table.Date  `csv:"week"`
	Channel string      `csv:"channel"`
	Spend   table.Money `csv:"spend"`
}

// PlanSummary is plan.json.
type PlanSummary struct {
	// Given is true for a plan the user brought (--plan), false for an
	// optimised one.
	Given bool `json:"given"`
	// Objective is what the plan maximises: "mean" (the posterior mean of
	// the incremental outcome) or "qP of the gain" (cautious).
	Objective string `json:"objective"`
	// Pattern spreads each channel's amount over the weeks: "last",
	// "even" or a window of the data.
	Pattern    string `json:"pattern"`
	FirstWeek  string `json:"first_week"`
	Weeks      int    `json:"weeks"`
	AfterWeeks int    `json:"after_weeks"`
	Draws      int    `json:"draws"`
	// Budget, CurrentTotal and PlannedTotal are in the data's currency.
	Budget       float64 `json:"budget"`
	CurrentTotal float64 `json:"current_total"`
	PlannedTotal float64 `json:"planned_total"`
	// The incremental outcomes of the current and the planned plan and the
	// gain (planned minus current, draws paired), in outcome units.
	IncrementalCurrent Interval `json:"incremental_current"`
	IncrementalPlanned Interval `json:"incremental_planned"`
	Gain               Interval `json:"gain"`
	// PBeatsCurrent is the posterior probability that the plan's
	// incremental outcome exceeds the current plan's.
	PBeatsCurrent   float64          `json:"p_beats_current"`
	MarginalReturns []MarginalReturn `json:"marginal_returns"`
	// Check is the first-order check of an optimised plan (posterior mean).
	Check    *PlanCheck `json:"check,omitempty"`
	Warnings []string   `json:"warnings"`
	Command  string     `json:"command"`
}

// MarginalReturn is a channel's marginal return at the plan, outcome units
// per unit of currency.
type MarginalReturn struct {
	Channel string `json:"channel"`
	Interval
}

// PlanCheck is the first-order (KKT) check of an optimised plan.
type PlanCheck struct {
	OK        bool     `json:"ok"`
	Lambda    float64  `json:"lambda"`
	Spread    float64  `json:"spread"`
	Tolerance float64  `json:"tolerance"`
	Failures  []string `json:"failures"`
}

// PlanChart is the name of the plan's chart, drawn by package plots and
// written beside the plan's tables.
const PlanChart = "plan.png"

// Files renders the plan's files by name.
func (p *Plan) Files() (map[string][]byte, error) {
	rows := make([]planRow, len(p.Channels))
	for i, c := range p.Channels {
		mx := c.Max
		if math.IsInf(mx, 1) {
			mx = math.NaN()
		}
		rows[i] = planRow{c.Channel, table.Money(c.Current), table.Money(c.Planned), table.Money(c.Min), table.OptMoney(mx), c.Locked, c.AtLimit,
			table.Float(c.IncrementalCurrent.Mean), table.Float(c.IncrementalCurrent.Q05), table.Float(c.IncrementalCurrent.Q95),
			table.Float(c.IncrementalPlanned.Mean), table.Float(c.IncrementalPlanned.Q05), table.Float(c.IncrementalPlanned.Q95),
			table.Float(c.Marginal.Mean), table.Float(c.Marginal.Q05), table.Float(c.Marginal.Q95)}
	}
	weekly := make([]planWeekRow, len(p.Weekly))
	for i, w := range p.Weekly {
		weekly[i] = planWeekRow{table.Date(w.Week), w.Channel, table.Money(w.Spend)}
	}
	files := map[string][]byte{}
	var err error
	if files["plan.csv"], err = tableFile(rows); err != nil {
		return nil, fmt.Errorf("plan.csv: %w", err)
	}
	if files["plan_weekly.csv"], err = tableFile(weekly); err != nil {
		return nil, fmt.Errorf("plan_weekly.csv: %w", err)
	}
	s := p.Summary
	if s.Warnings == nil {
		s.Warnings = []string{}
	}
	if files["plan.json"], err = jsonFile(s); err != nil {
		return nil, fmt.Errorf("plan.json: %w", err)
	}
	return files, nil
}

// HasPlan reports whether the folder dir holds a plan (plan.csv).
func HasPlan(dir string) bool {
	_, err := os.Stat(filepath.Join(dir, "plan.csv"))
	return err == nil
}

const hintPlan = "written by spillway allocate"

// ReadPlan reads the plan in dir, checking plan.csv's channels against
// plan_weekly.csv's. A missing file wraps ErrMissing; any other problem is
// an *Error naming the file, line and column.
func ReadPlan(dir string) (*Plan, error) {
	p := &Plan{}
	path := filepath.Join(dir, "plan.csv")
	var rows []planRow
	lines, err := readTable(path, hintPlan, &rows)
	if err != nil {
		return nil, err
	}
	known := map[string]bool{}
	for i, r := range rows {
		if known[r.Channel] {
			return nil, rowError(path, lines[i], "channel", "channel %s appears twice", r.Channel)
		}
		if err := oneOf(path, lines[i], "at_limit", r.AtLimit, "", "min", "max"); err != nil {
			return nil, err
		}
		known[r.Channel] = true
		mx := float64(r.Max)
		if math.IsNaN(mx) {
			mx = math.Inf(1)
		}
		p.Channels = append(p.Channels, PlanChannel{Channel: r.Channel, Current: float64(r.Current), Planned: float64(r.Planned),
			Min: float64(r.Min), Max: mx, Locked: r.Locked, AtLimit: r.AtLimit,
			IncrementalCurrent: Interval{Mean: float64(r.CurMean), Q05: float64(r.CurQ05), Q50: math.NaN(), Q95: float64(r.CurQ95)},
			IncrementalPlanned: Interval{Mean: float64(r.PlanMean), Q05: float64(r.PlanQ05), Q50: math.NaN(), Q95: float64(r.PlanQ95)},
			Marginal:           Interval{Mean: float64(r.MarginMean), Q05: float64(r.MarginQ05), Q50: math.NaN(), Q95: float64(r.MarginQ95)}})
	}
	path = filepath.Join(dir, "plan_weekly.csv")
	var weekly []planWeekRow
	if lines, err = readTable(path, hintPlan, &weekly); err != nil {
		return nil, err
	}
	for i, w := range weekly {
		if !known[w.Channel] {
			return nil, rowError(path, lines[i], "channel", "channel %s is not in plan.csv", w.Channel)
		}
		p.Weekly = append(p.Weekly, PlanWeek{Week: time.Time(w.Week), Channel: w.Channel, Spend: float64(w.Spend)})
	}
	if err := readJSONHint(filepath.Join(dir, "plan.json"), hintPlan, &p.Summary); err != nil {
		return nil, err
	}
	return p, nil
}
