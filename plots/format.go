package plots

import (
	"math"
	"strconv"
	"strings"

	"spillway/plots/marks"
)

// Number formats v for charts and the report: whole numbers with thousands
// separators from 100 up ("12,345", "657"), one decimal from 10 ("45.3"),
// two from 1 ("4.53"), and three significant digits below 1 ("0.0453").
// NaN gives "–" (no value).
func Number(v float64) string {
	switch {
	case math.IsNaN(v):
		return "–"
	case math.IsInf(v, 1):
		return "∞"
	case math.IsInf(v, -1):
		return "-∞"
	}
	a := math.Abs(v)
	var s string
	switch {
	case a >= 99.5:
		s = marks.Thousands(strconv.FormatFloat(math.Round(v), 'f', 0, 64))
	case a >= 9.995:
		s = strconv.FormatFloat(v, 'f', 1, 64)
	case a >= 0.9995:
		s = strconv.FormatFloat(v, 'f', 2, 64)
	case a == 0:
		s = "0"
	default:
		// Three significant digits.
		d := 2 - int(math.Floor(math.Log10(a)))
		s = strconv.FormatFloat(v, 'f', d, 64)
	}
	if s == "-0" || strings.Trim(s, "-0.") == "" {
		return "0"
	}
	return s
}

// Percent formats the fraction v (0.42) as a percentage: whole percents
// ("42%") from 10% up in size, one decimal below ("4.2%").
func Percent(v float64) string {
	if math.IsNaN(v) {
		return "–"
	}
	p := 100 * v
	if math.Abs(p) >= 9.95 {
		return strconv.FormatFloat(math.Round(p), 'f', 0, 64) + "%"
	}
	s := strconv.FormatFloat(p, 'f', 1, 64)
	if s == "-0.0" {
		s = "0.0"
	}
	return s + "%"
}

// Points formats a difference of two fractions in percentage points
// ("+4.0 pts", "-12 pts").
func Points(v float64) string {
	p := 100 * v
	var s string
	if math.Abs(p) >= 9.95 {
		s = strconv.FormatFloat(math.Round(p), 'f', 0, 64)
	} else {
		s = strconv.FormatFloat(p, 'f', 1, 64)
	}
	if !strings.HasPrefix(s, "-") {
		s = "+" + s
	}
	return s + " pts"
}

// Signed is Number with a leading "+" for positive values.
func Signed(v float64) string {
	s := Number(v)
	if v > 0 && s != "0" {
		return "+" + s
	}
	return s
}

// Channel returns the plain name of a spend column for titles and tables:
// the column name without a trailing "_spend", "_cost" or "_budget" and
// with underscores as spaces ("video_spend" → "video").
func Channel(col string) string {
	s := col
	for _, suf := range []string{"_spend", "_cost", "_budget", "_spends", "_investment"} {
		if strings.HasSuffix(strings.ToLower(s), suf) && len(s) > len(suf) {
			s = s[:len(s)-len(suf)]
			break
		}
	}
	s = strings.TrimSpace(strings.NewReplacer("_", " ", ".", " ").Replace(s))
	if s == "" {
		return col
	}
	return s
}

// Plain returns a column name with underscores as spaces
// ("branded_queries" → "branded queries").
func Plain(col string) string {
	s := strings.TrimSpace(strings.NewReplacer("_", " ", ".", " ").Replace(col))
	if s == "" {
		return col
	}
	return s
}

// List joins items as plain English: "a", "a and b", "a, b and c".
func List(items []string) string {
	switch len(items) {
	case 0:
		return ""
	case 1:
		return items[0]
	}
	return strings.Join(items[:len(items)-1], ", ") + " and " + items[len(items)-1]
}

// Capital returns s with its first letter in upper case.
func Capital(s string) string {
	if s == "" {
		return s
	}
	r := []rune(s)
	r[0] = []rune(strings.ToUpper(string(r[0])))[0]
	return string(r)
}

// About rounds v to two significant digits and formats it as Number does
// ("about 31", "about 4.3", "about 6,600"), for sentences.
func About(v float64) string {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return Number(v)
	}
	e := math.Floor(math.Log10(math.Abs(v))) - 1
	r := math.Round(v/math.Pow(10, e)) * math.Pow(10, e)
	switch {
	case math.Abs(r) >= 99.5:
		return Number(r)
	case math.Abs(r) >= 9.95:
		return strconv.FormatFloat(r, 'f', 0, 64)
	}
	return strconv.FormatFloat(r, 'f', int(-e), 64)
}
