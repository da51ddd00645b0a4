package window

import (
	"testing"
	"time"
)

func TestParse(t *testing.T) {
	for _, c := range []struct {
		in       string
		kind     Kind
		from, to string
		ok       bool
	}{
		{"all", WholePeriod, "", "", true},
		{"2024Q1", Quarter, "2024-01-01", "2024-03-31", true},
		{"2024Q4", Quarter, "2024-10-01", "2024-12-31", true},
		{"2024-02-01:2024-02-29", Custom, "2024-02-01", "2024-02-29", true},
		{"2024Q5", 0, "", "", false},
		{"2024-03-01:2024-02-01", 0, "", "", false},
		{"2024-13-01:2024-12-01", 0, "", "", false},
	} {
		w, err := Parse(c.in)
		if (err == nil) != c.ok {
			t.Errorf("%s: error %v, want ok=%v", c.in, err, c.ok)
			continue
		}
		if !c.ok {
			continue
		}
		if w.Kind != c.kind || (c.from != "" && (w.Start.Format(DateLayout) != c.from || w.End.Format(DateLayout) != c.to)) {
			t.Errorf("%s: got %+v", c.in, w)
		}
	}
	q := QuarterOf(2025, 1)
	if p, _ := q.Previous(); p.Name != "2024Q4" {
		t.Errorf("previous of 2025Q1: %s", p.Name)
	}
	if y, _ := q.YearEarlier(); y.Name != "2024Q1" {
		t.Errorf("year before 2025Q1: %s", y.Name)
	}
}

// TestQuarters checks calendar quarter windows by week start date.
func TestQuarters(t *testing.T) {
	var weeks []time.Time
	start := time.Date(2023, 12, 25, 0, 0, 0, 0, time.UTC) // a Monday in 2023Q4
	for i := 0; i < 20; i++ {
		weeks = append(weeks, start.AddDate(0, 0, 7*i))
	}
	w := Quarters(weeks)
	want := []struct {
		name     string
		from, to int
	}{{"all", 0, 19}, {"2023Q4", 0, 0}, {"2024Q1", 1, 13}, {"2024Q2", 14, 19}}
	if len(w) != len(want) {
		t.Fatalf("got %v, want %v", w, want)
	}
	for i := range w {
		if w[i].Name != want[i].name || w[i].From != want[i].from || w[i].To != want[i].to {
			t.Errorf("window %d: got %v, want %v", i, w[i], want[i])
		}
	}
	r, err := Resolve("2024-02-01:2024-02-29", weeks)
	if err != nil || r.From != 6 || r.To != 9 {
		t.Errorf("custom window: got %v %v, want weeks 6..9", r, err)
	}
	if _, err := Resolve("2025Q1", weeks); err == nil {
		t.Error("a window outside the data must be an error")
	}
	// Resolving by date agrees with the quarters found by week index.
	for _, q := range w[1:] {
		p, _ := Parse(q.Name)
		r, ok := p.In(weeks)
		if !ok || r.From != q.From || r.To != q.To {
			t.Errorf("%s: In gives %d..%d (%v), Quarters %d..%d", q.Name, r.From, r.To, ok, q.From, q.To)
		}
	}
}

// TestCoverage counts a quarter's weeks in a series that stops inside it,
// and picks the last quarter covered in full.
func TestCoverage(t *testing.T) {
	var weeks []time.Time
	start := time.Date(2023, 12, 25, 0, 0, 0, 0, time.UTC) // a Monday in 2023Q4
	for i := 0; i < 20; i++ {
		weeks = append(weeks, start.AddDate(0, 0, 7*i))
	}
	// 2024Q1 has 13 Mondays (1 Jan .. 25 Mar); 2024Q2 has 13 (1 Apr .. 24
	// Jun), of which the series holds 6 (1 Apr .. 6 May); 2023Q4 has 13,
	// of which it holds 1.
	for _, c := range []struct {
		q          Window
		have, full int
	}{{QuarterOf(2024, 1), 13, 13}, {QuarterOf(2024, 2), 6, 13}, {QuarterOf(2023, 4), 1, 13}} {
		if have, full := c.q.Coverage(weeks); have != c.have || full != c.full {
			t.Errorf("%s: %d of %d weeks, want %d of %d", c.q.Name, have, full, c.have, c.full)
		}
	}
	w, ok := LastFullQuarter(weeks)
	if !ok || w.Name != "2024Q1" || w.From != 1 || w.To != 13 {
		t.Errorf("last full quarter: %+v %v, want 2024Q1 weeks 1..13", w, ok)
	}
	if _, ok := LastFullQuarter(weeks[2:10]); ok {
		t.Error("8 weeks hold no full quarter")
	}
}
