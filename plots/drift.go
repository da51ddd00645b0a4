package plots

import (
	"fmt"
	"math"
	"sort"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/plots/marks"
)

// DriftName is the chart of effectiveness over time, drawn for fits with
// drifting coefficients (drift.csv) in addition to Names.
const DriftName = "drift"

// driftOf returns drift.csv rows of channel and path in week order.
func (r *review) driftOf(ch, path string) []fitfolder.Drift {
	var ds []fitfolder.Drift
	for _, d := range r.f.Drift {
		if d.Channel == ch && d.Path == path {
			ds = append(ds, d)
		}
	}
	sort.SliceStable(ds, func(i, j int) bool { return ds[i].Week.Before(ds[j].Week) })
	return ds
}

// liftOnPanel reports whether a lift test speaks to a channel's path: a
// queries test to the upper-funnel channel's via-search path, an outcome
// test to every path of its channel (it measured them together). A test in
// one region of a region panel measured that region's coefficient, not the
// multiplier every region shares: it is not drawn (lifts.csv and the
// report's table hold it).
func liftOnPanel(l fitfolder.Lift, ch, path string) bool {
	if l.Channel != ch || l.Region != "" {
		return false
	}
	return l.Metric == "outcome" || path == "via_search"
}

// drift: each drifting coefficient's multiplier over time (1 is the
// channel's average effectiveness over the data), one row per channel and
// one column per path, each panel its posterior mean with the 90% band and
// the line at 1. Lift tests are drawn on the panels they speak to as the
// multiplier they imply: the model's mean multiplier over the test's weeks
// times the test's estimate over the model's lift for those weeks, with
// the test's 90% interval scaled the same way, across the test's weeks.
// This keeps one axis per panel, so a test whose mark leaves the band
// reads at once as one the model does not follow; drawing the tests as
// effects would need a second axis in other units. An outcome test
// measured both paths of an upper-funnel channel together and is drawn on
// both (it cannot say how the two split).
func (r *review) drift() (*Figure, error) {
	if len(r.f.Drift) == 0 {
		return nil, fmt.Errorf("the fit has no drifting coefficients (drift.csv)")
	}
	type cell struct{ ch, path, label string }
	var rows [][]cell
	for _, ch := range r.uppers() {
		var row []cell
		for _, p := range [][2]string{{"via_search", "via branded search"}, {"direct", "direct"}} {
			if len(r.driftOf(ch, p[0])) > 0 {
				row = append(row, cell{ch, p[0], p[1]})
			}
		}
		if len(row) > 0 {
			rows = append(rows, row)
		}
	}
	for _, ch := range r.f.Run.Spec.Search {
		if len(r.driftOf(ch, "controlled")) > 0 {
			rows = append(rows, []cell{{ch, "controlled", "own effect"}})
		}
	}
	cols := 1
	for _, row := range rows {
		cols = max(cols, len(row))
	}
	fig := &Figure{
		Legend: []LegendItem{
			{"multiplier via branded search", ViaSearch, SwatchLine, nil},
			{"direct (paid search: own effect)", Direct, SwatchLine, nil},
			{"average over the data (1)", Muted, SwatchDash, nil},
		},
		Caption: "Effectiveness over time: each channel's coefficient on each path times its multiplier for the week, " +
			"1 being its average over the data. " + r.weeksText(r.whole) + ". Lines are posterior means, bands 90% credible intervals.",
	}
	if len(r.f.Lifts) > 0 {
		fig.Legend = append(fig.Legend,
			LegendItem{"lift test, agrees", Ink, SwatchWhisker, nil},
			LegendItem{"lift test, contradicts the data", Alert, SwatchWhisker, nil})
		fig.Caption += " A lift test is drawn across its weeks as the multiplier it implies (the model's multiplier there times the test's estimate over the model's lift), with its 90% interval; an outcome test measured both paths together and appears on both."
	}
	var panels []*plot.Plot
	top := 0.0
	for k, row := range rows {
		for j := 0; j < cols; j++ {
			if j >= len(row) {
				panels = append(panels, nil)
				continue
			}
			c := row[j]
			ds := r.driftOf(c.ch, c.path)
			p := newPanel("")
			r.timeAxis(p)
			p.X.Tick.Marker = yearTicks{}
			p.Add(gridLines{})
			s := Series{Panel: c.ch, Name: c.path}
			for _, d := range ds {
				s.X = append(s.X, marks.Day(d.Week))
				s.Y = append(s.Y, d.Mean)
				s.Lo = append(s.Lo, d.Q05)
				s.Hi = append(s.Hi, d.Q95)
				top = max(top, d.Q95)
			}
			fig.add(s)
			col := Direct
			if c.path == "via_search" {
				col = ViaSearch
			}
			p.Add(marks.Band{X: s.X, Lo: s.Lo, Hi: s.Hi, Fill: marks.Tint(col, 0.25)})
			p.Add(marks.Rule{At: 1, Style: draw.LineStyle{Color: Muted, Width: vg.Points(1.5), Dashes: []vg.Length{vg.Points(6), vg.Points(4)}}})
			p.Add(marks.Line{X: s.X, Y: s.Y, Style: draw.LineStyle{Color: col, Width: vg.Points(2.4)}})
			for _, l := range r.f.Lifts {
				if !liftOnPanel(l, c.ch, c.path) || !(l.Mean > 0) {
					continue
				}
				m := meanOver(ds, l.Start, l.End)
				if !(m > 0) {
					continue
				}
				scale := m / l.Mean
				y, lo, hi := l.Estimate*scale, (l.Estimate-1.645*l.SE)*scale, (l.Estimate+1.645*l.SE)*scale
				x0, x1 := marks.Day(l.Start), marks.Day(l.End)+6
				ink := Ink
				if l.Verdict == "contradicts" {
					ink = Alert
				}
				st := draw.LineStyle{Color: ink, Width: vg.Points(2.2)}
				p.Add(marks.Segment{X0: x0, X1: x1, Y0: y, Y1: y, Style: st})
				p.Add(marks.Whisker{At: (x0 + x1) / 2, Lo: math.Max(lo, 0), Hi: hi, Style: st, Cap: vg.Points(10)})
				fig.add(Series{Panel: c.ch, Name: c.path + "/lift " + l.Start.Format(time.DateOnly), X: []float64{(x0 + x1) / 2}, Y: []float64{y},
					Lo: []float64{math.Max(lo, 0)}, Hi: []float64{hi}, Labels: []string{l.Verdict}})
				top = max(top, hi)
			}
			ns := marks.TextStyle(sizeAxis, Ink, true)
			ns.XAlign, ns.YAlign = text.XLeft, text.YTop
			p.Add(marks.Label{X: p.X.Min, Top: true, DX: vg.Points(8), DY: -vg.Points(4), Text: Capital(r.lab.Channel(c.ch)) + ", " + c.label, Style: ns, Halo: true})
			p.Y.Min = 0
			if k < len(rows)-1 {
				p.X.Tick.Label.Color = nil
				p.X.Tick.Marker = blankTicks{yearTicks{}}
			}
			panels = append(panels, p)
		}
	}
	// one scale for every panel, so multipliers compare across channels
	for _, p := range panels {
		if p != nil {
			p.Y.Max = math.Max(top*1.15, 1.5)
		}
	}
	fig.grid(len(rows), cols, panels...)
	fig.Title = r.driftTitle()
	return fig, nil
}

// meanOver is the mean multiplier over the weeks from start to end.
func meanOver(ds []fitfolder.Drift, start, end time.Time) float64 {
	s, n := 0.0, 0
	for _, d := range ds {
		if !d.Week.Before(start) && !d.Week.After(end) {
			s += d.Mean
			n++
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return s / float64(n)
}

// driftTitle states the largest change in effectiveness the data support
// (drift_change.csv), or that none is clear.
func (r *review) driftTitle() string {
	var best *fitfolder.DriftChange
	for i := range r.f.DriftChange {
		c := &r.f.DriftChange[i]
		if p := math.Max(c.Up, c.Down); p >= 0.9 && (best == nil || math.Abs(math.Log(c.Mean)) > math.Abs(math.Log(best.Mean))) {
			best = c
		}
	}
	if best == nil {
		return "No channel's effectiveness clearly changed between the first and the last quarter"
	}
	dir := "rose"
	if best.Mean < 1 {
		dir = "fell"
	}
	return fmt.Sprintf("%s's effectiveness %s %s %s from %s to %s (90%% interval %s to %s)", Capital(r.lab.Channel(best.Channel)),
		pathPhrase(best.Path), dir, Percent(math.Abs(best.Mean-1)), best.First, best.Last, SignedPercent(best.Q05-1), SignedPercent(best.Q95-1))
}

// SignedPercent is Percent with a leading "+" for positive values.
func SignedPercent(v float64) string {
	s := Percent(v)
	if v > 0 && s != "0.0%" {
		return "+" + s
	}
	return s
}

// pathPhrase names a drifting coefficient's path inside a sentence.
func pathPhrase(path string) string {
	switch path {
	case "via_search":
		return "via branded search"
	case "direct":
		return "on the outcome directly"
	}
	return "of its own"
}
