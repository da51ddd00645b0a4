package plots

import (
	"fmt"
	"image/color"
	"math"
	"sort"
	"strings"

	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/plots/marks"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// borrowed: per paid-search channel, apparent against controlled
// incremental, the borrowed share, and the naive refit as a faint
// cross-check. borrowed.csv covers the whole period.
func (r *review) borrowed() (*Figure, error) {
	search := r.f.Run.Spec.Search
	fig := &Figure{
		Legend: []LegendItem{
			{"paid search's own effect", Direct, SwatchBox, nil},
			{"demand borrowed from the upper funnel", ViaSearch, SwatchBox, nil},
			{"refit without queries (cross-check)", Faint, SwatchBox, nil},
			{"90% interval", Ink, SwatchWhisker, nil},
		},
		Caption: "Whole period: " + r.weeksText(r.whole) + ". Apparent = what a model without the branded-query term " +
			"credits to paid search; controlled = paid search's incremental " + r.outcome + " once branded demand is " +
			"accounted for. Bars are posterior means, whiskers 90% credible intervals.",
	}
	cats := []string{"refit without\nqueries", "controlled", "apparent"}
	var panels []*plot.Plot
	var titleParts []string
	for _, ch := range search {
		get := func(m string) (fitfolder.Borrowed, error) {
			b, ok := r.f.BorrowedMeasure(ch, m)
			if !ok {
				return b, fmt.Errorf("borrowed.csv has no %s row for %s", m, ch)
			}
			return b, nil
		}
		var bs [4]fitfolder.Borrowed
		for i, m := range []string{"naive", "controlled", "apparent", "borrowed_share"} {
			b, err := get(m)
			if err != nil {
				return nil, err
			}
			bs[i] = b
			fig.add(Series{Panel: ch, Name: m, X: []float64{float64(i)}, Y: []float64{b.Mean},
				Lo: []float64{b.Q05}, Hi: []float64{b.Q95}})
		}
		naive, ctrl, app, share := bs[0], bs[1], bs[2], bs[3]
		title := Capital(Channel(ch))
		if len(search) == 1 {
			title = "Paid search (" + Channel(ch) + "), whole period"
			if Channel(ch) == "search" || Channel(ch) == "paid search" {
				title = "Paid search, whole period"
			}
		}
		p := newPanel(title)
		p.X.Label.Text = "incremental " + r.outcome + " over the whole period"
		p.Y.Tick.Marker = marks.CategoryTicks(cats)
		p.Y.Tick.Label = marks.TextStyle(sizeAxis, Ink, true)
		p.Y.Tick.Label.XAlign, p.Y.Tick.Label.YAlign = text.XRight, text.YCenter
		p.Add(gridLines{vertical: true})
		const hh = 0.3
		// Naive refit: faint bar and whisker.
		p.Add(marks.Rect{X0: 0, X1: naive.Mean, Y0: -hh * 0.8, Y1: hh * 0.8, Fill: marks.Tint(Faint, 0.45)})
		p.Add(marks.Whisker{At: 0, Lo: naive.Q05, Hi: naive.Q95, Horizontal: true,
			Style: draw.LineStyle{Color: Faint, Width: vg.Points(2.5)}, Cap: vg.Points(14)})
		// Controlled.
		p.Add(marks.Rect{X0: 0, X1: ctrl.Mean, Y0: 1 - hh, Y1: 1 + hh, Fill: Direct})
		p.Add(marks.Whisker{At: 1, Lo: ctrl.Q05, Hi: ctrl.Q95, Horizontal: true,
			Style: draw.LineStyle{Color: Ink, Width: vg.Points(3)}, Cap: vg.Points(16)})
		// Apparent = own effect + borrowed demand.
		p.Add(marks.Rect{X0: 0, X1: ctrl.Mean, Y0: 2 - hh, Y1: 2 + hh, Fill: Direct})
		p.Add(marks.Rect{X0: ctrl.Mean, X1: app.Mean, Y0: 2 - hh, Y1: 2 + hh, Fill: ViaSearch})
		p.Add(marks.Whisker{At: 2, Lo: app.Q05, Hi: app.Q95, Horizontal: true,
			Style: draw.LineStyle{Color: Ink, Width: vg.Points(3)}, Cap: vg.Points(16)})
		bl := marks.TextStyle(sizeLabel+1, Ink, true)
		bl.XAlign, bl.YAlign = text.XCenter, text.YBottom
		p.Add(marks.Label{X: (ctrl.Mean + app.Mean) / 2, Y: 2 + hh, DY: vg.Points(5),
			Text: fmt.Sprintf("%s borrowed (90%%: %s–%s)", Percent(share.Mean), Percent(share.Q05), Percent(share.Q95)), Style: bl})
		vl := marks.TextStyle(sizeLabel, Ink, false)
		vl.XAlign, vl.YAlign = text.XLeft, text.YCenter
		for i, b := range []fitfolder.Borrowed{naive, ctrl, app} {
			p.Add(marks.Label{X: b.Q95, Y: float64(i), DX: vg.Points(12), Text: Number(b.Mean), Style: vl})
		}
		p.Y.Min, p.Y.Max = -0.6, 2.75
		p.X.Min = 0
		p.X.Max = math.Max(math.Max(app.Q95, naive.Q95), ctrl.Q95) * 1.16
		panels = append(panels, p)
		titleParts = append(titleParts, fmt.Sprintf("%s for %s", Percent(share.Mean), Channel(ch)))
	}
	if len(panels) == 0 {
		return nil, fmt.Errorf("spec.json names no paid-search channel")
	}
	fig.grid(1, len(panels), panels...)
	up := List(channelNames(r.uppers()))
	if len(search) == 1 {
		s, _ := r.f.BorrowedMeasure(search[0], "borrowed_share")
		fig.Title = fmt.Sprintf("%s of paid search's apparent return is demand borrowed from %s", Percent(s.Mean), up)
	} else {
		fig.Title = fmt.Sprintf("Of paid search's apparent return, demand borrowed from %s is %s", up, List(titleParts))
	}
	return fig, nil
}

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

// weeklyOf returns weekly.csv rows of channel and path in file order.
func (r *review) weeklyOf(ch, path string) []fitfolder.Weekly {
	var ws []fitfolder.Weekly
	for _, w := range r.f.Weekly {
		if w.Channel == ch && w.Path == path {
			ws = append(ws, w)
		}
	}
	sort.SliceStable(ws, func(i, j int) bool { return ws[i].Week.Before(ws[j].Week) })
	return ws
}

// shadeWindow shades the review window on a time panel and labels it.
func (r *review) shadeWindow(p *plot.Plot, labelIt bool) {
	if r.w.Kind == window.WholePeriod {
		return
	}
	p.Add(marks.Span{From: marks.Day(r.w.Start), To: marks.Day(r.w.End) + 1, Fill: Shade})
	if labelIt {
		ls := marks.TextStyle(sizeLabel-1, Muted, true)
		ls.XAlign, ls.YAlign = text.XCenter, text.YTop
		p.Add(marks.Label{X: (marks.Day(r.w.Start) + marks.Day(r.w.End)) / 2, Top: true, DY: -vg.Points(4), Text: r.w.Name, Style: ls})
	}
}

func (r *review) timeAxis(p *plot.Plot) {
	p.X.Tick.Marker = marks.QuarterTicks{}
	p.X.Min = marks.Day(r.whole.Start) - 3
	p.X.Max = marks.Day(r.whole.End) + 10
}

// weekly: weekly direct and via-search contributions per channel.
func (r *review) weekly() (*Figure, error) {
	var chans []string
	for _, ch := range append(append([]string{}, r.uppers()...), r.f.Run.Spec.Search...) {
		if len(r.weeklyOf(ch, fitfolder.PathDirect))+len(r.weeklyOf(ch, fitfolder.PathViaSearch)) > 0 {
			chans = append(chans, ch)
		}
	}
	if len(chans) == 0 {
		return nil, fmt.Errorf("weekly.csv has no rows")
	}
	fig := &Figure{
		Legend: []LegendItem{
			{"direct", Direct, SwatchLine, nil},
			{"via branded search", ViaSearch, SwatchLine, nil},
		},
		Caption: "Weekly contributions in " + r.outcome + ". " + r.windowCaption() + " Lines are posterior means, bands 90% credible intervals.",
	}
	if r.w.Kind != window.WholePeriod {
		fig.Legend = append(fig.Legend, LegendItem{"review window " + r.w.Name, Shade, SwatchBox, nil})
	}
	var panels []*plot.Plot
	var parts []string
	for k, ch := range chans {
		p := newPanel("")
		r.timeAxis(p)
		r.shadeWindow(p, k == 0)
		p.Add(gridLines{})
		for _, path := range []string{fitfolder.PathDirect, fitfolder.PathViaSearch} {
			ws := r.weeklyOf(ch, path)
			if len(ws) == 0 {
				continue
			}
			col := Direct
			if path == fitfolder.PathViaSearch {
				col = ViaSearch
			}
			s := Series{Panel: ch, Name: path}
			for _, w := range ws {
				s.X = append(s.X, marks.Day(w.Week))
				s.Y = append(s.Y, w.Mean)
				s.Lo = append(s.Lo, w.Q05)
				s.Hi = append(s.Hi, w.Q95)
			}
			fig.add(s)
			p.Add(marks.Band{X: s.X, Lo: s.Lo, Hi: s.Hi, Fill: marks.Tint(col, 0.2)})
			p.Add(marks.Line{X: s.X, Y: s.Y, Style: draw.LineStyle{Color: col, Width: vg.Points(2.6)}})
			if path == fitfolder.PathViaSearch {
				sum, n := 0.0, 0
				for _, w := range ws {
					if r.w.Contains(w.Week) {
						sum += w.Mean
						n++
					}
				}
				if n > 0 {
					parts = append(parts, fmt.Sprintf("%s from %s", About(sum/float64(n)), Channel(ch)))
				}
			}
		}
		// Channel name inside the panel, top left.
		ns := marks.TextStyle(sizePanel-1, Ink, true)
		ns.XAlign, ns.YAlign = text.XLeft, text.YTop
		p.Add(marks.Label{X: p.X.Min, Top: true, DX: vg.Points(8), DY: -vg.Points(4), Text: Capital(Channel(ch)) + ": " + r.outcome + " per week", Style: ns, Halo: true})
		p.Y.Min = 0
		if k < len(chans)-1 {
			p.X.Tick.Label.Color = nil
			p.X.Tick.Marker = blankTicks{marks.QuarterTicks{}}
		}
		panels = append(panels, p)
	}
	fig.grid(len(panels), 1, panels...)
	if len(parts) > 0 {
		// "In 2025Q3, branded search carried about 31 conversions a week
		// from video and 14 from audio"
		first, rest, _ := strings.Cut(parts[0], " from ")
		tail := ""
		if len(parts) > 1 {
			tail = " and " + List(parts[1:])
		}
		fig.Title = fmt.Sprintf("%s, branded search carried about %s %s a week from %s%s",
			windowPhrase(r.w), first, r.outcome, rest, tail)
	}
	if len(parts) == 0 {
		fig.Title = "Weekly contributions of each channel"
	}
	return fig, nil
}

// blankTicks keeps a ticker's marks but drops their labels (stacked panels
// that share the x axis of the bottom one).
type blankTicks struct{ plot.Ticker }

func (b blankTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := b.Ticker.Ticks(lo, hi)
	for i := range ts {
		ts[i].Label = ""
	}
	return ts
}

// fit: actual against fitted with the 90% predictive band, both stages.
func (r *review) fit() (*Figure, error) {
	fig := &Figure{
		Legend: []LegendItem{
			{"actual", Ink, SwatchLine, nil},
			{"fitted (posterior mean)", Direct, SwatchLine, nil},
			{"90% predictive band", marks.Tint(Direct, 0.25), SwatchBox, nil},
		},
		Caption: r.windowCaption() + " Band: 90% posterior predictive interval for each week.",
	}
	if r.w.Kind != window.WholePeriod {
		fig.Legend = append(fig.Legend, LegendItem{"review window " + r.w.Name, Shade, SwatchBox, nil})
	}
	names := map[string]string{"demand": Plain(r.f.Run.Spec.Queries), "outcome": r.outcome}
	var panels []*plot.Plot
	var covers []float64
	for k, st := range []string{"demand", "outcome"} {
		var rows []fitfolder.Fitted
		for _, x := range r.f.Fitted {
			if x.Stage == st {
				rows = append(rows, x)
			}
		}
		if len(rows) == 0 {
			return nil, fmt.Errorf("fitted.csv has no rows for stage %s", st)
		}
		sort.SliceStable(rows, func(i, j int) bool { return rows[i].Week.Before(rows[j].Week) })
		act := Series{Panel: st, Name: "actual"}
		fit := Series{Panel: st, Name: "fitted"}
		inside := 0
		for _, x := range rows {
			d := marks.Day(x.Week)
			act.X, act.Y = append(act.X, d), append(act.Y, x.Actual)
			fit.X, fit.Y = append(fit.X, d), append(fit.Y, x.Mean)
			fit.Lo, fit.Hi = append(fit.Lo, x.Q05), append(fit.Hi, x.Q95)
			if x.Actual >= x.Q05 && x.Actual <= x.Q95 {
				inside++
			}
		}
		fig.add(act)
		fig.add(fit)
		cover := float64(inside) / float64(len(rows))
		fig.add(Series{Panel: st, Name: "coverage", Y: []float64{cover}})
		covers = append(covers, cover)

		p := newPanel("")
		r.timeAxis(p)
		r.shadeWindow(p, k == 0)
		p.Add(gridLines{})
		p.Add(marks.Band{X: fit.X, Lo: fit.Lo, Hi: fit.Hi, Fill: marks.Tint(Direct, 0.25)})
		p.Add(marks.Line{X: fit.X, Y: fit.Y, Style: draw.LineStyle{Color: Direct, Width: vg.Points(3)}})
		p.Add(marks.Line{X: act.X, Y: act.Y, Style: draw.LineStyle{Color: Ink, Width: vg.Points(1.8)}})
		ns := marks.TextStyle(sizePanel-1, Ink, true)
		ns.XAlign, ns.YAlign = text.XLeft, text.YTop
		stageName := map[string]string{"demand": "Demand stage: ", "outcome": "Outcome stage: "}[st]
		p.Add(marks.Label{X: p.X.Min, Top: true, DX: vg.Points(8), DY: -vg.Points(4), Text: stageName + names[st] + " per week", Style: ns, Halo: true})
		if k == 0 {
			p.X.Tick.Marker = blankTicks{marks.QuarterTicks{}}
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		for i := range fit.X {
			lo = math.Min(lo, math.Min(fit.Lo[i], act.Y[i]))
			hi = math.Max(hi, math.Max(fit.Hi[i], act.Y[i]))
		}
		p.Y.Min, p.Y.Max = lo, hi+(hi-lo)*0.22 // room for the stage name
		panels = append(panels, p)
	}
	fig.grid(2, 1, panels...)
	fig.Title = fmt.Sprintf("Actuals fall inside the model's 90%% band in %s of weeks for %s and %s for %s",
		Percent(covers[0]), names["demand"], Percent(covers[1]), names["outcome"])
	if math.Min(covers[0], covers[1]) < 0.8 {
		fig.Title = fmt.Sprintf("The model misses often: only %s of weeks for %s and %s for %s fall inside its 90%% band",
			Percent(covers[0]), names["demand"], Percent(covers[1]), names["outcome"])
	}
	return fig, nil
}

// sensitivity: the via-search effect against rho, with the break-even rho.
func (r *review) sensitivity() (*Figure, error) {
	fig := &Figure{
		Legend: []LegendItem{
			{"via-search effect", ViaSearch, SwatchLine, nil},
			{"zero", Ink, SwatchLine, nil},
			{"rho where it reaches zero", Alert, SwatchDash, nil},
		},
		Caption: "rho = assumed correlation between the errors of the demand and outcome stages (an unmeasured common cause " +
			"of branded queries and " + r.outcome + "); rho = 0 is the main result. Whole period: " + r.weeksText(r.whole) +
			". Line: posterior mean; band: 90% credible interval.",
	}
	var panels []*plot.Plot
	var crossing, steady [][2]string // channel and rho, channel and behaviour
	for _, ch := range r.uppers() {
		var rows []fitfolder.Sensitivity
		for _, s := range r.f.Sensitivity {
			if s.Channel == ch {
				rows = append(rows, s)
			}
		}
		if len(rows) < 2 {
			return nil, fmt.Errorf("sensitivity.csv has fewer than 2 rows for %s", ch)
		}
		sort.SliceStable(rows, func(i, j int) bool { return rows[i].Rho < rows[j].Rho })
		s := Series{Panel: ch, Name: "via_search"}
		allPos, allNeg := true, true
		for _, x := range rows {
			s.X, s.Y = append(s.X, x.Rho), append(s.Y, x.Mean)
			s.Lo, s.Hi = append(s.Lo, x.Q05), append(s.Hi, x.Q95)
			allPos = allPos && x.Mean > 0
			allNeg = allNeg && x.Mean < 0
		}
		fig.add(s)
		p := newPanel(Capital(Channel(ch)))
		p.X.Label.Text = "error correlation (rho)"
		p.Y.Label.Text = "via-search " + r.outcome
		p.X.Tick.Marker = marks.NumberTicks{}
		p.Add(gridLines{})
		p.Add(marks.Band{X: s.X, Lo: s.Lo, Hi: s.Hi, Fill: marks.Tint(ViaSearch, 0.25)})
		p.Add(marks.Rule{At: 0, Style: draw.LineStyle{Color: Ink, Width: vg.Points(2)}})
		p.Add(marks.Rule{At: 0, Vertical: true, Style: draw.LineStyle{Color: Faint, Width: vg.Points(1.5), Dashes: []vg.Length{vg.Points(3), vg.Points(3)}}})
		p.Add(marks.Line{X: s.X, Y: s.Y, Style: draw.LineStyle{Color: ViaSearch, Width: vg.Points(4)}})
		ls := marks.TextStyle(sizeLabel, Alert, true)
		ls.YAlign = text.YTop
		be, _ := r.f.BreakevenRho(ch)
		if !math.IsNaN(be) {
			fig.add(Series{Panel: ch, Name: "breakeven", X: []float64{be}})
			p.Add(marks.Rule{At: be, Vertical: true, Style: draw.LineStyle{Color: Alert, Width: vg.Points(3),
				Dashes: []vg.Length{vg.Points(8), vg.Points(5)}}})
			ls.XAlign = text.XRight
			dx := -vg.Points(8)
			if be < 0 {
				ls.XAlign, dx = text.XLeft, vg.Points(8)
			}
			p.Add(marks.Label{X: be, Top: true, DX: dx, DY: -vg.Points(8), Text: "zero at rho = " + trimRho(be), Style: ls, Halo: true})
			crossing = append(crossing, [2]string{Channel(ch), trimRho(be)})
		} else {
			word := "changes sign"
			switch {
			case allPos:
				word = "stays above zero"
			case allNeg:
				word = "stays below zero"
			}
			steady = append(steady, [2]string{Channel(ch), word})
		}
		p.X.Min, p.X.Max = -0.95, 0.95
		lo, hi := 0.0, 0.0
		for i := range s.X {
			lo, hi = math.Min(lo, s.Lo[i]), math.Max(hi, s.Hi[i])
		}
		p.Y.Min, p.Y.Max = lo, hi+(hi-lo)*0.12
		panels = append(panels, p)
	}
	fig.grid(1, len(panels), panels...)
	fig.Title = sensitivityTitle(crossing, steady)
	return fig, nil
}

// sensitivityTitle states where each channel's via-search effect reaches
// zero: "The via-search effect would reach zero at rho = 0.45 for video;
// audio's stays above zero for every rho from -0.9 to 0.9".
func sensitivityTitle(crossing, steady [][2]string) string {
	var parts []string
	if len(crossing) > 0 {
		same := true
		var names, at []string
		for _, c := range crossing {
			names = append(names, c[0])
			at = append(at, c[1]+" for "+c[0])
			same = same && c[1] == crossing[0][1]
		}
		switch {
		case len(crossing) == 1:
			parts = append(parts, fmt.Sprintf("The via-search effect of %s would reach zero at rho = %s", names[0], crossing[0][1]))
		case same:
			parts = append(parts, fmt.Sprintf("The via-search effects of %s would reach zero at rho = %s", List(names), crossing[0][1]))
		default:
			parts = append(parts, "The via-search effect would reach zero at rho = "+List(at))
		}
	}
	for i, st := range steady {
		if len(crossing) == 0 && i == 0 {
			parts = append(parts, fmt.Sprintf("The via-search effect of %s %s for every rho from -0.9 to 0.9", st[0], st[1]))
			continue
		}
		parts = append(parts, fmt.Sprintf("%s's %s for every rho from -0.9 to 0.9", st[0], st[1]))
	}
	return strings.Join(parts, "; ")
}

func trimRho(v float64) string {
	s := fmt.Sprintf("%.2f", v)
	s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	if s == "-0" {
		s = "0"
	}
	return s
}

// Convergence thresholds (Vehtari, Gelman, Simpson, Carpenter and Bürkner
// 2021, "Rank-normalization, folding, and localization: an improved R-hat
// for assessing convergence of MCMC", Bayesian Analysis 16(2)).
const (
	RhatMax = 1.01
	ESSMin  = 400
)

// diagnostics: R-hat and ESS per parameter against their thresholds.
func (r *review) diagnostics() (*Figure, error) {
	stages := r.f.Stages
	rows := make([]string, len(stages))
	for i, s := range stages {
		rows[len(stages)-1-i] = s.Name // first stage on top
	}
	pr := newPanel("R-hat (at most 1.01)")
	pr.X.Label.Text = "R-hat"
	pe := newPanel("Effective sample size (at least 400)")
	pe.X.Label.Text = "ESS (log scale)"
	pe.X.Scale = plot.LogScale{}
	for _, p := range []*plot.Plot{pr, pe} {
		p.Y.Tick.Marker = marks.CategoryTicks(rows)
		p.Y.Tick.Label = marks.TextStyle(sizeAxis, Ink, true)
		p.Y.Tick.Label.XAlign, p.Y.Tick.Label.YAlign = text.XRight, text.YCenter
		p.Y.Min, p.Y.Max = -0.6, float64(len(stages))-0.4
		p.Add(gridLines{vertical: true})
	}
	thr := draw.LineStyle{Color: Alert, Width: vg.Points(3), Dashes: []vg.Length{vg.Points(8), vg.Points(5)}}
	pr.Add(marks.Rule{At: RhatMax, Vertical: true, Style: thr})
	pe.Add(marks.Rule{At: ESSMin, Vertical: true, Style: thr})

	var series []Series
	badNames := map[string]bool{}
	rmin, rmax := 1.0, RhatMax
	emin, emax := float64(ESSMin), float64(ESSMin)
	var bad []string
	divs := 0
	var divText []string
	ls := marks.TextStyle(sizeLabel-1, Alert, true)
	ls.XAlign, ls.YAlign = text.XLeft, text.YBottom
	for i, st := range stages {
		y0 := float64(len(stages) - 1 - i)
		rs := Series{Panel: "rhat", Name: st.Name}
		bs := Series{Panel: "ess", Name: st.Name + "/bulk"}
		ts := Series{Panel: "ess", Name: st.Name + "/tail"}
		var okR, badR, okB, badB, okT, badT dotsXY
		worstR, worstE := -1, -1
		var worstRy, worstEy, worstEv float64
		for j, prm := range st.Params {
			jit := y0 + jitter(j, len(st.Params))
			placeDiag(&rs, &okR, &badR, &rmin, &rmax, prm.Rhat, jit, prm.Name, prm.Rhat > RhatMax)
			placeDiag(&bs, &okB, &badB, &emin, &emax, prm.ESSBulk, jit, prm.Name, prm.ESSBulk < ESSMin)
			placeDiag(&ts, &okT, &badT, &emin, &emax, prm.ESSTail, jit, prm.Name, prm.ESSTail < ESSMin)
			failR := prm.Rhat > RhatMax
			failE := prm.ESSBulk < ESSMin || prm.ESSTail < ESSMin
			if failR || failE {
				key := st.Name + ": " + prm.Name
				if !badNames[key] {
					badNames[key] = true
					bad = append(bad, key)
				}
			}
			if failR && (worstR < 0 || prm.Rhat > st.Params[worstR].Rhat) {
				worstR, worstRy = j, jit
			}
			if e := minESS(prm); failE && (worstE < 0 || e < worstEv) {
				worstE, worstEy, worstEv = j, jit, e
			}
		}
		r.addDots(pr, okR, Direct, draw.CircleGlyph{}, 6)
		r.addDots(pr, badR, Alert, draw.CircleGlyph{}, 9)
		r.addDots(pe, okB, Direct, draw.CircleGlyph{}, 6)
		r.addDots(pe, okT, ViaSearch, draw.TriangleGlyph{}, 7)
		r.addDots(pe, badB, Alert, draw.CircleGlyph{}, 9)
		r.addDots(pe, badT, Alert, draw.TriangleGlyph{}, 10)
		// Label the worst failing parameter of the stage in each panel
		// (more labels would overlap on a slide; verdict.txt names the rest).
		if worstR >= 0 {
			prm := st.Params[worstR]
			pr.Add(marks.Label{X: prm.Rhat, Y: worstRy, DX: vg.Points(10), DY: vg.Points(4), Text: prm.Name, Style: ls, Halo: true, Inside: true})
		}
		if worstE >= 0 {
			pe.Add(marks.Label{X: worstEv, Y: worstEy, DX: vg.Points(10), DY: vg.Points(4), Text: st.Params[worstE].Name, Style: ls, Halo: true, Inside: true})
		}
		series = append(series, rs, bs, ts)
		d := st.Stats.TotalDivergences()
		divs += d
		divText = append(divText, fmt.Sprintf("%s %d", st.Name, d))
	}
	span := rmax - rmin
	pr.X.Min, pr.X.Max = rmin-0.08*span-0.0005, rmax+0.25*span
	pe.X.Min, pe.X.Max = emin/1.6, emax*1.5
	pe.X.Tick.Marker = logTicks{}

	fig := &Figure{
		Legend: []LegendItem{
			{"R-hat / bulk ESS of a parameter", Direct, SwatchDot, nil},
			{"tail ESS", ViaSearch, SwatchDot, draw.TriangleGlyph{}},
			{"fails its check", Alert, SwatchDot, nil},
			{"threshold", Alert, SwatchDash, nil},
		},
		Series: series,
	}
	fig.grid(1, 2, pr, pe)
	nParams := 0
	for _, st := range stages {
		nParams += len(st.Params)
	}
	chains := r.f.Run.Chains
	fig.Caption = fmt.Sprintf("Each dot is one parameter of one stage (%d in all; vertical spread only separates the dots). "+
		"Thresholds R-hat 1.01 and ESS 400 (Vehtari et al. 2021). Divergent transitions: %s. %d chains, %d draws each after %d warm-up.",
		nParams, strings.Join(divText, ", "), chains, r.f.Run.Draws, r.f.Run.Warmup)
	fig.add(Series{Panel: "divergences", Name: "total", Y: []float64{float64(divs)}})
	switch {
	case len(bad) == 0 && divs == 0:
		fig.Title = "Every parameter passes the convergence checks, with no divergent transitions"
	case len(bad) == 0:
		fig.Title = fmt.Sprintf("R-hat and ESS pass for every parameter, but %d transitions diverged: treat the fit with care", divs)
	default:
		what := fmt.Sprintf("%d parameters fail", len(bad))
		if len(bad) == 1 {
			what = "1 parameter fails"
		}
		if divs > 0 {
			fig.Title = fmt.Sprintf("%s the convergence checks and %d transitions diverged: do not trust this fit yet", what, divs)
		} else {
			fig.Title = fmt.Sprintf("%s the convergence checks: do not trust this fit yet", what)
		}
	}
	return fig, nil
}

// minESS returns the smaller of a parameter's bulk and tail ESS, ignoring
// a missing (NaN) one.
func minESS(p fitfolder.Param) float64 {
	switch {
	case math.IsNaN(p.ESSBulk):
		return p.ESSTail
	case math.IsNaN(p.ESSTail):
		return p.ESSBulk
	}
	return math.Min(p.ESSBulk, p.ESSTail)
}

// dotsXY collects points for one glyph style.
type dotsXY struct{ x, y []float64 }

// placeDiag records one parameter's diagnostic v (skipped when NaN) at
// height y: into the plotted series, the axis range [lo, hi], and the
// passing or failing dots.
func placeDiag(s *Series, ok, bad *dotsXY, lo, hi *float64, v, y float64, name string, fails bool) {
	if math.IsNaN(v) {
		return
	}
	s.X, s.Y, s.Labels = append(s.X, v), append(s.Y, y), append(s.Labels, name)
	*lo, *hi = math.Min(*lo, v), math.Max(*hi, v)
	if fails {
		bad.add(v, y)
	} else {
		ok.add(v, y)
	}
}

func (d *dotsXY) add(x, y float64) { d.x, d.y = append(d.x, x), append(d.y, y) }

func (r *review) addDots(p *plot.Plot, d dotsXY, c color.Color, shape draw.GlyphDrawer, radius float64) {
	if len(d.x) == 0 {
		return
	}
	p.Add(marks.Dots{X: d.x, Y: d.y, Style: draw.GlyphStyle{Color: c, Radius: vg.Points(radius), Shape: shape}})
}

// jitter spreads n dots of one row over ±0.28 deterministically.
func jitter(i, n int) float64 {
	if n <= 1 {
		return 0
	}
	// A low-discrepancy sequence (golden ratio) so that neighbours in the
	// parameter list do not line up.
	v := math.Mod(float64(i)*0.6180339887498949, 1)
	return (v - 0.5) * 0.56
}

// logTicks labels 1, 2 and 4 times powers of ten on a log axis (so that
// the ESS threshold 400 has a label).
type logTicks struct{}

func (logTicks) Ticks(lo, hi float64) []plot.Tick {
	var ts []plot.Tick
	for e := math.Floor(math.Log10(lo)); e <= math.Ceil(math.Log10(hi)); e++ {
		for _, m := range []float64{1, 2, 4} {
			v := m * math.Pow(10, e)
			if v < lo || v > hi {
				continue
			}
			ts = append(ts, plot.Tick{Value: v, Label: Number(v)})
		}
	}
	return ts
}
