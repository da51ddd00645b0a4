package data

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"
)

// Exposure says that an upper-funnel channel's media input is an exposure
// column (impressions, rating points) rather than its spend: the model's
// adstock and saturation run on the exposure, and the spend column stays the
// channel's cost, so returns and budget plans stay in currency.
type Exposure struct {
	// Spend is the channel's spend column, one of Spec.Upper.
	Spend string `json:"spend"`
	// Column is the exposure column.
	Column string `json:"column"`
	// Break, if not empty, is the first week (YYYY-MM-DD) of a new way of
	// measuring the exposure (a vendor or method change): the model learns
	// the ratio of the old measurement's scale to the new one's instead of
	// assuming them equal.
	Break string `json:"break,omitempty"`
	// Error, if above 0, says the exposure is observed with multiplicative
	// error: observed = true exp(e), e ~ Normal(0, Error^2) by week (0.15
	// for about 15%); the model then treats each week's true exposure as
	// unknown.
	Error float64 `json:"error,omitempty"`
	// Frequency, if not empty, makes Column the channel's weekly reach
	// (people reached) and names the column of its average frequency
	// (exposures per person reached): the model then treats reaching more
	// people and reaching them more often differently (reach.go in
	// funnel/model).
	Frequency string `json:"frequency,omitempty"`
}

// frequencyColumns returns the frequency columns in the order of their
// spend columns in Upper.
func (s Spec) frequencyColumns() []string {
	var out []string
	for _, u := range s.Upper {
		if e, ok := s.ExposureOf(u); ok && e.Frequency != "" {
			out = append(out, e.Frequency)
		}
	}
	return out
}

// ExposureOf returns the exposure mapping of spend column col, if any.
func (s Spec) ExposureOf(col string) (Exposure, bool) {
	for _, e := range s.Exposure {
		if e.Spend == col {
			return e, true
		}
	}
	return Exposure{}, false
}

// exposureColumns returns the exposure columns in the order of their spend
// columns in Upper (mappings of other columns, which Validate rejects, last).
func (s Spec) exposureColumns() []string {
	var out []string
	for _, u := range s.Upper {
		if e, ok := s.ExposureOf(u); ok {
			out = append(out, e.Column)
		}
	}
	for _, e := range s.Exposure {
		if !slices.Contains(s.Upper, e.Spend) {
			out = append(out, e.Column)
		}
	}
	return out
}

// validateExposure checks the exposure mappings: each names an upper-funnel
// spend column once, an exposure column, and a break date (if any) written
// YYYY-MM-DD. Whether the date lies inside the data is Read's check.
func (s Spec) validateExposure() error {
	fail := func(format string, args ...any) error {
		return &DataError{Err: fmt.Errorf(format, args...)}
	}
	seen := map[string]bool{}
	for _, e := range s.Exposure {
		switch {
		case strings.TrimSpace(e.Spend) == "" || strings.TrimSpace(e.Column) == "":
			return fail("--exposure %s=%s: expected SPEND=EXPOSURE, an upper-funnel spend column and the exposure column it buys", e.Spend, e.Column)
		case !slices.Contains(s.Upper, e.Spend):
			if slices.Contains(s.Search, e.Spend) {
				return fail("--exposure %s=%s: %q is a paid-search column; exposure applies to upper-funnel channels (--upper)", e.Spend, e.Column, e.Spend)
			}
			return fail("--exposure %s=%s: %q is not an upper-funnel spend column (--upper %s)", e.Spend, e.Column, e.Spend, strings.Join(s.Upper, ","))
		case seen[e.Spend]:
			return fail("--exposure: %q is given two exposure columns; expected one per channel", e.Spend)
		case e.Frequency != "" && strings.TrimSpace(e.Frequency) == "":
			return fail("--frequency %s=%q: expected a column name", e.Spend, e.Frequency)
		}
		seen[e.Spend] = true
		if e.Error < 0 || e.Error > 2 || math.IsNaN(e.Error) {
			return fail("--exposure-error %s=%g: expected the sd of the log error, a number from 0 to 2 (0.15 for about 15%%)", e.Spend, e.Error)
		}
		if e.Break != "" {
			if _, err := time.Parse(DateLayout, e.Break); err != nil {
				return fail("--exposure-break %s=%s: %q is not a date; expected YYYY-MM-DD, the first week of the new measurement", e.Spend, e.Break, e.Break)
			}
		}
	}
	return nil
}

// parseExposure decodes the "exposure" value of a spec file: an object
// mapping spend columns to exposure columns, {"video_spend":
// "video_impressions"}, or a list of objects with the keys "spend",
// "column" and optionally "break". It returns a message when the value is
// neither.
func parseExposure(raw []byte) ([]Exposure, string) {
	const want = `"exposure" must map spend columns to exposure columns, like {"video_spend": "video_impressions"}, or list objects like [{"spend": "video_spend", "column": "video_impressions", "break": "2025-03-03"}]`
	var list []Exposure
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if dec.Decode(&list) == nil {
		return list, ""
	}
	// the object form, in the file's order
	dec = json.NewDecoder(bytes.NewReader(raw))
	if tok, err := dec.Token(); err != nil || tok != json.Delim('{') {
		return nil, want + "; got " + jsonKind(raw, false)
	}
	for dec.More() {
		k, err := dec.Token()
		if err != nil {
			return nil, want
		}
		var v string
		if err := dec.Decode(&v); err != nil {
			return nil, want
		}
		list = append(list, Exposure{Spend: k.(string), Column: v})
	}
	return list, ""
}

// checkExposure checks each row's exposure against its spend: a week with
// spend and no exposure, or exposure and no spend, cannot be what the
// column measures (a gap in the exposure report, or the wrong column).
// nums holds the row's numeric values by position in p.cols.
func (p *parser) checkExposure(nums []float64, rec []string, line int, pop float64) error {
	for i, c := range p.cols {
		if c.role == roleFrequency {
			if err := p.checkFrequency(i, nums, line); err != nil {
				return err
			}
			continue
		}
		if c.role != roleExposure {
			continue
		}
		var e Exposure
		for _, m := range p.spec.Exposure {
			if m.Column == c.name {
				e = m
			}
		}
		spend := nums[p.colOfName(e.Spend)]
		v := nums[i]
		j := p.idx[i]
		if e.Frequency != "" && p.spec.Population != "" && v > pop {
			return p.errAt(line, j+1, strings.TrimSpace(c.name), "reach %s is above the region's population %s; expected the number of people reached, at most the population", strings.TrimSpace(rec[j]), fmtNum(pop))
		}
		switch {
		case v > 0 && spend > 0, v == 0 && spend == 0:
			continue
		case v == 0:
			return p.errAt(line, j+1, strings.TrimSpace(c.name), "exposure is 0 in a week where %s spends %s; expected the exposure that spend bought (a week missing from the exposure report?)", e.Spend, fmtNum(spend))
		default:
			return p.errAt(line, j+1, strings.TrimSpace(c.name), "exposure is %s in a week where %s spends nothing; expected 0, or the spend that bought it", strings.TrimSpace(rec[j]), e.Spend)
		}
	}
	return nil
}

// checkFrequency checks a frequency cell, at position i of p.cols: at
// least 1 in a week with reach (a person reached saw the ad at least once).
func (p *parser) checkFrequency(i int, nums []float64, line int) error {
	c := p.cols[i]
	var e Exposure
	for _, m := range p.spec.Exposure {
		if m.Frequency == c.name {
			e = m
		}
	}
	if reach := nums[p.colOfName(e.Column)]; reach > 0 && nums[i] < 1 {
		return p.errAt(line, p.idx[i]+1, strings.TrimSpace(c.name), "frequency %s in a week with reach %s; expected the average number of exposures per person reached, at least 1", fmtNum(nums[i]), fmtNum(reach))
	}
	return nil
}

// colOfName returns the position in p.cols of the column named name.
func (p *parser) colOfName(name string) int {
	for i, c := range p.cols {
		if c.name == name {
			return i
		}
	}
	panic("data: column not in spec")
}

// checkBreaks rejects a break date that is not one of the data's weeks
// after its first: before the data, after it, or not a week start.
func checkBreaks(s Spec, weeks []time.Time) error {
	for _, e := range s.Exposure {
		if e.Break == "" {
			continue
		}
		d, _ := time.Parse(DateLayout, e.Break) // Validate checked the form
		first, last := weeks[0], weeks[len(weeks)-1]
		fail := func(why string) error {
			return &DataError{Err: fmt.Errorf("--exposure-break %s=%s: %s; expected the start of a week of the data after its first (%s to %s), the first week of the new measurement",
				e.Spend, e.Break, why, first.Format(DateLayout), last.Format(DateLayout))}
		}
		switch {
		case d.Equal(first):
			return fail("the data's first week; a break needs weeks before it")
		case d.Before(first):
			return fail("before the data")
		case d.After(last):
			return fail("after the data")
		case d.Sub(first)%week != 0:
			return fail(fmt.Sprintf("not a week start (the data's weeks start on %s)", first.Weekday()))
		}
	}
	return nil
}

// BreakWeek returns the index in weeks of the first week of channel col's
// new exposure measurement, or 0 when it has none (Read has checked the
// date).
func (s Spec) BreakWeek(col string, weeks []time.Time) int {
	e, ok := s.ExposureOf(col)
	if !ok || e.Break == "" || len(weeks) == 0 {
		return 0
	}
	d, err := time.Parse(DateLayout, e.Break)
	if err != nil {
		return 0
	}
	return int(d.Sub(weeks[0]) / week)
}

// Thresholds of the cost-per-unit jump warning (KindCostJump). They are
// this tool's choices, set on simulated series: a steady 30% rise over two
// years never triggers it, a 20% step does.
const (
	// CostJumpWindow is the number of weeks on each side of a candidate
	// jump whose median log cost per unit are compared.
	CostJumpWindow = 8
	// CostJumpLog is the smallest step, in log cost per unit, that warns
	// (0.15, a 16% jump).
	CostJumpLog = 0.15
	// CostJumpSDs is how many robust standard deviations of the weekly
	// noise in log cost per unit the step must also exceed.
	CostJumpSDs = 5.0
)

// KindCostJump marks an exposure column whose cost per unit (spend /
// exposure) jumps abruptly: a likely measurement break.
const KindCostJump = "cost-jump"

// costJumps warns about exposure columns whose national cost per unit jumps.
// The rule (a robust change-point test on log cost per unit L[t] over the
// weeks with spend): at each week k with CostJumpWindow such weeks on each
// side, the step D[k] = median(L after k) - median(L before k) over those
// windows; the noise sd is 1.4826 MAD(L[t] - L[t-1]) / sqrt(2), which one
// jump hardly moves; the largest |D[k]| warns when it exceeds both
// CostJumpLog and CostJumpSDs noise sds, at the split around it that
// leaves the least absolute deviation from the two sides' medians. A
// steady drift moves the medians of two adjacent windows apart by little,
// so it does not warn; a break declared within two weeks of the jump
// silences it.
func costJumps(d *Dataset, nat Series) []Warning {
	var ws []Warning
	for c, col := range d.Spec.Upper {
		e, ok := d.Spec.ExposureOf(col)
		if !ok || c >= len(nat.Exposure) || nat.Exposure[c] == nil {
			continue
		}
		var L []float64
		var at []int
		for t, x := range nat.Exposure[c] {
			if s := nat.Upper[c][t]; s > 0 && x > 0 {
				L = append(L, math.Log(s/x))
				at = append(at, t)
			}
		}
		k, step, sd := CostJump(L)
		if k < 0 {
			continue
		}
		if b, err := time.Parse(DateLayout, e.Break); err == nil && d.Weeks[at[k]].Sub(b).Abs() <= 2*week {
			continue // declared: the model learns the step
		}
		ws = append(ws, Warning{KindCostJump, e.Column, fmt.Sprintf(
			"the cost per unit of %s (%s / %s) jumps by %+.0f%% around the week of %s (%.3g times the weekly noise); a change in how the exposure is measured? If so, give it with --exposure-break %s=%s",
			e.Column, col, e.Column, 100*(math.Exp(step)-1), d.Weeks[at[k]].Format(DateLayout), math.Abs(step)/sd, col, d.Weeks[at[k]].Format(DateLayout))})
	}
	return ws
}

// CostJump applies costJumps' rule to a series of log cost per unit L: it
// returns the index of the first week after the largest jump that warns
// (placed by least absolute deviation around it),
// the jump (median after minus median before) and the noise sd, or k = -1
// when no jump warns.
func CostJump(L []float64) (k int, step, sd float64) {
	w := CostJumpWindow
	if len(L) < 2*w+1 {
		return -1, 0, 0
	}
	diff := make([]float64, len(L)-1)
	for t := range diff {
		diff[t] = L[t+1] - L[t]
	}
	sd = madToSD * mad(diff) / math.Sqrt2
	k = -1
	D := make([]float64, len(L)+1)
	for j := w; j+w <= len(L); j++ {
		D[j] = median(L[j:j+w]) - median(L[j-w:j])
		if math.Abs(D[j]) > math.Abs(step) {
			k, step = j, D[j]
		}
	}
	if k < 0 || math.Abs(step) <= CostJumpLog || math.Abs(step) <= CostJumpSDs*sd {
		return -1, step, sd
	}
	// the windows that straddle the step fully give a plateau of D (a
	// median of w weeks ignores up to w/2-1 weeks of the other level); the
	// jump is the split of the plateau's span that leaves the least
	// absolute deviation from the medians of the two sides
	lo, hi := k, k
	for lo > w && D[lo-1]*step >= 0.9*step*step {
		lo--
	}
	for hi+w < len(L) && D[hi+1]*step >= 0.9*step*step {
		hi++
	}
	span := L[lo-w : hi+w]
	best := math.Inf(1)
	for j := lo; j <= hi; j++ {
		cost := 0.0
		for _, part := range [][]float64{span[:j-lo+w], span[j-lo+w:]} {
			m := median(part)
			for _, v := range part {
				cost += math.Abs(v - m)
			}
		}
		if cost < best {
			best, k = cost, j
		}
	}
	return k, step, sd
}

// mad returns the median absolute deviation from the median of x.
func mad(x []float64) float64 {
	m := median(x)
	dev := make([]float64, len(x))
	for i, v := range x {
		dev[i] = math.Abs(v - m)
	}
	return median(dev)
}
