package marks_test

import (
	"image/color"
	"math"
	"slices"
	"testing"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/plots/marks"
)

var inf = math.Inf(1)

// The wanted ranges are worked out by hand from the marks' fields.
func TestDataRange(t *testing.T) {
	for _, tc := range []struct {
		name string
		m    plot.DataRanger
		want [4]float64 // xmin, xmax, ymin, ymax
	}{
		{"rect, corners in any order", marks.Rect{X0: 3, X1: 1, Y0: 5, Y1: -2}, [4]float64{1, 3, -2, 5}},
		{"flat rect", marks.Rect{X0: 0.2, X1: 0.4, Y0: 7, Y1: 7}, [4]float64{0.2, 0.4, 7, 7}},
		{"band: least lo, greatest hi", marks.Band{X: []float64{1, 2, 4}, Lo: []float64{0, -1, 2}, Hi: []float64{3, 5, 4}}, [4]float64{1, 4, -1, 5}},
		{"empty band leaves the range alone", marks.Band{}, [4]float64{inf, -inf, inf, -inf}},
		{"vertical whisker", marks.Whisker{At: 2, Lo: -1, Hi: 3}, [4]float64{2, 2, -1, 3}},
		{"horizontal whisker", marks.Whisker{At: 2, Lo: -1, Hi: 3, Horizontal: true}, [4]float64{-1, 3, 2, 2}},
		{"dots", marks.Dots{X: []float64{5, -2}, Y: []float64{1, 9}}, [4]float64{-2, 5, 1, 9}},
		{"horizontal rule", marks.Rule{At: 0.5}, [4]float64{inf, -inf, 0.5, 0.5}},
		{"vertical rule", marks.Rule{At: 0.5, Vertical: true}, [4]float64{0.5, 0.5, inf, -inf}},
		{"span", marks.Span{From: 1, To: 9}, [4]float64{inf, -inf, inf, -inf}},
		{"label", marks.Label{X: 1, Y: 2}, [4]float64{1, 1, 2, 2}},
		{"top label", marks.Label{X: 1, Y: 2, Top: true}, [4]float64{1, 1, inf, -inf}},
	} {
		var got [4]float64
		got[0], got[1], got[2], got[3] = tc.m.DataRange()
		if got != tc.want {
			t.Errorf("%s: DataRange = %v, want %v", tc.name, got, tc.want)
		}
	}
}

func TestDotsGlyphBoxes(t *testing.T) {
	p := plot.New()
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 10, 0, 10
	d := marks.Dots{X: []float64{0, 5}, Y: []float64{10, 5}, Style: draw.GlyphStyle{Radius: vg.Points(4)}}
	bs := d.GlyphBoxes(p)
	if len(bs) != 2 || bs[0].X != 0 || bs[0].Y != 1 || bs[1].X != 0.5 || bs[1].Rectangle.Max.X != vg.Points(4) {
		t.Errorf("GlyphBoxes = %+v", bs)
	}
	d.Overflow = true
	if bs := d.GlyphBoxes(p); bs != nil {
		t.Errorf("with Overflow, GlyphBoxes = %+v, want none", bs)
	}
}

func labels(ts []plot.Tick) []string {
	var out []string
	for _, tk := range ts {
		out = append(out, tk.Label)
	}
	return out
}

func values(ts []plot.Tick) []float64 {
	var out []float64
	for _, tk := range ts {
		out = append(out, tk.Value)
	}
	return out
}

// The wanted ticks are worked out by hand: a fifth of the range rounded
// up to 1, 2, 2.5 or 5 × 10^k, every label with the step's decimals.
func TestNumberTicks(t *testing.T) {
	for _, tc := range []struct {
		lo, hi float64
		nt     marks.NumberTicks
		want   []string
	}{
		{0, 9000, marks.NumberTicks{}, []string{"0", "2,000", "4,000", "6,000", "8,000"}},
		{-0.9, 0.9, marks.NumberTicks{}, []string{"-0.5", "0.0", "0.5"}},
		{0, 1.2, marks.NumberTicks{}, []string{"0.00", "0.25", "0.50", "0.75", "1.00"}},
		{0, 0.5, marks.NumberTicks{Percent: true}, []string{"0%", "10%", "20%", "30%", "40%", "50%"}},
		{5, 5, marks.NumberTicks{}, []string{"5"}},
	} {
		if got := labels(tc.nt.Ticks(tc.lo, tc.hi)); !slices.Equal(got, tc.want) {
			t.Errorf("%+v.Ticks(%v, %v) = %q, want %q", tc.nt, tc.lo, tc.hi, got, tc.want)
		}
	}
}

func TestNiceStepAndThousands(t *testing.T) {
	for _, tc := range []struct{ raw, want float64 }{
		{0.3, 0.5}, {1800, 2000}, {2.2, 2.5}, {7, 10}, {1, 1}, {0, 1}, {math.NaN(), 1}, {-3, 1},
	} {
		if got := marks.NiceStep(tc.raw); math.Abs(got-tc.want) > 1e-12*tc.want {
			t.Errorf("NiceStep(%v) = %v, want %v", tc.raw, got, tc.want)
		}
	}
	for in, want := range map[string]string{"-12345.6": "-12,345.6", "999": "999", "1000000": "1,000,000", "0.25": "0.25"} {
		if got := marks.Thousands(in); got != want {
			t.Errorf("Thousands(%q) = %q, want %q", in, got, want)
		}
	}
}

func TestPercentTicks(t *testing.T) {
	if got, want := labels(marks.PercentTicks{}.Ticks(0, 1)), []string{"0%", "25%", "50%", "75%", "100%"}; !slices.Equal(got, want) {
		t.Errorf("PercentTicks(0, 1) = %q, want %q", got, want)
	}
	if got, want := values(marks.PercentTicks{}.Ticks(0.3, 0.8)), []float64{0.5, 0.75}; !slices.Equal(got, want) {
		t.Errorf("PercentTicks(0.3, 0.8) = %v, want %v", got, want)
	}
}

func TestCategoryTicks(t *testing.T) {
	ts := marks.CategoryTicks([]string{"video", "audio"}).Ticks(-1, 5)
	if !slices.Equal(labels(ts), []string{"video", "audio"}) || !slices.Equal(values(ts), []float64{0, 1}) {
		t.Errorf("CategoryTicks = %+v", ts)
	}
}

func date(y int, m time.Month, d int) time.Time { return time.Date(y, m, d, 0, 0, 0, 0, time.UTC) }

// The calendar ticks are checked against dates read off a calendar.
func TestCalendarTicks(t *testing.T) {
	if d := marks.Day(date(2024, time.January, 1)); d != 19723 {
		t.Errorf("Day(2024-01-01) = %v, want 19723", d)
	}
	if got := marks.DayTime(19723.5); !got.Equal(time.Date(2024, 1, 1, 12, 0, 0, 0, time.UTC)) {
		t.Errorf("DayTime(19723.5) = %v", got)
	}

	q := marks.QuarterTicks{}.Ticks(marks.Day(date(2023, time.December, 1)), marks.Day(date(2024, time.November, 1)))
	if got, want := labels(q), []string{"Jan 2024", "Apr", "Jul", "Oct"}; !slices.Equal(got, want) {
		t.Errorf("QuarterTicks labels = %q, want %q", got, want)
	}
	if q[1].Value != marks.Day(date(2024, time.April, 1)) {
		t.Errorf("QuarterTicks: second tick at %v, want 1 Apr 2024", marks.DayTime(q[1].Value))
	}
	long := labels(marks.QuarterTicks{}.Ticks(marks.Day(date(2018, time.January, 1)), marks.Day(date(2024, time.January, 1))))
	if len(long) != 25 || long[0] != "Jan 2018" || long[1] != "" || long[4] != "Jan 2019" {
		t.Errorf("QuarterTicks over six years = %q", long)
	}

	m := marks.MonthTicks{}.Ticks(marks.Day(date(2024, time.January, 15)), marks.Day(date(2024, time.June, 20)))
	if got, want := labels(m), []string{"Feb 2024", "Mar", "Apr", "May", "Jun"}; !slices.Equal(got, want) {
		t.Errorf("MonthTicks labels = %q, want %q", got, want)
	}
	// 13 months: every other month is labelled.
	y := labels(marks.MonthTicks{}.Ticks(marks.Day(date(2024, time.January, 1)), marks.Day(date(2025, time.January, 1))))
	want := []string{"Jan 2024", "", "Mar", "", "May", "", "Jul", "", "Sep", "", "Nov", "", "Jan 2025"}
	if !slices.Equal(y, want) {
		t.Errorf("MonthTicks over a year = %q, want %q", y, want)
	}
}

func TestWrap(t *testing.T) {
	sty := marks.TextStyle(12, nil, false)
	if got, want := marks.Wrap(sty, "a  b\nc", 1000), []string{"a b", "c"}; !slices.Equal(got, want) {
		t.Errorf("Wrap wide = %q, want %q", got, want)
	}
	if got, want := marks.Wrap(sty, "spend lifts search", sty.Width("spend lifts")), []string{"spend lifts", "search"}; !slices.Equal(got, want) {
		t.Errorf("Wrap narrow = %q, want %q", got, want)
	}
}

func TestTint(t *testing.T) {
	c := marks.Tint(color.NRGBA{R: 10, G: 20, B: 30, A: 255}, 0.2)
	if c.A != 51 || c.R != 10 { // 0.2 × 255 = 51
		t.Errorf("Tint = %v", c)
	}
}
