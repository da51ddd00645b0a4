package plots

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/plots/marks"
)

// Plan is the budget plan's chart (plan.png): per channel, current against
// planned spend; the gain of the plan over the current one with its 90%
// interval; and each channel's marginal return at the plan with its
// interval, the optimum's common return as a dashed line. outcome is the
// outcome's column.
func Plan(p *fitfolder.Plan, outcome string) (*Figure, error) {
	if len(p.Channels) == 0 {
		return nil, fmt.Errorf("plots: the plan has no channels")
	}
	s := p.Summary
	unit := Plain(outcome)
	fig := &Figure{Name: "plan",
		Legend: []LegendItem{
			{"current plan", marks.Tint(Faint, 0.6), SwatchBox, nil},
			{"planned", Direct, SwatchBox, nil},
			{"90% interval", Ink, SwatchWhisker, nil},
		},
		Caption: fmt.Sprintf("%d weeks from %s; each plan's %s counted over its weeks and the %d weeks after them, against no spend in its weeks, "+
			"paid search through its own effect only. Bars and points are posterior means, whiskers 90%% credible intervals. "+
			"A plan rests on the model's assumptions: confirm large moves with a controlled experiment.",
			s.Weeks, s.FirstWeek, unit, s.AfterWeeks),
	}
	if s.Check != nil {
		fig.Legend = append(fig.Legend, LegendItem{"return shared at the optimum", Alert, SwatchDash, nil})
	}
	names := make([]string, len(p.Channels))
	for i, c := range p.Channels {
		names[i] = Channel(c.Channel)
		if c.Locked {
			names[i] += "\n(locked)"
		} else if c.AtLimit != "" {
			names[i] += "\n(at " + c.AtLimit + ")"
		}
	}
	cat := func(pl *plot.Plot) {
		pl.X.Tick.Marker = marks.CategoryTicks(names)
		pl.X.Tick.Label = marks.TextStyle(sizeAxis, Ink, true)
		pl.X.Tick.Label.XAlign, pl.X.Tick.Label.YAlign = text.XCenter, text.YTop
		pl.X.Min, pl.X.Max = -0.6, float64(len(names))-0.4
		pl.Add(gridLines{})
	}
	thin := draw.LineStyle{Color: Ink, Width: vg.Points(2.5)}
	vl := marks.TextStyle(sizeLabel, Ink, false)
	vl.XAlign, vl.YAlign = text.XCenter, text.YBottom

	// spend
	spend := newPanel("Spend over the plan's weeks")
	spend.Y.Label.Text = "spend"
	cat(spend)
	top := 0.0
	for i, c := range p.Channels {
		x := float64(i)
		spend.Add(marks.Rect{X0: x - 0.34, X1: x, Y0: 0, Y1: c.Current, Fill: marks.Tint(Faint, 0.6)})
		spend.Add(marks.Rect{X0: x, X1: x + 0.34, Y0: 0, Y1: c.Planned, Fill: Direct})
		spend.Add(marks.Label{X: x + 0.17, Y: c.Planned, DY: vg.Points(4), Text: changeText(c.Current, c.Planned), Style: vl})
		fig.add(Series{Panel: "spend", Name: c.Channel, X: []float64{x}, Y: []float64{c.Planned}, Lo: []float64{c.Current}, Hi: []float64{c.Current}})
		top = math.Max(top, math.Max(c.Current, c.Planned))
	}
	spend.Y.Min, spend.Y.Max = 0, top*1.15

	// gain
	gain := newPanel("Gain over the current plan")
	gain.Y.Label.Text = "incremental " + unit
	gain.X.Tick.Marker = marks.CategoryTicks([]string{fmt.Sprintf("P(beats current)\n= %.1f%%", 100*s.PBeatsCurrent)})
	gain.X.Tick.Label = marks.TextStyle(sizeAxis, Ink, true)
	gain.X.Tick.Label.XAlign, gain.X.Tick.Label.YAlign = text.XCenter, text.YTop
	gain.X.Min, gain.X.Max = -0.7, 0.7
	gain.Add(gridLines{})
	g := s.Gain
	fill := Direct
	if g.Mean < 0 {
		fill = Alert
	}
	gain.Add(marks.Rect{X0: -0.3, X1: 0.3, Y0: 0, Y1: g.Mean, Fill: fill})
	gain.Add(marks.Whisker{At: 0, Lo: g.Q05, Hi: g.Q95, Style: draw.LineStyle{Color: Ink, Width: vg.Points(3.5)}, Cap: vg.Points(16)})
	gain.Add(marks.Rule{At: 0, Style: draw.LineStyle{Color: Muted, Width: vg.Points(1.5)}})
	gl := marks.TextStyle(sizeLabel, Ink, true)
	gl.XAlign, gl.YAlign = text.XLeft, text.YCenter
	gain.Add(marks.Label{X: 0.3, Y: g.Mean, DX: vg.Points(6), Text: Number(g.Mean), Style: gl})
	lo, hi := math.Min(0, g.Q05), math.Max(0, g.Q95)
	pad := 0.12 * (hi - lo)
	if pad == 0 {
		pad = 1
	}
	gain.Y.Min, gain.Y.Max = lo-pad, hi+pad
	fig.add(Series{Panel: "gain", Name: "gain", X: []float64{0}, Y: []float64{g.Mean}, Lo: []float64{g.Q05}, Hi: []float64{g.Q95}})

	// marginal returns
	ret := newPanel("Marginal return at the plan")
	ret.Y.Label.Text = unit + " per unit of spend"
	cat(ret)
	hiR := 0.0
	for i, c := range p.Channels {
		x := float64(i)
		m := c.Marginal
		ret.Add(marks.Whisker{At: x, Lo: m.Q05, Hi: m.Q95, Style: thin, Cap: vg.Points(14)})
		ret.Add(marks.Dots{X: []float64{x}, Y: []float64{m.Mean}, Style: draw.GlyphStyle{Color: Direct, Radius: vg.Points(7), Shape: draw.CircleGlyph{}}})
		fig.add(Series{Panel: "marginal", Name: c.Channel, X: []float64{x}, Y: []float64{m.Mean}, Lo: []float64{m.Q05}, Hi: []float64{m.Q95}})
		hiR = math.Max(hiR, m.Q95)
	}
	if k := s.Check; k != nil {
		ret.Add(marks.Rule{At: k.Lambda, Style: draw.LineStyle{Color: Alert, Width: vg.Points(2), Dashes: []vg.Length{vg.Points(8), vg.Points(6)}}})
	}
	ret.Y.Min, ret.Y.Max = 0, hiR*1.12
	ret.Y.Tick.Marker = marks.NumberTicks{}

	fig.grid(1, 3, spend, gain, ret)
	switch {
	case s.Given:
		fig.Title = fmt.Sprintf("The plan given would change incremental %s by %s (90%%: %s to %s)", unit, Signed(g.Mean), Number(g.Q05), Number(g.Q95))
	default:
		fig.Title = fmt.Sprintf("Re-planned, the same budget would add %s %s (90%%: %s to %s)", Number(g.Mean), unit, Number(g.Q05), Number(g.Q95))
		if s.PlannedTotal != s.CurrentTotal {
			fig.Title = fmt.Sprintf("The plan changes incremental %s by %s (90%%: %s to %s)", unit, Signed(g.Mean), Number(g.Q05), Number(g.Q95))
		}
	}
	return fig, nil
}

// changeText is the relative change from a to b: "+12%", "new".
func changeText(a, b float64) string {
	if a == 0 {
		if b == 0 {
			return "0%"
		}
		return "new"
	}
	return fmt.Sprintf("%+.0f%%", 100*(b/a-1))
}
