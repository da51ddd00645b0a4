package window

import (
	"fmt"
	"regexp"
	"strconv"
	"strings"
	"time"
)

// DateLayout is the layout of every date in window names and in the fit
// folder's tables (ISO 8601).
const DateLayout = "2006-01-02"

// Kind says what sort of period a Window is.
type Kind int

const (
	// WholePeriod is the window "all": every week of the data.
	WholePeriod Kind = iota
	// Quarter is a calendar quarter such as "2024Q3".
	Quarter
	// Custom is a range of days such as "2024-01-01:2024-03-31".
	Custom
)

// Window is a named period of weeks.
type Window struct {
	// Name is the window as written: "all", "2024Q3" or
	// "2024-01-01:2024-03-31".
	Name string
	Kind Kind
	// Start and End are the first and last days of a Quarter or Custom
	// window (inclusive, UTC midnight). For WholePeriod they are zero until
	// the window is resolved, then the first and last week starts.
	Start, End time.Time
	// Year and Q are set for a Quarter (Q in 1..4).
	Year, Q int
	// From and To are the indices of the first and last week of the window
	// in the series it was resolved against (In, Resolve, Quarters); both
	// are zero for a window that has not been resolved.
	From, To int
}

var quarterRe = regexp.MustCompile(`^([0-9]{4})Q([1-4])$`)

// Parse parses a window name: "all", "YYYYQn" or "YYYY-MM-DD:YYYY-MM-DD"
// (from <= to), with surrounding spaces ignored. The error says which forms
// are accepted.
func Parse(s string) (Window, error) {
	s = strings.TrimSpace(s)
	if s == "all" {
		return Window{Name: "all", Kind: WholePeriod}, nil
	}
	if m := quarterRe.FindStringSubmatch(s); m != nil {
		y, _ := strconv.Atoi(m[1])
		q, _ := strconv.Atoi(m[2])
		return QuarterOf(y, q), nil
	}
	if a, b, ok := strings.Cut(s, ":"); ok {
		from, err1 := time.Parse(DateLayout, a)
		to, err2 := time.Parse(DateLayout, b)
		if err1 == nil && err2 == nil {
			if to.Before(from) {
				return Window{}, fmt.Errorf("window %q ends before it starts", s)
			}
			return Window{Name: s, Kind: Custom, Start: from, End: to}, nil
		}
	}
	return Window{}, fmt.Errorf("window %q is not all, a quarter like 2024Q3, or a range like 2024-01-01:2024-03-31", s)
}

// QuarterOf returns the calendar quarter q (1..4) of year y. It panics if q
// is out of range.
func QuarterOf(y, q int) Window {
	if q < 1 || q > 4 {
		panic("window: quarter out of range")
	}
	from := time.Date(y, time.Month(3*(q-1)+1), 1, 0, 0, 0, 0, time.UTC)
	to := from.AddDate(0, 3, -1)
	return Window{Name: fmt.Sprintf("%dQ%d", y, q), Kind: Quarter, Start: from, End: to, Year: y, Q: q}
}

// quarterName is the name of the calendar quarter day t falls in.
func quarterName(t time.Time) string {
	return fmt.Sprintf("%dQ%d", t.Year(), (int(t.Month())-1)/3+1)
}

// Contains reports whether a week starting on day t belongs to w. For a
// WholePeriod window it is always true.
func (w Window) Contains(t time.Time) bool {
	if w.Kind == WholePeriod {
		return true
	}
	return !t.Before(w.Start) && !t.After(w.End)
}

// In resolves w against weeks, the week starts of a series in increasing
// order: From and To become the indices of the first and last week in w,
// and a WholePeriod window gets Start and End from the first and last week.
// ok is false when no week of the series belongs to w.
func (w Window) In(weeks []time.Time) (r Window, ok bool) {
	first, last := -1, -1
	for i, t := range weeks {
		if w.Contains(t) {
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	if first < 0 {
		return w, false
	}
	w.From, w.To = first, last
	if w.Kind == WholePeriod {
		w.Start, w.End = weeks[0], weeks[len(weeks)-1]
	}
	return w, true
}

// Weeks returns the number of weeks in w of a resolved window.
func (w Window) Weeks() int { return w.To - w.From + 1 }

// Quarters returns "all" followed by every calendar quarter that has at
// least one week (by week start date) in weeks, each resolved against
// weeks. weeks must not be empty.
func Quarters(weeks []time.Time) []Window {
	all, _ := Window{Name: "all", Kind: WholePeriod}.In(weeks)
	out := []Window{all}
	for i, t := range weeks {
		if last := &out[len(out)-1]; last.Name == quarterName(t) {
			last.To = i
			continue
		}
		q := QuarterOf(t.Year(), (int(t.Month())-1)/3+1)
		q.From, q.To = i, i
		out = append(out, q)
	}
	return out
}

// Resolve resolves a window name against weeks for the effect split: "all",
// a quarter with weeks in the data, or a FROM:TO range that holds at least
// one week. The error says which forms are accepted and, for a range
// outside the data, which weeks the data covers.
func Resolve(name string, weeks []time.Time) (Window, error) {
	qs := Quarters(weeks)
	for _, w := range qs {
		if w.Name == name {
			return w, nil
		}
	}
	a, b, ok := strings.Cut(name, ":")
	if !ok || a == "" {
		return Window{}, fmt.Errorf("window %q: expected all, a quarter in the data such as %s, or FROM:TO dates YYYY-MM-DD:YYYY-MM-DD", name, qs[1].Name)
	}
	from, err1 := time.Parse(DateLayout, a)
	to, err2 := time.Parse(DateLayout, b)
	if err1 != nil || err2 != nil || to.Before(from) {
		return Window{}, fmt.Errorf("window %q: expected FROM:TO dates YYYY-MM-DD:YYYY-MM-DD with FROM <= TO", name)
	}
	w, ok := Window{Name: name, Kind: Custom, Start: from, End: to}.In(weeks)
	if !ok {
		return Window{}, fmt.Errorf("window %q holds no week of the data (%s to %s)", name, weeks[0].Format(DateLayout), weeks[len(weeks)-1].Format(DateLayout))
	}
	return w, nil
}

// Previous returns the quarter before w; ok is false unless w is a Quarter.
func (w Window) Previous() (prev Window, ok bool) {
	if w.Kind != Quarter {
		return Window{}, false
	}
	if w.Q == 1 {
		return QuarterOf(w.Year-1, 4), true
	}
	return QuarterOf(w.Year, w.Q-1), true
}

// YearEarlier returns the same quarter one year before w; ok is false
// unless w is a Quarter.
func (w Window) YearEarlier() (Window, bool) {
	if w.Kind != Quarter {
		return Window{}, false
	}
	return QuarterOf(w.Year-1, w.Q), true
}

// Label returns a plain description of w for titles and captions, such as
// "2024Q3 (Jul–Sep 2024)", "the whole period" or "1 Jan 2024 – 31 Mar 2024".
func (w Window) Label() string {
	switch w.Kind {
	case Quarter:
		return fmt.Sprintf("%s (%s–%s %d)", w.Name, w.Start.Format("Jan"), w.End.Format("Jan"), w.Year)
	case Custom:
		return fmt.Sprintf("%s – %s", Day(w.Start), Day(w.End))
	}
	return "the whole period"
}

// Short returns a short name for w: the quarter or range name, or
// "whole period".
func (w Window) Short() string {
	if w.Kind == WholePeriod {
		return "whole period"
	}
	return w.Name
}

// Day formats t as "2 Jan 2006".
func Day(t time.Time) string { return t.Format("2 Jan 2006") }

// Coverage counts the weeks of quarter w: have is how many of weeks (week
// starts in increasing order, one a week) start in w, full how many would
// if the series ran through the whole quarter on the same weekday. For a
// window that is not a Quarter, or an empty series, both are the weeks of
// the series in w.
func (w Window) Coverage(weeks []time.Time) (have, full int) {
	for _, t := range weeks {
		if w.Contains(t) {
			have++
		}
	}
	if w.Kind != Quarter || len(weeks) == 0 {
		return have, have
	}
	// the first day in w on the series' weekday
	d := w.Start
	for d.Weekday() != weeks[0].Weekday() {
		d = d.AddDate(0, 0, 1)
	}
	for ; !d.After(w.End); d = d.AddDate(0, 0, 7) {
		full++
	}
	return have, full
}

// LastFullQuarter returns the latest calendar quarter whose every week
// (by week start) is in weeks, resolved against weeks; ok is false when the
// series covers no quarter in full. It is the review window when none is
// asked for.
func LastFullQuarter(weeks []time.Time) (w Window, ok bool) {
	qs := Quarters(weeks)
	for i := len(qs) - 1; i >= 1; i-- {
		if have, full := qs[i].Coverage(weeks); have == full {
			return qs[i], true
		}
	}
	return Window{}, false
}
