package allocate

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"time"

	"spillway/funnel/model"
	"spillway/funnel/window"
	"spillway/mediation"
)

// Defaults of Settings.
const (
	DefaultWeeks = 13 // a quarter
	DefaultAfter = 52 // a year of carryover after the plan
)

// Inputs are what a plan needs: the scaled data, the demand and outcome
// stages, and their paired posterior draws (row d of DemandDraws pairs with
// row d of OutcomeDraws; columns in each stage's Names order). There is no
// naive stage here: a plan never uses paid search's apparent return.
type Inputs struct {
	Data                      *model.Scaled
	Demand, Outcome           *model.Stage
	DemandDraws, OutcomeDraws mediation.Draws
}

// FromSplit returns the inputs of a plan from the split's inputs, leaving
// out the naive stage.
func FromSplit(in *mediation.Inputs) Inputs {
	return Inputs{Data: in.Data, Demand: in.Demand, Outcome: in.Outcome, DemandDraws: in.DemandDraws, OutcomeDraws: in.OutcomeDraws}
}

// Limit holds a channel's amount over the plan's weeks within [Min, Max],
// in the data's currency. Max is +Inf for no upper limit; Min = Max locks
// the channel at that amount.
type Limit struct {
	Channel  string // the data column
	Min, Max float64
}

// Settings say which plan to build. The zero value is the default plan:
// 13 weeks, each channel's own flighting, the current total, no limits, the
// posterior mean.
type Settings struct {
	// Weeks is the plan's length in weeks. If it is zero, DefaultWeeks.
	Weeks int
	// After is the number of weeks after the plan whose outcome counts
	// (the plan's carryover). If it is zero, DefaultAfter.
	After int
	// Pattern spreads a channel's amount over the plan's weeks: "" (or
	// "last") is its spend in the data's last Weeks weeks, "even" an even
	// spread of that same amount, and a window of the data (a quarter such
	// as "2025Q3", or "YYYY-MM-DD:YYYY-MM-DD") its spend in that window,
	// repeated if the window is shorter than the plan. A pattern that is
	// all zero spreads evenly, from a current amount of zero.
	Pattern string
	// Budget is the plan's total over every channel and week, in the data's
	// currency. If it is zero, the current plan's total.
	Budget float64
	// Limits holds per-channel limits, at most one per channel; a channel
	// without one may take anything from 0 to the budget.
	Limits []Limit
	// Lock lists channels (data columns) held at their current amount; a
	// lock overrides the channel's limits.
	Lock []string
	// Quantile chooses the objective: 0 maximises the posterior mean of the
	// plan's incremental outcome; p in (0, 0.5] maximises the p-quantile of
	// the gain over the current plan, draws paired (cautious: with 0.1, the
	// gain that 90% of the posterior exceeds).
	Quantile float64
}

// LimitError is a problem with the limits, the locks or the budget, with
// the channel and the field it concerns, so a caller can point at the line
// and column of the file (or the flag) the value came from.
type LimitError struct {
	// Channel is the data column concerned; empty for the budget itself.
	Channel string
	// Field is "channel", "min", "max", "lock" or "budget".
	Field string
	Err   error
}

func (e *LimitError) Error() string {
	if e.Channel == "" {
		return e.Err.Error()
	}
	return fmt.Sprintf("channel %s: %v", e.Channel, e.Err)
}

func (e *LimitError) Unwrap() error { return e.Err }

// SettingError is a setting that cannot make a plan: Setting names the
// field of Settings in lower case ("weeks", "after", "pattern",
// "quantile").
type SettingError struct {
	Setting string
	Err     error
}

func (e *SettingError) Error() string { return e.Err.Error() }

func (e *SettingError) Unwrap() error { return e.Err }

// Problem is a budget plan ready to be optimised or evaluated: channels,
// patterns, current amounts, limits and budget, and the simulator with
// each draw's carryover from the data.
type Problem struct {
	names   []string // upper-funnel channels, then paid search
	search  []bool
	weeks   []time.Time // start of each plan week
	pattern [][]float64 // [channel][week] weights summing to 1
	current []float64   // the pattern's own amount, currency over the plan's weeks
	// amounts in cents: current (rounded), limits (noMax for none), budget
	curC, minC, maxC []int64
	budgetC          int64
	locked           []bool
	quantile         float64
	dataMax          []float64 // largest weekly spend in the data, currency
	eng              *engine
}

// New builds the problem of planning the weeks after in's data under s.
// Problems with the limits, the locks or the budget are *LimitError.
func New(in Inputs, s Settings) (*Problem, error) {
	sc := in.Data
	if err := checkDraws(in); err != nil {
		return nil, err
	}
	if s.Weeks == 0 {
		s.Weeks = DefaultWeeks
	}
	if s.After == 0 {
		s.After = DefaultAfter
	}
	if s.Weeks < 1 {
		return nil, &SettingError{"weeks", fmt.Errorf("a plan of %d weeks", s.Weeks)}
	}
	if s.After < 0 {
		return nil, &SettingError{"after", fmt.Errorf("%d weeks after the plan", s.After)}
	}
	if s.Quantile < 0 || s.Quantile > 0.5 || math.IsNaN(s.Quantile) {
		return nil, &SettingError{"quantile", fmt.Errorf("the cautious objective's quantile is %v; expected a probability in (0, 0.5]", s.Quantile)}
	}
	p := &Problem{quantile: s.Quantile}
	p.names = append(append(p.names, sc.UpperNames...), sc.SearchNames...)
	raw := append(append([][]float64(nil), sc.RawUpper...), sc.RawSearch...)
	scale := append(append([]float64(nil), sc.UpperScale...), sc.SearchScale...)
	for c := range p.names {
		p.search = append(p.search, c >= len(sc.UpperNames))
		p.dataMax = append(p.dataMax, maxOf(raw[c]))
	}
	last := sc.Weeks[sc.T-1]
	for i := 0; i < s.Weeks; i++ {
		p.weeks = append(p.weeks, last.AddDate(0, 0, 7*(i+1)))
	}
	from, to, err := patternWindow(s.Pattern, s.Weeks, sc.Weeks)
	if err != nil {
		return nil, err
	}
	for c := range sc.UpperNames {
		// a channel run on exposure buys it at its pattern weeks' cost per unit
		scale[c] = sc.CostPerUnit(c, from, to)
	}
	for c := range p.names {
		w, amount := pattern(raw[c][from:to+1], s.Weeks, s.Pattern == "even")
		p.pattern = append(p.pattern, w)
		p.current = append(p.current, amount)
	}
	if err := p.setLimits(s); err != nil {
		return nil, err
	}
	p.eng, err = newEngine(in, p.pattern, scale, s.After)
	if err != nil {
		return nil, err
	}
	return p, nil
}

func checkDraws(in Inputs) error {
	for _, c := range []struct {
		st    *model.Stage
		d     mediation.Draws
		stage string
	}{{in.Demand, in.DemandDraws, "demand"}, {in.Outcome, in.OutcomeDraws, "outcome"}} {
		if strings.Join(c.d.Names, ",") != strings.Join(c.st.Names(), ",") {
			return fmt.Errorf("allocate: the %s draws' parameters %v are not the model's %v", c.stage, c.d.Names, c.st.Names())
		}
	}
	if len(in.DemandDraws.Rows) != len(in.OutcomeDraws.Rows) || len(in.DemandDraws.Rows) == 0 {
		return fmt.Errorf("allocate: %d demand draws and %d outcome draws; a plan needs paired draws", len(in.DemandDraws.Rows), len(in.OutcomeDraws.Rows))
	}
	if !in.Outcome.Layout().HasGamma() {
		return errors.New("allocate: the outcome stage has no query term; plans run through branded search")
	}
	return nil
}

// patternWindow returns the data weeks a pattern reads.
func patternWindow(name string, weeks int, dates []time.Time) (from, to int, err error) {
	T := len(dates)
	switch name {
	case "", "last", "even":
		if weeks > T {
			return 0, 0, &SettingError{"weeks", fmt.Errorf("a plan of %d weeks with the pattern of the data's last weeks, longer than the data's %d weeks; use a shorter plan or a window of the data as the pattern", weeks, T)}
		}
		return T - weeks, T - 1, nil
	}
	w, err := window.Resolve(name, dates)
	if err != nil {
		return 0, 0, &SettingError{"pattern", fmt.Errorf("%w; or last, or even", err)}
	}
	if w.Kind == window.WholePeriod {
		return 0, 0, &SettingError{"pattern", errors.New("all: expected last, even, a quarter of the data or FROM:TO dates")}
	}
	return w.From, w.To, nil
}

// pattern returns the weights of a channel's spend x repeated over weeks
// weeks, and the amount they spend: x's own total over those weeks. An even
// pattern keeps the amount and spreads it evenly; an all-zero one spreads
// evenly from zero.
func pattern(x []float64, weeks int, even bool) ([]float64, float64) {
	w := make([]float64, weeks)
	amount := 0.0
	for i := range w {
		w[i] = x[i%len(x)]
		amount += w[i]
	}
	if amount == 0 || even {
		for i := range w {
			w[i] = 1 / float64(weeks)
		}
		return w, amount
	}
	for i := range w {
		w[i] /= amount
	}
	return w, amount
}

// cents returns x in whole cents, rounded to the nearest.
func cents(x float64) int64 { return int64(math.Round(x * 100)) }

// noMax is the cents of a channel without an upper limit.
const noMax = math.MaxInt64

func (p *Problem) setLimits(s Settings) error {
	n := len(p.names)
	p.minC, p.maxC, p.locked = make([]int64, n), make([]int64, n), make([]bool, n)
	p.curC = make([]int64, n)
	var cur int64
	for c, a := range p.current {
		p.curC[c] = cents(a)
		cur += p.curC[c]
		p.maxC[c] = noMax
	}
	p.budgetC = cur
	if s.Budget != 0 {
		if !(s.Budget > 0) || math.IsInf(s.Budget, 0) || s.Budget > 1e15 {
			return &LimitError{Field: "budget", Err: fmt.Errorf("budget %v: expected a positive amount", s.Budget)}
		}
		p.budgetC = cents(s.Budget)
	}
	if p.budgetC <= 0 {
		if s.Budget == 0 {
			return &LimitError{Field: "budget", Err: errors.New("the current plan spends nothing in its weeks; give a budget")}
		}
		return &LimitError{Field: "budget", Err: fmt.Errorf("budget %v: expected at least a cent", s.Budget)}
	}
	seen := map[string]bool{}
	for _, l := range s.Limits {
		c := p.index(l.Channel)
		switch {
		case c < 0:
			return &LimitError{Channel: l.Channel, Field: "channel", Err: fmt.Errorf("not a channel of the data; expected one of %s", strings.Join(p.names, ", "))}
		case seen[l.Channel]:
			return &LimitError{Channel: l.Channel, Field: "channel", Err: errors.New("limited twice")}
		case !(l.Min >= 0) || l.Min > 1e15:
			return &LimitError{Channel: l.Channel, Field: "min", Err: fmt.Errorf("min %v: expected an amount >= 0", l.Min)}
		case !(l.Max >= 0):
			return &LimitError{Channel: l.Channel, Field: "max", Err: fmt.Errorf("max %v: expected an amount >= 0", l.Max)}
		case l.Min > l.Max:
			return &LimitError{Channel: l.Channel, Field: "min", Err: fmt.Errorf("min %.2f is above max %.2f", l.Min, l.Max)}
		}
		seen[l.Channel] = true
		p.minC[c] = cents(l.Min)
		if l.Max <= 1e15 {
			p.maxC[c] = cents(l.Max)
		}
		p.locked[c] = p.minC[c] == p.maxC[c]
	}
	for _, name := range s.Lock {
		c := p.index(name)
		if c < 0 {
			return &LimitError{Channel: name, Field: "lock", Err: fmt.Errorf("not a channel of the data; expected one of %s", strings.Join(p.names, ", "))}
		}
		p.minC[c], p.maxC[c], p.locked[c] = p.curC[c], p.curC[c], true
	}
	// the budget must be reachable: the minimums at most, the maximums at
	// least; the running sum names the channel at which it fails
	var sum int64
	for c, name := range p.names {
		sum += p.minC[c]
		if sum > p.budgetC {
			return &LimitError{Channel: name, Field: "min", Err: fmt.Errorf("the minimums add up to %s by this channel, above the budget %s", money(sum), money(p.budgetC))}
		}
	}
	sum = 0
	for c := range p.names {
		if p.maxC[c] == noMax {
			return nil
		}
		sum += p.maxC[c]
	}
	if sum < p.budgetC {
		return &LimitError{Field: "budget", Err: fmt.Errorf("the budget %s is above the channels' maximums, which add up to %s", money(p.budgetC), money(sum))}
	}
	return nil
}

// money formats cents as an amount with two decimals.
func money(c int64) string {
	sign := ""
	if c < 0 {
		sign, c = "-", -c
	}
	return fmt.Sprintf("%s%d.%02d", sign, c/100, c%100)
}

func (p *Problem) index(name string) int {
	for c, n := range p.names {
		if n == name {
			return c
		}
	}
	return -1
}

// Channels returns the plan's channels: the data's upper-funnel columns,
// then its paid-search columns (do not modify).
func (p *Problem) Channels() []string { return p.names }

// Current returns each channel's current amount over the plan's weeks, in
// currency, rounded to cents.
func (p *Problem) Current() []float64 { return amounts(p.curC) }

// Budget returns the plan's total, in currency, rounded to cents.
func (p *Problem) Budget() float64 { return float64(p.budgetC) / 100 }

func amounts(c []int64) []float64 {
	out := make([]float64, len(c))
	for i, v := range c {
		out[i] = float64(v) / 100
	}
	return out
}

// Weeks returns the start date of each of the plan's weeks.
func (p *Problem) Weeks() []time.Time { return p.weeks }

// Draws returns the number of posterior draws.
func (p *Problem) Draws() int { return len(p.eng.draws) }

func maxOf(x []float64) float64 {
	m := 0.0
	for _, v := range x {
		m = math.Max(m, v)
	}
	return m
}

func joinNames(names []string) string { return strings.Join(names, ", ") }
