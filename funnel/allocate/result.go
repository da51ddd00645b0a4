package allocate

import (
	"fmt"
	"math"
	"sort"
	"time"

	"spillway/mediation"
)

// Result is a plan with its evaluation. Amounts are in the data's
// currency (whole cents), outcomes in the outcome's units; every summary is
// over the posterior draws, with the current and the planned amounts
// evaluated on the same draws (paired).
type Result struct {
	Channels []Channel
	// Weeks are the start dates of the plan's weeks; Weekly[c][t] is
	// channel c's spend in week t (whole cents, summing to its amount).
	Weeks  []time.Time
	Weekly [][]float64
	// Current and Planned are the totals over every channel.
	Current, Planned float64
	// IncrementalCurrent and IncrementalPlanned are the plans' incremental
	// outcomes: over the plan's weeks and the After weeks after them,
	// against no spend in the plan's weeks.
	IncrementalCurrent, IncrementalPlanned mediation.Summary
	// Gain is the planned minus the current incremental outcome, draw by
	// draw; Gain90 its 90% interval is Gain.Q05 to Gain.Q95.
	Gain mediation.Summary
	// PBeats is the posterior probability that the plan's incremental
	// outcome exceeds the current plan's (the share of draws with gain > 0).
	PBeats float64
	// Objective says what was maximised: "mean" or "q0.1 of the gain".
	Objective string
	// Optimised is false for a plan the user gave (Evaluate).
	Optimised bool
	// Check is the first-order check of an optimised plan under the
	// posterior mean; nil otherwise.
	Check *Check
	// Warnings are things a planner should look at, such as weekly spend
	// beyond anything the data saw.
	Warnings []string
	Stats    Stats
}

// Channel is one channel's line of a plan.
type Channel struct {
	Channel string // the data column
	Search  bool   // paid search (its controlled path only)
	// Current and Planned are amounts over the plan's weeks; Min and Max
	// its limits (Max +Inf for none).
	Current, Planned, Min, Max float64
	Locked                     bool
	// Bound is "min" or "max" when the plan holds the channel at that
	// limit, "" otherwise (and for a locked channel).
	Bound string
	// EffectCurrent and EffectPlanned are the channel's incremental outcome
	// at its current and planned amounts.
	EffectCurrent, EffectPlanned mediation.Summary
	// Marginal is the channel's marginal return at the plan: the
	// incremental outcome of one more unit of currency, spread by its
	// pattern (outcome units per currency unit).
	Marginal mediation.Summary
}

// Check is the first-order (KKT) check of an optimised plan, Boyd and
// Vandenberghe (2004) section 5.5, on the posterior mean's marginal
// returns: equal to Lambda for channels strictly inside their limits, at
// most Lambda at a minimum, at least Lambda at a maximum.
type Check struct {
	// Lambda is the marginal return the channels inside their limits share
	// (their mean); with none inside, the middle of the range the bound
	// channels allow.
	Lambda float64
	// Spread is the largest |marginal/Lambda - 1| over the channels inside
	// their limits.
	Spread float64
	// Tolerance is the spread and the slack at a limit the check allows.
	Tolerance float64
	// Failures name the channels that break the conditions.
	Failures []string
}

// OK reports whether the plan passed the check.
func (c *Check) OK() bool { return len(c.Failures) == 0 }

// CheckTolerance is the relative spread of the marginal returns of the
// channels inside their limits that the check allows. The search stops
// when the objective changes by less than 1e-11 relatively, and the
// marginal returns are computed by central differences: an optimum holds
// them equal to far better than this.
const CheckTolerance = 1e-3

// Evaluate evaluates a plan the user gives: amounts[c] over the plan's
// weeks for each channel (Channels' order), spread by the channels'
// patterns. Limits and the budget do not apply; the current plan is the
// comparison.
func (p *Problem) Evaluate(amounts []float64) (*Result, error) {
	if len(amounts) != len(p.names) {
		panic("allocate: one amount per channel")
	}
	c := make([]int64, len(amounts))
	for i, a := range amounts {
		if !(a >= 0) || a > 1e15 {
			return nil, &LimitError{Channel: p.names[i], Field: "amount", Err: fmt.Errorf("amount %v: expected an amount >= 0", a)}
		}
		c[i] = cents(a)
	}
	t0 := time.Now()
	r, err := p.evaluate(c, false)
	if err != nil {
		return nil, err
	}
	r.Stats.Seconds = time.Since(t0).Seconds()
	return r, nil
}

// roundToCents returns amounts a in whole cents, each within its limits,
// locked channels at their amount, summing to the budget exactly: each
// rounded to the nearest cent, then the cents the rounding gained or lost
// given back where the rounding moved furthest.
func (p *Problem) roundToCents(a []float64) ([]int64, error) {
	out := make([]int64, len(a))
	var sum int64
	for c, v := range a {
		out[c] = cents(v)
		out[c] = max(out[c], p.minC[c])
		if p.maxC[c] != noMax {
			out[c] = min(out[c], p.maxC[c])
		}
		sum += out[c]
	}
	for d := p.budgetC - sum; d != 0; {
		best, pull := -1, math.Inf(-1)
		for c, v := range a {
			room := d > 0 && (p.maxC[c] == noMax || out[c] < p.maxC[c]) || d < 0 && out[c] > p.minC[c]
			if p.locked[c] || !room {
				continue
			}
			pc := v*100 - float64(out[c]) // how far rounding moved it down
			if d < 0 {
				pc = -pc
			}
			if pc > pull {
				best, pull = c, pc
			}
		}
		if best < 0 {
			return nil, fmt.Errorf("allocate: cannot round the plan to cents within its limits (%d cents left)", d)
		}
		step := d
		if d > 0 && p.maxC[best] != noMax {
			step = min(d, p.maxC[best]-out[best])
		}
		if d < 0 {
			step = max(d, p.minC[best]-out[best])
		}
		out[best] += step
		d -= step
	}
	return out, nil
}

// spread returns amount (cents) spread over the weeks by weights w, in
// whole cents summing to it (largest remainder).
func spread(amount int64, w []float64) []int64 {
	out := make([]int64, len(w))
	rem := make([]float64, len(w))
	var sum int64
	for t, v := range w {
		x := float64(amount) * v
		out[t] = int64(math.Floor(x))
		rem[t] = x - float64(out[t])
		sum += out[t]
	}
	order := make([]int, len(w))
	for t := range order {
		order[t] = t
	}
	sort.SliceStable(order, func(i, j int) bool { return rem[order[i]] > rem[order[j]] })
	for i := 0; sum < amount; i++ {
		out[order[i%len(order)]]++
		sum++
	}
	for i := len(order) - 1; sum > amount; i-- {
		if t := order[i]; out[t] > 0 {
			out[t]--
			sum--
		}
	}
	return out
}

// evaluate computes a plan's outputs on every draw.
func (p *Problem) evaluate(planned []int64, optimised bool) (*Result, error) {
	e := p.eng
	n, nd := len(p.names), len(e.draws)
	all := make([]int, nd)
	for i := range all {
		all[i] = i
	}
	r := &Result{Weeks: p.weeks, Optimised: optimised, Objective: "mean"}
	if p.quantile > 0 {
		r.Objective = fmt.Sprintf("q%g of the gain", p.quantile)
	}
	fCur, fPl := drawTable(n, nd), drawTable(n, nd)
	e.effects(fCur, p.weekly(p.curC, nil), all)
	r.Weekly = make([][]float64, n)
	e.effects(fPl, p.weekly(planned, r.Weekly), all)
	// marginal returns: central differences in each channel's amount
	h := 1e-4 * float64(p.budgetC) / 100 / float64(n)
	up, down := drawTable(n, nd), drawTable(n, nd)
	xu, xd := make([][]float64, n), make([][]float64, n)
	lower := make([]float64, n)
	for c := range p.names {
		a := float64(planned[c]) / 100
		lower[c] = math.Max(a-h, 0)
		xu[c] = e.series(nil, c, a+h)
		if lower[c] > 0 {
			xd[c] = e.series(nil, c, lower[c])
		}
	}
	e.effects(up, xu, all)
	e.effects(down, xd, all)
	incCur, incPl, gain := make([]float64, nd), make([]float64, nd), make([]float64, nd)
	beats := 0
	for d := 0; d < nd; d++ {
		for c := 0; c < n; c++ {
			incCur[d] += fCur[c][d]
			incPl[d] += fPl[c][d]
		}
		gain[d] = incPl[d] - incCur[d]
		if gain[d] > 0 {
			beats++
		}
	}
	r.IncrementalCurrent, r.IncrementalPlanned = mediation.Summarise(incCur), mediation.Summarise(incPl)
	r.Gain = mediation.Summarise(gain)
	r.PBeats = float64(beats) / float64(nd)
	var curC, planC int64
	for c := range p.names {
		curC += p.curC[c]
		planC += planned[c]
	}
	r.Current, r.Planned = float64(curC)/100, float64(planC)/100
	for c, name := range p.names {
		ch := Channel{Channel: name, Search: p.search[c], Current: float64(p.curC[c]) / 100, Planned: float64(planned[c]) / 100,
			Min: float64(p.minC[c]) / 100, Max: math.Inf(1), Locked: p.locked[c]}
		if p.maxC[c] != noMax {
			ch.Max = float64(p.maxC[c]) / 100
		}
		ch.EffectCurrent, ch.EffectPlanned = mediation.Summarise(fCur[c]), mediation.Summarise(fPl[c])
		mr := make([]float64, nd)
		a := float64(planned[c]) / 100
		for d := range mr {
			mr[d] = (up[c][d] - down[c][d]) / (a + h - lower[c])
		}
		ch.Marginal = mediation.Summarise(mr)
		if optimised && !ch.Locked {
			switch {
			case planned[c] == p.minC[c]:
				ch.Bound = "min"
			case planned[c] == p.effectiveMax(c):
				ch.Bound = "max"
			}
		}
		r.Channels = append(r.Channels, ch)
		peak := 0.0
		for _, v := range r.Weekly[c] {
			peak = math.Max(peak, v)
		}
		if peak > p.dataMax[c] {
			r.Warnings = append(r.Warnings, fmt.Sprintf("%s: the plan spends up to %.2f in a week, more than the data ever did (%.2f): its response there is extrapolated", name, peak, p.dataMax[c]))
		}
	}
	if optimised && p.quantile == 0 {
		r.Check = check(r.Channels)
	}
	return r, nil
}

// effectiveMax is the most channel c can take: its maximum, or the budget
// less every other channel's minimum.
func (p *Problem) effectiveMax(c int) int64 {
	m := p.budgetC
	for j := range p.names {
		if j != c {
			m -= p.minC[j]
		}
	}
	if p.maxC[c] != noMax {
		m = min(m, p.maxC[c])
	}
	return m
}

// weekly returns each channel's spend series (scaled units, the plan's
// weeks then the weeks after) for amounts in cents, spread over the weeks
// in whole cents; the weekly amounts in currency go to out when not nil.
func (p *Problem) weekly(amounts []int64, out [][]float64) [][]float64 {
	e := p.eng
	x := make([][]float64, len(amounts))
	for c, a := range amounts {
		w := spread(a, p.pattern[c])
		if out != nil {
			out[c] = make([]float64, len(w))
			for t, v := range w {
				out[c][t] = float64(v) / 100
			}
		}
		if a == 0 {
			continue
		}
		x[c] = make([]float64, len(e.unit[c]))
		for t, v := range w {
			x[c][t] = float64(v) / 100 / e.scale[c]
		}
	}
	return x
}

func drawTable(n, nd int) [][]float64 {
	t := make([][]float64, n)
	for c := range t {
		t[c] = make([]float64, nd)
	}
	return t
}

// check holds an optimised plan to the first-order conditions.
func check(chs []Channel) *Check {
	k := &Check{Tolerance: CheckTolerance}
	var inner []Channel
	loMax, hiMin := math.Inf(-1), math.Inf(1) // max marginal at a minimum, min at a maximum
	for _, ch := range chs {
		switch {
		case ch.Locked:
		case ch.Bound == "min":
			loMax = math.Max(loMax, ch.Marginal.Mean)
		case ch.Bound == "max":
			hiMin = math.Min(hiMin, ch.Marginal.Mean)
		default:
			inner = append(inner, ch)
		}
	}
	if len(inner) > 0 {
		for _, ch := range inner {
			k.Lambda += ch.Marginal.Mean / float64(len(inner))
		}
		for _, ch := range inner {
			k.Spread = math.Max(k.Spread, math.Abs(ch.Marginal.Mean/k.Lambda-1))
		}
		if k.Spread > k.Tolerance {
			for _, ch := range inner {
				k.Failures = append(k.Failures, fmt.Sprintf("%s: marginal return %.6g inside its limits, the others' mean %.6g", ch.Channel, ch.Marginal.Mean, k.Lambda))
			}
		}
	} else {
		switch {
		case !math.IsInf(loMax, 0) && !math.IsInf(hiMin, 0):
			k.Lambda = (loMax + hiMin) / 2
		case !math.IsInf(loMax, 0):
			k.Lambda = loMax
		default:
			k.Lambda = hiMin
		}
	}
	slack := k.Tolerance * math.Abs(k.Lambda)
	for _, ch := range chs {
		switch {
		case ch.Locked:
		case ch.Bound == "min" && ch.Marginal.Mean > k.Lambda+slack:
			k.Failures = append(k.Failures, fmt.Sprintf("%s: at its minimum with marginal return %.6g above %.6g", ch.Channel, ch.Marginal.Mean, k.Lambda))
		case ch.Bound == "max" && ch.Marginal.Mean < k.Lambda-slack:
			k.Failures = append(k.Failures, fmt.Sprintf("%s: at its maximum with marginal return %.6g below %.6g", ch.Channel, ch.Marginal.Mean, k.Lambda))
		}
	}
	return k
}
