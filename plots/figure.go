package plots

import (
	"fmt"
	"image/color"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/plots/marks"
)

// Page size: 1200×675 pt at 96 dpi is 1600×900 px, a 16:9 slide.
const (
	// WidthPx and HeightPx are the size of every chart PNG in pixels.
	WidthPx, HeightPx = 1600, 900
	dpi               = 96
)

var (
	pageW = vg.Length(WidthPx) * vg.Inch / dpi
	pageH = vg.Length(HeightPx) * vg.Inch / dpi
)

// Series is one set of numbers a chart drew, kept so that tests and the
// report can check what a chart shows without reading pixels. Panel names
// the panel it is in (a window, a channel or a stage), Name what it is
// ("video_spend/direct"); X holds positions (category index, weekly spend,
// rho, or days since 1970-01-01 on time axes), Y the central values and
// Lo/Hi the 90% interval when there is one. Labels, when set, name each
// point (parameter names on the diagnostics chart).
type Series struct {
	Panel, Name string
	X, Y        []float64
	Lo, Hi      []float64
	Labels      []string
}

// Swatch is how a legend entry is drawn.
type Swatch int

const (
	// SwatchBox is a filled square (bars and bands).
	SwatchBox Swatch = iota
	// SwatchLine is a solid line.
	SwatchLine
	// SwatchDash is a dashed line (thresholds, reference levels).
	SwatchDash
	// SwatchWhisker is an interval with end caps.
	SwatchWhisker
	// SwatchDot is a point.
	SwatchDot
)

// LegendItem is one entry of a figure's legend row.
type LegendItem struct {
	Label  string
	Color  color.Color
	Swatch Swatch
	// Glyph is the shape of a SwatchDot; nil means a filled circle.
	Glyph draw.GlyphDrawer
}

// Figure is one chart: a title that states the finding, a legend row, a
// grid of panels and a caption naming the data window and interval level.
// Build it with one of the chart functions (Split, Borrowed, ...), then
// render it with PNG.
type Figure struct {
	// Name is the file stem ("split" for split.png).
	Name string
	// Title states the finding in plain words.
	Title string
	// Warning, when set, is shown in red under the title (an untrustworthy fit).
	Warning string
	// Legend is the legend row under the title.
	Legend []LegendItem
	// Caption names the data window and the interval level.
	Caption string
	// Series are the numbers the panels drew.
	Series []Series

	rows, cols int
	panels     [][]*plot.Plot
}

// Find returns the series with the given panel and name.
func (f *Figure) Find(panel, name string) (Series, bool) {
	for _, s := range f.Series {
		if s.Panel == panel && s.Name == name {
			return s, true
		}
	}
	return Series{}, false
}

func (f *Figure) add(s Series) { f.Series = append(f.Series, s) }

// grid sets the panel layout: rows × cols, filled row by row from ps.
func (f *Figure) grid(rows, cols int, ps ...*plot.Plot) {
	if len(ps) > rows*cols {
		panic("plots: more panels than grid cells")
	}
	f.rows, f.cols = rows, cols
	f.panels = make([][]*plot.Plot, rows)
	for r := range rows {
		f.panels[r] = make([]*plot.Plot, cols)
		for c := range cols {
			if i := r*cols + c; i < len(ps) {
				f.panels[r][c] = ps[i]
			}
		}
	}
}

// newPanel returns a plot styled for the slide page: large type, light
// horizontal grid lines, no box.
func newPanel(title string) *plot.Plot {
	p := plot.New()
	p.BackgroundColor = color.Transparent
	p.Title.TextStyle = marks.TextStyle(sizePanel, Ink, true)
	p.Title.TextStyle.XAlign = text.XCenter
	p.Title.TextStyle.YAlign = text.YTop
	p.Title.Padding = vg.Points(12)
	if title != "" {
		// The plot only reserves the room; panelTitle draws the text
		// centred over the data area, so that titles of aligned panels
		// line up whatever their tick labels.
		p.Title.Text = " "
		p.Add(panelTitle{text: title, style: p.Title.TextStyle, pad: p.Title.Padding})
	}
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle = marks.TextStyle(sizeAxis, Ink, false)
		a.Label.TextStyle.XAlign = text.XCenter
		a.Label.TextStyle.YAlign = text.YBottom
		a.Label.Padding = vg.Points(6)
		a.Tick.Label = marks.TextStyle(sizeTick, Muted, false)
		a.Tick.LineStyle = draw.LineStyle{Color: Muted, Width: vg.Points(1)}
		a.Tick.Length = vg.Points(6)
		a.LineStyle = draw.LineStyle{Color: Muted, Width: vg.Points(1.2)}
		a.Padding = vg.Points(4)
		a.Tick.Marker = marks.NumberTicks{}
	}
	p.X.Tick.Label.XAlign = text.XCenter
	p.X.Tick.Label.YAlign = text.YTop
	p.Y.Tick.Label.XAlign = text.XRight
	p.Y.Tick.Label.YAlign = text.YCenter
	return p
}

// panelTitle draws a panel's title centred above its data area.
type panelTitle struct {
	text  string
	style text.Style
	pad   vg.Length
}

func (t panelTitle) Plot(c draw.Canvas, p *plot.Plot) {
	sty := t.style
	sty.XAlign, sty.YAlign = text.XCenter, text.YBottom
	c.FillText(sty, vg.Point{X: (c.Min.X + c.Max.X) / 2, Y: c.Max.Y + t.pad}, t.text)
}

// gridLines adds light lines at the y (or x) ticks of p, drawn first.
type gridLines struct{ vertical bool }

func (g gridLines) Plot(c draw.Canvas, p *plot.Plot) {
	sty := draw.LineStyle{Color: Grid, Width: vg.Points(1)}
	if g.vertical {
		for _, t := range p.X.Tick.Marker.Ticks(p.X.Min, p.X.Max) {
			if t.IsMinor() || t.Value < p.X.Min || t.Value > p.X.Max {
				continue
			}
			x := c.X(p.X.Norm(t.Value))
			c.StrokeLine2(sty, x, c.Min.Y, x, c.Max.Y)
		}
		return
	}
	for _, t := range p.Y.Tick.Marker.Ticks(p.Y.Min, p.Y.Max) {
		if t.IsMinor() || t.Value < p.Y.Min || t.Value > p.Y.Max {
			continue
		}
		y := c.Y(p.Y.Norm(t.Value))
		c.StrokeLine2(sty, c.Min.X, y, c.Max.X, y)
	}
}

// PNG renders the figure at WidthPx × HeightPx.
func (f *Figure) PNG() ([]byte, error) {
	b, err := marks.PNG(pageW, pageH, dpi, f.draw)
	if err != nil {
		return nil, fmt.Errorf("plots: render %s.png: %w", f.Name, err)
	}
	return b, nil
}

const margin = 34 // page margin in points

func (f *Figure) draw(dc draw.Canvas) error {
	left := dc.Min.X + margin
	right := dc.Max.X - margin
	width := right - left
	y := dc.Max.Y - 24

	// Title, wrapped to the page width.
	ts := marks.TextStyle(sizeTitle, Ink, true)
	ts.YAlign = text.YTop
	for _, ln := range wrapBalanced(ts, f.Title, width) {
		dc.FillText(ts, vg.Point{X: left, Y: y}, ln)
		y -= ts.Height(ln) + 6
	}
	if f.Warning != "" {
		ws := marks.TextStyle(sizeBanner, Alert, true)
		ws.YAlign = text.YTop
		for _, ln := range marks.Wrap(ws, f.Warning, width) {
			dc.FillText(ws, vg.Point{X: left, Y: y}, ln)
			y -= ws.Height(ln) + 4
		}
	}
	y -= 8

	// Legend row.
	if len(f.Legend) > 0 {
		ls := marks.TextStyle(sizeLegend, Ink, false)
		ls.YAlign = text.YCenter
		h := ls.Height("Ag")
		x := left
		cy := y - h/2
		for _, it := range f.Legend {
			w := drawSwatch(dc, it, x, cy, h)
			x += w + 8
			dc.FillText(ls, vg.Point{X: x, Y: cy}, it.Label)
			x += ls.Width(it.Label) + 28
			if x > right-120 {
				x = left
				cy -= h + 8
			}
		}
		y = cy - h/2 - 10
	}

	// Caption at the bottom.
	cs := marks.TextStyle(sizeCaption, Muted, false)
	cs.YAlign = text.YBottom
	lines := marks.Wrap(cs, f.Caption, width)
	yb := dc.Min.Y + 18
	for i := len(lines) - 1; i >= 0; i-- {
		dc.FillText(cs, vg.Point{X: left, Y: yb}, lines[i])
		yb += cs.Height(lines[i]) + 4
	}
	yb += 10

	if f.rows == 0 {
		return fmt.Errorf("plots: figure %s has no panels", f.Name)
	}
	area := draw.Canvas{Canvas: dc.Canvas, Rectangle: vg.Rectangle{
		Min: vg.Point{X: left - 6, Y: yb}, Max: vg.Point{X: right, Y: y}}}
	tiles := draw.Tiles{Rows: f.rows, Cols: f.cols, PadX: vg.Points(36), PadY: vg.Points(20)}
	cv := plot.Align(f.panels, tiles, area)
	for r := range f.rows {
		for c := range f.cols {
			if p := f.panels[r][c]; p != nil {
				p.Draw(cv[r][c])
			}
		}
	}
	return nil
}

// drawSwatch draws a legend swatch left-aligned at x, centred on cy, of
// height h; it returns the swatch width.
func drawSwatch(dc draw.Canvas, it LegendItem, x, cy, h vg.Length) vg.Length {
	w := vg.Points(30)
	switch it.Swatch {
	case SwatchBox:
		s := h * 0.8
		dc.FillPolygon(it.Color, []vg.Point{{X: x, Y: cy - s/2}, {X: x + s, Y: cy - s/2}, {X: x + s, Y: cy + s/2}, {X: x, Y: cy + s/2}})
		return s
	case SwatchLine:
		dc.StrokeLine2(draw.LineStyle{Color: it.Color, Width: vg.Points(4)}, x, cy, x+w, cy)
	case SwatchDash:
		dc.StrokeLine2(draw.LineStyle{Color: it.Color, Width: vg.Points(3),
			Dashes: []vg.Length{vg.Points(6), vg.Points(4)}}, x, cy, x+w, cy)
	case SwatchWhisker:
		sty := draw.LineStyle{Color: it.Color, Width: vg.Points(2.5)}
		dc.StrokeLine2(sty, x+w/2, cy-h/2, x+w/2, cy+h/2)
		dc.StrokeLine2(sty, x+w/2-7, cy-h/2, x+w/2+7, cy-h/2)
		dc.StrokeLine2(sty, x+w/2-7, cy+h/2, x+w/2+7, cy+h/2)
	case SwatchDot:
		var g draw.GlyphDrawer = draw.CircleGlyph{}
		if it.Glyph != nil {
			g = it.Glyph
		}
		dc.DrawGlyph(draw.GlyphStyle{Color: it.Color, Radius: vg.Points(7), Shape: g}, vg.Point{X: x + w/2, Y: cy})
	}
	return w
}

// wrapBalanced wraps s like wrap but evens out the line lengths: it uses
// the narrowest width that needs no more lines than width does.
func wrapBalanced(sty text.Style, s string, width vg.Length) []string {
	lines := marks.Wrap(sty, s, width)
	if len(lines) < 2 {
		return lines
	}
	lo, hi := width/4, width
	for range 20 {
		mid := (lo + hi) / 2
		if len(marks.Wrap(sty, s, mid)) > len(lines) {
			lo = mid
		} else {
			hi = mid
		}
	}
	return marks.Wrap(sty, s, hi)
}
