package fitdir

import (
	"fmt"
	"regexp"
	"strconv"
	"strings"
	"time"
)

// DateLayout is the layout of every date in a fit folder (ISO 8601).
const DateLayout = "2006-01-02"

// WindowKind says what sort of period a Window is.
type WindowKind int

const (
	// WholePeriod is the window "all": every week of the data.
	WholePeriod WindowKind = iota
	// Quarter is a calendar quarter such as "2024Q3".
	Quarter
	// Custom is a date range such as "2024-01-01:2024-03-31".
	Custom
)

// Window is a period of weeks, named as split names it. For a Quarter or a
// Custom window, From and To are its first and last days (both inclusive,
// UTC midnight); for WholePeriod they are zero until Fit.Window fills them
// with the data's first and last week starts.
type Window struct {
	Name     string
	Kind     WindowKind
	From, To time.Time
	// Year and Q are set for a Quarter (Q in 1..4).
	Year, Q int
}

var quarterRe = regexp.MustCompile(`^([0-9]{4})Q([1-4])$`)

// ParseWindow parses a window name: "all", "YYYYQn" or
// "YYYY-MM-DD:YYYY-MM-DD" (from <= to). The error says which forms are
// accepted.
func ParseWindow(s string) (Window, error) {
	s = strings.TrimSpace(s)
	if s == "all" {
		return Window{Name: "all", Kind: WholePeriod}, nil
	}
	if m := quarterRe.FindStringSubmatch(s); m != nil {
		y, _ := strconv.Atoi(m[1])
		q, _ := strconv.Atoi(m[2])
		return QuarterWindow(y, q), nil
	}
	if a, b, ok := strings.Cut(s, ":"); ok {
		from, err1 := time.Parse(DateLayout, a)
		to, err2 := time.Parse(DateLayout, b)
		if err1 == nil && err2 == nil {
			if to.Before(from) {
				return Window{}, fmt.Errorf("window %q ends before it starts", s)
			}
			return Window{Name: s, Kind: Custom, From: from, To: to}, nil
		}
	}
	return Window{}, fmt.Errorf("window %q is not all, a quarter like 2024Q3, or a range like 2024-01-01:2024-03-31", s)
}

// QuarterWindow returns the calendar quarter q (1..4) of year y. It panics
// if q is out of range.
func QuarterWindow(y, q int) Window {
	if q < 1 || q > 4 {
		panic("fitdir: quarter out of range")
	}
	from := time.Date(y, time.Month(3*(q-1)+1), 1, 0, 0, 0, 0, time.UTC)
	to := from.AddDate(0, 3, -1)
	return Window{Name: fmt.Sprintf("%dQ%d", y, q), Kind: Quarter, From: from, To: to, Year: y, Q: q}
}

// Contains reports whether a week starting on day t belongs to w. For a
// WholePeriod window it is always true.
func (w Window) Contains(t time.Time) bool {
	if w.Kind == WholePeriod {
		return true
	}
	return !t.Before(w.From) && !t.After(w.To)
}

// Previous returns the quarter before w; ok is false unless w is a Quarter.
func (w Window) Previous() (prev Window, ok bool) {
	if w.Kind != Quarter {
		return Window{}, false
	}
	if w.Q == 1 {
		return QuarterWindow(w.Year-1, 4), true
	}
	return QuarterWindow(w.Year, w.Q-1), true
}

// YearEarlier returns the same quarter one year before w; ok is false
// unless w is a Quarter.
func (w Window) YearEarlier() (Window, bool) {
	if w.Kind != Quarter {
		return Window{}, false
	}
	return QuarterWindow(w.Year-1, w.Q), true
}

// Label returns a plain description of w for titles and captions, such as
// "2024Q3 (Jul–Sep 2024)", "the whole period" or "1 Jan 2024 – 31 Mar 2024".
func (w Window) Label() string {
	switch w.Kind {
	case Quarter:
		return fmt.Sprintf("%s (%s–%s %d)", w.Name, w.From.Format("Jan"), w.To.Format("Jan"), w.Year)
	case Custom:
		return fmt.Sprintf("%s – %s", Day(w.From), Day(w.To))
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
