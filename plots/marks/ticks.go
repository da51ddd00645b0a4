package marks

import (
	"math"
	"strconv"
	"strings"
	"time"

	"gonum.org/v1/plot"
)

var (
	_ plot.Ticker = NumberTicks{}
	_ plot.Ticker = PercentTicks{}
	_ plot.Ticker = QuarterTicks{}
	_ plot.Ticker = MonthTicks{}
)

// NumberTicks places about five ticks at a round step (NiceStep of a fifth
// of the range) and labels them with thousands separators ("12,000") and
// as many decimals as the step needs ("0.25").
type NumberTicks struct {
	// Percent labels fractions as percentages (0.25 as "25%"), the step
	// chosen on the fractions as before.
	Percent bool
}

// Ticks returns the ticks for the range lo..hi; an empty range gets one
// tick at lo.
func (nt NumberTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) {
		return []plot.Tick{{Value: lo, Label: nt.format(lo, 1)}}
	}
	step := NiceStep((hi - lo) / 5)
	var ts []plot.Tick
	start := math.Ceil(lo/step-1e-9) * step
	for v := start; v <= hi+step*1e-9; v += step {
		if math.Abs(v) < step*1e-9 {
			v = 0
		}
		ts = append(ts, plot.Tick{Value: v, Label: nt.format(v, step)})
	}
	return ts
}

func (nt NumberTicks) format(v, step float64) string {
	if nt.Percent {
		v *= 100
		step *= 100
	}
	dec := 0
	if step < 1 {
		dec = int(math.Ceil(-math.Log10(step) - 1e-9))
		if frac := step * math.Pow10(dec); math.Abs(frac-math.Round(frac)) > 1e-6 {
			dec++ // steps of 2.5×10^k need one more digit
		}
	}
	s := Thousands(strconv.FormatFloat(v, 'f', dec, 64))
	if nt.Percent {
		s += "%"
	}
	return s
}

// NiceStep rounds raw up to 1, 2, 2.5 or 5 times a power of ten. A raw
// step that is not positive and finite gives 1.
func NiceStep(raw float64) float64 {
	if raw <= 0 || math.IsNaN(raw) || math.IsInf(raw, 0) {
		return 1
	}
	mag := math.Pow10(int(math.Floor(math.Log10(raw))))
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*mag >= raw*(1-1e-9) {
			return m * mag
		}
	}
	return 10 * mag
}

// Thousands inserts commas every three digits into the integer part of a
// number formatted by strconv ("-12345.6" gives "-12,345.6").
func Thousands(s string) string {
	neg := strings.HasPrefix(s, "-")
	s = strings.TrimPrefix(s, "-")
	intPart, frac, hasFrac := strings.Cut(s, ".")
	var b strings.Builder
	for i, r := range intPart {
		if i > 0 && (len(intPart)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(r)
	}
	out := b.String()
	if hasFrac {
		out += "." + frac
	}
	if neg {
		out = "-" + out
	}
	return out
}

// PercentTicks marks 0%, 25%, 50%, 75% and 100% on an axis of fractions,
// those of them that lie in the range.
type PercentTicks struct{}

// Ticks returns the quarter ticks within lo..hi.
func (PercentTicks) Ticks(lo, hi float64) []plot.Tick {
	var ts []plot.Tick
	for v := 0.0; v <= 1.0001; v += 0.25 {
		if v >= lo-1e-9 && v <= hi+1e-9 {
			ts = append(ts, plot.Tick{Value: v, Label: strconv.Itoa(int(math.Round(100*v))) + "%"})
		}
	}
	return ts
}

// CategoryTicks labels the integer positions 0..len(names)-1 with names.
func CategoryTicks(names []string) plot.ConstantTicks {
	ts := make([]plot.Tick, len(names))
	for i, n := range names {
		ts[i] = plot.Tick{Value: float64(i), Label: n}
	}
	return ts
}

// Day converts a time to the unit of time axes: days since
// 1970-01-01 00:00 UTC.
func Day(t time.Time) float64 { return float64(t.Unix()) / 86400 }

// DayTime converts back from Day, to the nearest second, in UTC.
func DayTime(d float64) time.Time { return time.Unix(int64(math.Round(d*86400)), 0).UTC() }

// QuarterTicks marks the start of each quarter on a time axis (Day),
// labelling January with the year ("Jan 2024") and the other quarters with
// the month ("Apr"); over more than 60 months only the years are labelled.
type QuarterTicks struct{}

// Ticks returns the quarter starts within lo..hi.
func (QuarterTicks) Ticks(lo, hi float64) []plot.Tick {
	t0, t1 := DayTime(lo), DayTime(hi)
	var ts []plot.Tick
	q := time.Date(t0.Year(), time.Month(3*((int(t0.Month())-1)/3)+1), 1, 0, 0, 0, 0, time.UTC)
	months := int(t1.Sub(t0).Hours() / 24 / 30)
	for ; !q.After(t1); q = q.AddDate(0, 3, 0) {
		if q.Before(t0) {
			continue
		}
		lbl := q.Format("Jan")
		if q.Month() == time.January {
			lbl = q.Format("Jan 2006")
		}
		if months > 60 && q.Month() != time.January {
			lbl = "" // long series: label years only
		}
		ts = append(ts, plot.Tick{Value: Day(q), Label: lbl})
	}
	return ts
}

// MonthTicks marks the first of each month on a time axis (Day). It
// labels at most about six of them, every k-th month from the first, with
// the month ("Mar"), and the first tick and each January with the year as
// well ("Jan 2024").
type MonthTicks struct{}

// Ticks returns the month starts within lo..hi.
func (MonthTicks) Ticks(lo, hi float64) []plot.Tick {
	// Truncated, not rounded as in DayTime, as the chart has always done.
	t0 := time.Unix(int64(lo*86400), 0).UTC()
	t1 := time.Unix(int64(hi*86400), 0).UTC()
	var ts []plot.Tick
	m := time.Date(t0.Year(), t0.Month(), 1, 0, 0, 0, 0, time.UTC)
	months := int(t1.Sub(t0).Hours()/24/30) + 1
	every := 1
	for months/every > 6 {
		every++
	}
	k := 0
	for ; !m.After(t1); m = m.AddDate(0, 1, 0) {
		if m.Before(t0) {
			continue
		}
		lbl := ""
		if k%every == 0 {
			lbl = m.Format("Jan")
			if m.Month() == time.January || k == 0 {
				lbl = m.Format("Jan 2006")
			}
		}
		ts = append(ts, plot.Tick{Value: Day(m), Label: lbl})
		k++
	}
	return ts
}
