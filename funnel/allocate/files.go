package allocate

import (
	"errors"
	"fmt"
	"math"
	"os"
	"slices"

	"spillway/funnel/fitfolder"
	"spillway/funnel/table"
	"spillway/mediation"
)

// File is a CSV file the user gives (limits, or a plan's amounts), kept
// with the line of each channel's row so that a problem found later (min
// above max, minimums above the budget) can point at it.
type File struct {
	Path    string
	columns []string
	lines   map[string]int
}

type limitRow struct {
	Channel string         `csv:"channel"`
	Min     table.Float    `csv:"min"`
	Max     table.OptFloat `csv:"max"`
}

// ReadLimits reads a limits file: the columns channel,min,max in that
// order, one row per channel, amounts in the data's currency over the
// plan's weeks; an empty max is no upper limit, and min = max locks the
// channel. Problems are *table.Error at the file, line and column.
func ReadLimits(path string) ([]Limit, *File, error) {
	var rows []limitRow
	f, err := readFile(path, &rows)
	if err != nil {
		return nil, nil, err
	}
	out := make([]Limit, len(rows))
	for i, r := range rows {
		mx := float64(r.Max)
		if math.IsNaN(mx) {
			mx = math.Inf(1)
		}
		out[i] = Limit{Channel: r.Channel, Min: float64(r.Min), Max: mx}
	}
	return out, f, nil
}

type amountRow struct {
	Channel string      `csv:"channel"`
	Amount  table.Float `csv:"amount"`
}

// Amount is a channel's amount in a plan the user gives.
type Amount struct {
	Channel string
	Amount  float64
}

// ReadAmounts reads a plan the user gives: the columns channel,amount in
// that order, one row per channel, amounts in the data's currency over the
// plan's weeks. Problems are *table.Error at the file, line and column.
func ReadAmounts(path string) ([]Amount, *File, error) {
	var rows []amountRow
	f, err := readFile(path, &rows)
	if err != nil {
		return nil, nil, err
	}
	out := make([]Amount, len(rows))
	for i, r := range rows {
		out[i] = Amount{Channel: r.Channel, Amount: float64(r.Amount)}
	}
	return out, f, nil
}

func readFile(path string, rows any) (*File, error) {
	r, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	lines, err := table.Read(r, path, rows, table.Options{Exact: true})
	if err != nil {
		return nil, err
	}
	f := &File{Path: path, columns: table.Columns(rows), lines: map[string]int{}}
	var names []string
	switch rs := rows.(type) {
	case *[]limitRow:
		for _, r := range *rs {
			names = append(names, r.Channel)
		}
	case *[]amountRow:
		for _, r := range *rs {
			names = append(names, r.Channel)
		}
	}
	for i, n := range names {
		if _, dup := f.lines[n]; dup {
			return nil, &table.Error{File: path, Line: lines[i], Col: 1, Column: "channel", Err: fmt.Errorf("channel %s has a row already (line %d)", n, f.lines[n])}
		}
		f.lines[n] = lines[i]
	}
	return f, nil
}

// Locate returns err, a *LimitError about a channel of the file, as a
// *table.Error at that channel's row and the column at fault; any other
// error, or one about a channel the file has no row for, is returned as
// it is.
func (f *File) Locate(err error) error {
	var le *LimitError
	if f == nil || !errors.As(err, &le) {
		return err
	}
	line, ok := f.lines[le.Channel]
	if !ok {
		return err
	}
	field := le.Field
	if field == "lock" {
		field = "channel"
	}
	col := slices.Index(f.columns, field)
	if col < 0 {
		col = 0 // the channel's column
	}
	return &table.Error{File: f.Path, Line: line, Col: col + 1, Column: f.columns[col], Err: le}
}

// Given returns the amounts of a plan the user gives, in Channels' order;
// a channel without a row keeps its current amount. An unknown channel or
// an amount below zero is a *LimitError.
func (p *Problem) Given(rows []Amount) ([]float64, error) {
	out := p.Current()
	for _, r := range rows {
		c := p.index(r.Channel)
		switch {
		case c < 0:
			return nil, &LimitError{Channel: r.Channel, Field: "channel", Err: fmt.Errorf("not a channel of the data; expected one of %s", joinNames(p.names))}
		case !(r.Amount >= 0) || r.Amount > 1e15:
			return nil, &LimitError{Channel: r.Channel, Field: "amount", Err: fmt.Errorf("amount %v: expected an amount >= 0", r.Amount)}
		}
		out[c] = r.Amount
	}
	return out, nil
}

// PlanSettings are what a plan's summary records about how it was made.
type PlanSettings struct {
	Pattern string
	After   int
	Command string
}

// Tables returns r as the plan files' rows (package fitfolder).
func (p *Problem) Tables(r *Result, ps PlanSettings) *fitfolder.Plan {
	iv := func(s mediation.Summary) fitfolder.Interval {
		return fitfolder.Interval{Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95}
	}
	out := &fitfolder.Plan{}
	s := &out.Summary
	for c, ch := range r.Channels {
		out.Channels = append(out.Channels, fitfolder.PlanChannel{Channel: ch.Channel, Current: ch.Current, Planned: ch.Planned,
			Min: ch.Min, Max: ch.Max, Locked: ch.Locked, AtLimit: ch.Bound,
			IncrementalCurrent: iv(ch.EffectCurrent), IncrementalPlanned: iv(ch.EffectPlanned), Marginal: iv(ch.Marginal)})
		s.MarginalReturns = append(s.MarginalReturns, fitfolder.MarginalReturn{Channel: ch.Channel, Interval: iv(ch.Marginal)})
		for t, w := range r.Weeks {
			out.Weekly = append(out.Weekly, fitfolder.PlanWeek{Week: w, Channel: ch.Channel, Spend: r.Weekly[c][t]})
		}
	}
	pattern := ps.Pattern
	if pattern == "" {
		pattern = "last"
	}
	after := ps.After
	if after == 0 {
		after = DefaultAfter
	}
	s.Given, s.Objective, s.Pattern = !r.Optimised, r.Objective, pattern
	s.FirstWeek, s.Weeks, s.AfterWeeks, s.Draws = r.Weeks[0].Format(table.DateLayout), len(r.Weeks), after, p.Draws()
	s.Budget, s.CurrentTotal, s.PlannedTotal = p.Budget(), r.Current, r.Planned
	if !r.Optimised {
		s.Budget = r.Planned
	}
	s.IncrementalCurrent, s.IncrementalPlanned, s.Gain = iv(r.IncrementalCurrent), iv(r.IncrementalPlanned), iv(r.Gain)
	s.PBeatsCurrent = r.PBeats
	if k := r.Check; k != nil {
		s.Check = &fitfolder.PlanCheck{OK: k.OK(), Lambda: k.Lambda, Spread: k.Spread, Tolerance: k.Tolerance, Failures: append([]string{}, k.Failures...)}
	}
	s.Warnings = append([]string{}, r.Warnings...)
	s.Command = ps.Command
	return out
}
