package plots

import (
	"fmt"
	"image/color"
	"sort"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/plots/marks"
)

// curveOf returns the curve rows of channel and path sorted by spend.
func (r *review) curveOf(ch, path string) []fitfolder.Curve {
	var cs []fitfolder.Curve
	for _, c := range r.f.Curves {
		if c.Channel == ch && c.Path == path {
			cs = append(cs, c)
		}
	}
	sort.SliceStable(cs, func(i, j int) bool { return cs[i].WeeklySpend < cs[j].WeeklySpend })
	return cs
}

// interp returns the mean of cs at weekly spend s by linear interpolation
// (linear extrapolation from the last two points beyond the grid).
func interp(cs []fitfolder.Curve, s float64) float64 {
	n := len(cs)
	if n == 1 {
		return cs[0].Mean
	}
	i := sort.Search(n, func(i int) bool { return cs[i].WeeklySpend >= s })
	switch {
	case i == 0:
		i = 1
	case i >= n:
		i = n - 1
	}
	a, b := cs[i-1], cs[i]
	if b.WeeklySpend == a.WeeklySpend {
		return b.Mean
	}
	return a.Mean + (s-a.WeeklySpend)*(b.Mean-a.Mean)/(b.WeeklySpend-a.WeeklySpend)
}

// MarginalGain returns the extra weekly outcome (total of both paths) that
// 10% more weekly spend would bring at the current level, read from the
// mean response curve of channel; ok is false without a curve.
func MarginalGain(f *fitfolder.Fit, channel string) (gain, current float64, ok bool) {
	r := &review{f: f}
	cs := r.curveOf(channel, fitfolder.PathTotal)
	if len(cs) == 0 {
		return 0, 0, false
	}
	cur := cs[0].CurrentWeeklySpend
	return interp(cs, 1.1*cur) - interp(cs, cur), cur, true
}

// interpBand returns the mean and the 90% interval of cs at weekly spend s
// by linear interpolation between the two grid points around it.
func interpBand(cs []fitfolder.Curve, s float64) (mean, lo, hi float64) {
	at := func(get func(fitfolder.Curve) float64) float64 {
		c := make([]fitfolder.Curve, len(cs))
		for i, x := range cs {
			c[i] = fitfolder.Curve{WeeklySpend: x.WeeklySpend, Mean: get(x)}
		}
		return interp(c, s)
	}
	return at(func(c fitfolder.Curve) float64 { return c.Mean }), at(func(c fitfolder.Curve) float64 { return c.Q05 }),
		at(func(c fitfolder.Curve) float64 { return c.Q95 })
}

// curves: steady-state weekly response against weekly spend per upper
// channel, direct, via search and total. The range of weekly spend the
// data have seen is a shaded strip (the curve beyond it is extrapolation),
// and the current operating point is a dot on each curve with the total's
// 90% interval through it. The bands are drawn first and the lines on top,
// so no band tints a line.
func (r *review) curves() (*Figure, error) {
	fig := &Figure{
		Legend: []LegendItem{
			{"total", Ink, SwatchLine, nil},
			{"direct", Direct, SwatchLine, nil},
			{"via branded search", ViaSearch, SwatchLine, nil},
			{"current spend, 90% interval of the total", Ink, SwatchWhisker, nil},
			{"spend seen in the data", Shade, SwatchBox, nil},
		},
		Caption: "Steady state: the weekly incremental " + r.outcome + " once a constant weekly spend has built up its carryover. " +
			"Current spend = mean weekly spend over " + r.weeksText(r.whole) + "; the shaded strip spans the weeks with spend, " +
			"from the least to the most; outside it the curves extrapolate. Lines are posterior means, bands 90% credible intervals.",
	}
	var panels []*plot.Plot
	var parts []string
	for _, ch := range r.uppers() {
		type pathStyle struct {
			path  string
			color color.NRGBA
			width vg.Length
			fill  float64
		}
		styles := []pathStyle{
			{fitfolder.PathTotal, Ink, vg.Points(4), 0.10},
			{fitfolder.PathDirect, Direct, vg.Points(3), 0.14},
			{fitfolder.PathViaSearch, ViaSearch, vg.Points(3), 0.18},
		}
		curves := make([][]fitfolder.Curve, len(styles))
		var cur float64
		for i, ps := range styles {
			cs := r.curveOf(ch, ps.path)
			if len(cs) < 2 {
				return nil, fmt.Errorf("curves.csv has fewer than 2 points for %s %s", ch, ps.path)
			}
			curves[i] = cs
			cur = cs[0].CurrentWeeklySpend
		}
		title := Capital(r.lab.Channel(ch)) + ": now " + r.lab.Spend(cur) + " a week"
		p := newPanel(title)
		p.X.Label.Text = "weekly spend (" + r.lab.SpendUnit() + ")"
		if r.lab.Currency() == "" {
			p.X.Label.Text = "weekly spend"
		}
		p.Y.Label.Text = "incremental " + r.outcome + " per week"
		lo, hi := r.f.Data.WeeklyRange(ch)
		fig.add(Series{Panel: ch, Name: "observed", X: []float64{lo, hi}})
		p.Add(marks.Span{From: lo, To: hi, Fill: Shade})
		p.Add(gridLines{})
		series := make([]Series, len(styles))
		for i, ps := range styles {
			s := Series{Panel: ch, Name: ps.path}
			for _, c := range curves[i] {
				s.X = append(s.X, c.WeeklySpend)
				s.Y = append(s.Y, c.Mean)
				s.Lo = append(s.Lo, c.Q05)
				s.Hi = append(s.Hi, c.Q95)
			}
			fig.add(s)
			series[i] = s
			p.Add(marks.Band{X: s.X, Lo: s.Lo, Hi: s.Hi, Fill: marks.Tint(ps.color, ps.fill)})
		}
		for i, ps := range styles {
			p.Add(marks.Line{X: series[i].X, Y: series[i].Y, Style: draw.LineStyle{Color: ps.color, Width: ps.width}})
		}
		// the operating point: the total's interval, then a dot on each curve
		m, l, h := interpBand(curves[0], cur)
		fig.add(Series{Panel: ch, Name: "current", X: []float64{cur}, Y: []float64{m}, Lo: []float64{l}, Hi: []float64{h}})
		p.Add(marks.Whisker{At: cur, Lo: l, Hi: h, Style: draw.LineStyle{Color: Ink, Width: vg.Points(2.5)}, Cap: vg.Points(12)})
		for i, ps := range styles {
			y := interp(curves[i], cur)
			p.Add(marks.Dots{X: []float64{cur}, Y: []float64{y}, Overflow: true,
				Style: draw.GlyphStyle{Color: ps.color, Radius: vg.Points(6), Shape: ringGlyph{}}})
		}
		p.X.Min, p.Y.Min = 0, 0
		panels = append(panels, p)
		if g, _, ok := MarginalGain(r.f, ch); ok {
			parts = append(parts, fmt.Sprintf("%s through %s", About(g), r.lab.Channel(ch)))
		}
	}
	fig.grid(1, len(panels), panels...)
	fig.Title = fmt.Sprintf("10%% more weekly spend would add about %s %s a week", List(parts), r.outcome)
	if len(parts) > 0 {
		// "about 4.1 conversions a week through video and 6.0 through audio"
		first, rest, _ := strings.Cut(parts[0], " through ")
		tail := ""
		if len(parts) > 1 {
			tail = " and " + List(parts[1:])
		}
		fig.Title = fmt.Sprintf("10%% more weekly spend would add about %s %s a week through %s%s", first, r.outcome, rest, tail)
	}
	return fig, nil
}

// ringGlyph is a dot with a white rim, so the operating point stands out
// on its line and on the bands behind it.
type ringGlyph struct{}

func (ringGlyph) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	white := sty
	white.Color = color.White
	white.Radius = sty.Radius + vg.Points(2)
	draw.CircleGlyph{}.DrawGlyph(c, white, pt)
	draw.CircleGlyph{}.DrawGlyph(c, sty, pt)
}
