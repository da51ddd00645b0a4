package plots

import (
	"math"
	"strconv"
	"time"

	"gonum.org/v1/plot"
)

// numberTicks places about five round-numbered ticks and labels them with
// thousands separators ("12,000"), or as percentages when percent is set.
type numberTicks struct {
	percent bool
}

func (nt numberTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) {
		return []plot.Tick{{Value: lo, Label: nt.format(lo, 1)}}
	}
	step := niceStep((hi - lo) / 5)
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

func (nt numberTicks) format(v, step float64) string {
	if nt.percent {
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
	s := thousands(strconv.FormatFloat(v, 'f', dec, 64))
	if nt.percent {
		s += "%"
	}
	return s
}

// niceStep rounds raw up to 1, 2, 2.5 or 5 times a power of ten.
func niceStep(raw float64) float64 {
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

// day converts a date to the time axis unit: days since 1970-01-01.
func day(t time.Time) float64 { return float64(t.Unix()) / 86400 }

// dayTime converts back from day.
func dayTime(d float64) time.Time { return time.Unix(int64(math.Round(d*86400)), 0).UTC() }

// quarterTicks marks the start of each quarter, labelling January with the
// year ("Jan 2024") and the other quarters with the month ("Apr").
type quarterTicks struct{}

func (quarterTicks) Ticks(lo, hi float64) []plot.Tick {
	t0, t1 := dayTime(lo), dayTime(hi)
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
		ts = append(ts, plot.Tick{Value: day(q), Label: lbl})
	}
	return ts
}

// categoryTicks labels the integer positions 0..len(names)-1.
func categoryTicks(names []string) plot.ConstantTicks {
	ts := make([]plot.Tick, len(names))
	for i, n := range names {
		ts[i] = plot.Tick{Value: float64(i), Label: n}
	}
	return ts
}
