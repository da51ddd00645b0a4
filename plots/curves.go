package plots

import (
	"fmt"
	"sort"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
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

// curves: steady-state weekly response against weekly spend per upper
// channel, direct, via search and total, with the current level marked.
func (r *review) curves() (*Figure, error) {
	fig := &Figure{
		Legend: []LegendItem{
			{"total", Ink, SwatchLine, nil},
			{"direct", Direct, SwatchLine, nil},
			{"via branded search", ViaSearch, SwatchLine, nil},
			{"current weekly spend", Ink, SwatchDash, nil},
		},
		Caption: "Steady state: the weekly incremental " + r.outcome + " once a constant weekly spend has built up its carryover. " +
			"Current spend = mean weekly spend over " + r.weeksText(r.whole) + ". Lines are posterior means, bands 90% credible intervals.",
	}
	var panels []*plot.Plot
	var parts []string
	for _, ch := range r.uppers() {
		p := newPanel(Capital(Channel(ch)))
		p.X.Label.Text = "weekly spend"
		p.Y.Label.Text = "incremental " + r.outcome + " per week"
		p.Add(gridLines{})
		var cur float64
		type pathStyle struct {
			path  string
			style draw.LineStyle
			fill  float64
		}
		for _, ps := range []pathStyle{
			{fitfolder.PathDirect, draw.LineStyle{Color: Direct, Width: vg.Points(3)}, 0.16},
			{fitfolder.PathViaSearch, draw.LineStyle{Color: ViaSearch, Width: vg.Points(3)}, 0.2},
			{fitfolder.PathTotal, draw.LineStyle{Color: Ink, Width: vg.Points(4)}, 0.09},
		} {
			cs := r.curveOf(ch, ps.path)
			if len(cs) < 2 {
				return nil, fmt.Errorf("curves.csv has fewer than 2 points for %s %s", ch, ps.path)
			}
			s := Series{Panel: ch, Name: ps.path}
			for _, c := range cs {
				s.X = append(s.X, c.WeeklySpend)
				s.Y = append(s.Y, c.Mean)
				s.Lo = append(s.Lo, c.Q05)
				s.Hi = append(s.Hi, c.Q95)
			}
			fig.add(s)
			var bandColor = marks.Tint(Ink, ps.fill)
			switch ps.path {
			case fitfolder.PathDirect:
				bandColor = marks.Tint(Direct, ps.fill)
			case fitfolder.PathViaSearch:
				bandColor = marks.Tint(ViaSearch, ps.fill)
			}
			p.Add(marks.Band{X: s.X, Lo: s.Lo, Hi: s.Hi, Fill: bandColor})
			p.Add(marks.Line{X: s.X, Y: s.Y, Style: ps.style})
			cur = cs[0].CurrentWeeklySpend
		}
		fig.add(Series{Panel: ch, Name: "current", X: []float64{cur}})
		p.Add(marks.Rule{At: cur, Vertical: true, Style: draw.LineStyle{Color: Ink, Width: vg.Points(2.5),
			Dashes: []vg.Length{vg.Points(8), vg.Points(5)}}})
		ls := marks.TextStyle(sizeLabel, Ink, false)
		ls.XAlign, ls.YAlign = text.XLeft, text.YTop
		p.Add(marks.Label{X: cur, Top: true, DX: vg.Points(8), DY: -vg.Points(6), Text: "now: " + Number(cur) + " a week", Style: ls, Halo: true})
		p.X.Min, p.Y.Min = 0, 0
		panels = append(panels, p)
		if g, _, ok := MarginalGain(r.f, ch); ok {
			parts = append(parts, fmt.Sprintf("%s through %s", About(g), Channel(ch)))
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
