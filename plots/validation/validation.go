package validation

import (
	"fmt"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/validate"
	"spillway/plots"
	"spillway/plots/marks"
)

// page draws one report.
type page struct{ rep *validate.Report }

// Page size: 1600×900 px at 96 dpi, a 16:9 slide.
const (
	widthPx, heightPx = 1600, 900
	dpi               = 96
	margin            = 34
)

// pathColor is the palette colour of an effect path: amber through
// search, blue direct, near-black total, grey for shares.
func pathColor(path string) color.Color {
	p := strings.TrimSuffix(path, "_quarterly")
	switch p {
	case "via_search", "borrowed_share":
		return plots.ViaSearch
	case "direct":
		return plots.Direct
	case "total":
		return plots.Ink
	}
	return plots.Faint
}

// PNG renders validation.png for rep: its title is rep.Title(), its
// caption rep.Caption, and sections rep has no data for are left out.
func PNG(rep *validate.Report) ([]byte, error) {
	f := &page{rep: rep}
	w := vg.Length(widthPx) * vg.Inch / dpi
	h := vg.Length(heightPx) * vg.Inch / dpi
	b, err := marks.PNG(w, h, dpi, f.draw)
	if err != nil {
		return nil, fmt.Errorf("validation: render validation.png: %w", err)
	}
	return b, nil
}

func (f *page) draw(dc draw.Canvas) error {
	left, right := dc.Min.X+margin, dc.Max.X-margin
	y := dc.Max.Y - 24
	ts := marks.TextStyle(28, plots.Ink, true)
	ts.YAlign = text.YTop
	for _, ln := range marks.Wrap(ts, f.rep.Title(), right-left) {
		dc.FillText(ts, vg.Point{X: left, Y: y}, ln)
		y -= ts.Height(ln) + 6
	}
	y -= 10
	bottom := dc.Min.Y + 18
	if f.rep.Caption != "" {
		cs := marks.TextStyle(17, plots.Muted, false)
		lines := marks.Wrap(cs, f.rep.Caption, right-left)
		for i := len(lines) - 1; i >= 0; i-- {
			dc.FillText(cs, vg.Point{X: left, Y: bottom}, lines[i])
			bottom += cs.Height(lines[i]) + 4
		}
		bottom += 10
	}
	var panels []*plot.Plot
	cov, err := f.coveragePanel()
	if err != nil {
		return err
	}
	fcs, err := f.forecastPanels()
	if err != nil {
		return err
	}
	sh, err := f.shiftPanel()
	if err != nil {
		return err
	}
	for _, p := range append(append([]*plot.Plot{cov}, fcs...), sh) {
		if p != nil {
			panels = append(panels, p)
		}
	}
	area := vg.Rectangle{Min: vg.Point{X: left, Y: bottom}, Max: vg.Point{X: right, Y: y}}
	sub := func(x0, y0, x1, y1 float64) draw.Canvas {
		r := vg.Rectangle{
			Min: vg.Point{X: area.Min.X + vg.Length(x0)*(area.Max.X-area.Min.X), Y: area.Min.Y + vg.Length(y0)*(area.Max.Y-area.Min.Y)},
			Max: vg.Point{X: area.Min.X + vg.Length(x1)*(area.Max.X-area.Min.X), Y: area.Min.Y + vg.Length(y1)*(area.Max.Y-area.Min.Y)}}
		return draw.Canvas{Canvas: dc.Canvas, Rectangle: r}
	}
	switch len(panels) {
	case 0:
		s := marks.TextStyle(24, plots.Muted, false)
		dc.FillText(s, vg.Point{X: left, Y: (area.Min.Y + area.Max.Y) / 2}, "No check was run.")
	case 1:
		panels[0].Draw(sub(0, 0, 1, 1))
	case 2:
		panels[0].Draw(sub(0, 0, 0.48, 1))
		panels[1].Draw(sub(0.52, 0, 1, 1))
	case 3:
		// the first panel (coverage, or the demand forecasts) down the
		// left; the other two on the right
		panels[0].Draw(sub(0, 0, 0.44, 1))
		panels[1].Draw(sub(0.48, 0.52, 1, 1))
		panels[2].Draw(sub(0.48, 0, 1, 0.46))
	default:
		// coverage down the left; the two stages' forecasts side by side
		// at the top right, stability below them
		panels[0].Draw(sub(0, 0, 0.42, 1))
		panels[1].Draw(sub(0.46, 0.52, 0.72, 1))
		panels[2].Draw(sub(0.74, 0.52, 1, 1))
		panels[3].Draw(sub(0.46, 0, 1, 0.46))
	}
	return nil
}

func newPanel(title string) *plot.Plot {
	p := plot.New()
	p.BackgroundColor = color.Transparent
	p.Title.Text = title
	p.Title.TextStyle = marks.TextStyle(22, plots.Ink, true)
	p.Title.TextStyle.XAlign = text.XCenter
	p.Title.TextStyle.YAlign = text.YTop
	p.Title.Padding = vg.Points(10)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle = marks.TextStyle(19, plots.Ink, false)
		a.Label.TextStyle.XAlign = text.XCenter
		a.Label.Padding = vg.Points(6)
		a.Tick.Label = marks.TextStyle(18, plots.Muted, false)
		a.Tick.LineStyle = draw.LineStyle{Color: plots.Muted, Width: vg.Points(1)}
		a.Tick.Length = vg.Points(5)
		a.LineStyle = draw.LineStyle{Color: plots.Muted, Width: vg.Points(1.2)}
		a.Padding = vg.Points(4)
	}
	p.X.Tick.Label.XAlign = text.XCenter
	p.X.Tick.Label.YAlign = text.YTop
	p.Y.Tick.Label.XAlign = text.XRight
	p.Y.Tick.Label.YAlign = text.YCenter
	return p
}

// coveragePanel draws a horizontal bar per effect: the 90% interval's
// coverage as the bar, the 50% interval's as a dot, the nominal levels as
// dashed lines.
func (f *page) coveragePanel() (*plot.Plot, error) {
	if len(f.rep.Coverage) == 0 {
		return nil, nil
	}
	title := "Recovery: coverage of true effects"
	if f.rep.Replicates > 0 {
		title = fmt.Sprintf("Recovery: coverage over %d data sets", f.rep.Replicates)
	}
	p := newPanel(title)
	n := len(f.rep.Coverage)
	names := make([]string, n)
	for i, c := range f.rep.Coverage {
		yy := float64(n - 1 - i)
		names[n-1-i] = c.Label
		fill := pathColor(c.Path)
		if c.Flagged {
			fill = plots.Alert
		}
		if !finite(c.Cover90, c.Cover50) {
			return nil, fmt.Errorf("validation: coverage of %s is not a number", c.Label)
		}
		p.Add(marks.Rect{X0: 0, X1: c.Cover90, Y0: yy - 0.32, Y1: yy + 0.32, Fill: fill})
		at := marks.Dots{X: []float64{c.Cover50}, Y: []float64{yy}, Overflow: true}
		halo, dot := at, at
		halo.Style = draw.GlyphStyle{Color: color.White, Radius: vg.Points(7.5), Shape: draw.CircleGlyph{}}
		dot.Style = draw.GlyphStyle{Color: plots.Ink, Radius: vg.Points(5), Shape: draw.CircleGlyph{}}
		p.Add(halo, dot)
	}
	dash := draw.LineStyle{Color: plots.Alert, Width: vg.Points(2.5), Dashes: []vg.Length{vg.Points(7), vg.Points(5)}}
	p.Add(marks.Rule{At: 0.9, Vertical: true, Style: dash}, marks.Rule{At: 0.5, Vertical: true, Style: dash})
	level := marks.TextStyle(17, plots.Alert, true)
	level.YAlign = text.YTop
	p.Add(marks.Label{X: 0.9, Top: true, DX: vg.Points(5), DY: -vg.Points(2), Text: "90%", Style: level},
		marks.Label{X: 0.5, Top: true, DX: vg.Points(5), DY: -vg.Points(2), Text: "50%", Style: level})
	p.X.Min, p.X.Max = 0, 1
	p.Y.Min, p.Y.Max = -0.6, float64(n)+0.2 // room for the level labels
	p.X.Tick.Marker = marks.PercentTicks{}
	p.Y.Tick.Marker = marks.CategoryTicks(names)
	p.Y.Tick.Length = 0
	p.Y.LineStyle.Width = 0
	p.X.Label.Text = "bar: 90% intervals; dot: 50% intervals"
	return p, nil
}

// forecastPanels draws each stage's holdout forecasts (demand, then
// outcome): the 90% band and mean against the actuals, the seasonal
// baseline and, when the sweep has it, the model without media.
func (f *page) forecastPanels() ([]*plot.Plot, error) {
	var out []*plot.Plot
	for _, s := range f.rep.Forecasts {
		if len(s.Days) == 0 {
			continue
		}
		p, err := forecastPanel(s)
		if err != nil {
			return nil, err
		}
		out = append(out, p)
	}
	return out, nil
}

func forecastPanel(s validate.ForecastSeries) (*plot.Plot, error) {
	what := s.Stage
	if s.Column != "" {
		what = strings.ReplaceAll(s.Column, "_", " ")
	}
	p := newPanel("Holdout: " + s.Stage)
	// weeks of one origin follow each other; draw each block apart
	blocks := splitBlocks(s.Days)
	for _, b := range blocks {
		x := s.Days[b[0]:b[1]]
		p.Add(marks.Band{X: x, Lo: s.Lo[b[0]:b[1]], Hi: s.Hi[b[0]:b[1]], Fill: marks.Tint(plots.Direct, 0.22)})
	}
	for _, o := range s.Origins {
		p.Add(marks.Rule{At: o, Vertical: true, Style: draw.LineStyle{Color: plots.Grid, Width: vg.Points(2)}})
	}
	noMedia := len(s.NoMedia) == len(s.Days)
	for _, b := range blocks {
		x := s.Days[b[0]:b[1]]
		p.Add(marks.Line{X: x, Y: s.Baseline[b[0]:b[1]], Style: draw.LineStyle{Color: plots.Faint, Width: vg.Points(3), Dashes: []vg.Length{vg.Points(8), vg.Points(5)}}, DotSingle: true})
		if noMedia {
			p.Add(marks.Line{X: x, Y: s.NoMedia[b[0]:b[1]], Style: draw.LineStyle{Color: plots.Muted, Width: vg.Points(2.5), Dashes: []vg.Length{vg.Points(2), vg.Points(4)}}, DotSingle: true})
		}
		p.Add(marks.Line{X: x, Y: s.Mean[b[0]:b[1]], Style: draw.LineStyle{Color: plots.Direct, Width: vg.Points(3.5)}, DotSingle: true})
		p.Add(marks.Line{X: x, Y: s.Actual[b[0]:b[1]], Style: draw.LineStyle{Color: plots.Ink, Width: vg.Points(3)}, DotSingle: true})
	}
	for _, v := range [][]float64{s.Actual, s.Mean, s.Lo, s.Hi, s.Baseline, s.NoMedia} {
		if !finite(v...) {
			return nil, fmt.Errorf("validation: a %s forecast is not a number", s.Stage)
		}
	}
	p.X.Tick.Marker = marks.MonthTicks{}
	p.Y.Tick.Marker = marks.NumberTicks{}
	p.Y.Label.Text = what + " per week"
	// room above the lines for the legend
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range [][]float64{s.Actual, s.Lo, s.Hi, s.Baseline, s.NoMedia} {
		for _, x := range v {
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
	}
	if hi > lo {
		p.Y.Min, p.Y.Max = lo-0.05*(hi-lo), hi+0.9*(hi-lo)
	}
	p.Legend.Add("actual", swatch{plots.Ink, false})
	p.Legend.Add("model, 90% band", swatch{plots.Direct, false})
	p.Legend.Add("seasonal baseline", swatch{plots.Faint, true})
	if noMedia {
		p.Legend.Add("model without media", swatch{plots.Muted, true})
	}
	p.Legend.TextStyle = marks.TextStyle(15, plots.Ink, false)
	p.Legend.Top = true
	p.Legend.Left = true
	p.Legend.Padding = vg.Points(2)
	return p, nil
}

// splitBlocks returns [from, to) index ranges of consecutive weeks.
func splitBlocks(days []float64) [][2]int {
	var out [][2]int
	start := 0
	for i := 1; i <= len(days); i++ {
		if i == len(days) || days[i]-days[i-1] > 7.5 || days[i] <= days[i-1] {
			out = append(out, [2]int{start, i})
			start = i
		}
	}
	return out
}

// shiftPanel draws each effect's largest move over the refits.
func (f *page) shiftPanel() (*plot.Plot, error) {
	if len(f.rep.Shifts) == 0 {
		return nil, nil
	}
	p := newPanel("Stability: largest move over refits")
	n := len(f.rep.Shifts)
	names := make([]string, n)
	hi := 1.0
	tick := draw.LineStyle{Color: plots.Alert, Width: vg.Points(3)}
	for i, s := range f.rep.Shifts {
		yy := float64(n - 1 - i)
		names[n-1-i] = s.Label
		v := s.Shift
		if !finite(v) {
			v = 0
		}
		fill := pathColor(s.Path)
		if s.Flagged {
			fill = plots.Alert
		}
		p.Add(marks.Rect{X0: 0, X1: v, Y0: yy - 0.32, Y1: yy + 0.32, Fill: fill})
		hi = math.Max(hi, v)
		if s.Level > 0 {
			p.Add(marks.Segment{X0: s.Level, X1: s.Level, Y0: yy - 0.45, Y1: yy + 0.45, Style: tick})
			hi = math.Max(hi, s.Level)
		}
	}
	p.X.Min, p.X.Max = 0, 1.08*hi
	p.Y.Min, p.Y.Max = -0.6, float64(n)-0.4
	p.X.Tick.Marker = marks.NumberTicks{}
	p.Y.Tick.Marker = marks.CategoryTicks(names)
	p.Y.Tick.Length = 0
	p.Y.LineStyle.Width = 0
	p.X.Label.Text = "posterior sds of the reference fit (red tick: flag level)"
	return p, nil
}

func finite(vs ...float64) bool {
	for _, v := range vs {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

// swatch is a legend thumbnail: a thick line, dashed or solid.
type swatch struct {
	c      color.Color
	dashed bool
}

func (s swatch) Thumbnail(c *draw.Canvas) {
	st := draw.LineStyle{Color: s.c, Width: vg.Points(4)}
	if s.dashed {
		st.Dashes = []vg.Length{vg.Points(6), vg.Points(4)}
	}
	y := (c.Min.Y + c.Max.Y) / 2
	c.StrokeLine2(st, c.Min.X, y, c.Max.X, y)
}
