package marks

import (
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

var inf = math.Inf(1)

var (
	_ plot.DataRanger = Rect{}
	_ plot.DataRanger = Whisker{}
	_ plot.DataRanger = Band{}
	_ plot.DataRanger = Line{}
	_ plot.DataRanger = Dots{}
	_ plot.GlyphBoxer = Dots{}
	_ plot.DataRanger = Rule{}
	_ plot.DataRanger = Span{}
	_ plot.DataRanger = Segment{}
	_ plot.DataRanger = Label{}

	_ plot.Plotter = Rect{}
	_ plot.Plotter = Whisker{}
	_ plot.Plotter = Band{}
	_ plot.Plotter = Line{}
	_ plot.Plotter = Dots{}
	_ plot.Plotter = Rule{}
	_ plot.Plotter = Span{}
	_ plot.Plotter = Segment{}
	_ plot.Plotter = Label{}
)

// Rect is a filled rectangle in data coordinates, from (X0, Y0) to
// (X1, Y1) in any order: a bar or a bar segment.
type Rect struct {
	X0, X1, Y0, Y1 float64
	// Fill is the fill colour; nil draws no fill.
	Fill color.Color
	// Edge is the outline; a zero Width draws no outline.
	Edge draw.LineStyle
}

// Plot draws the rectangle, clipped to the data area.
func (r Rect) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pts := []vg.Point{
		{X: tx(r.X0), Y: ty(r.Y0)}, {X: tx(r.X1), Y: ty(r.Y0)},
		{X: tx(r.X1), Y: ty(r.Y1)}, {X: tx(r.X0), Y: ty(r.Y1)},
	}
	if r.Fill != nil {
		c.FillPolygon(r.Fill, c.ClipPolygonXY(pts))
	}
	if r.Edge.Width > 0 {
		closed := append(pts, pts[0])
		c.StrokeLines(r.Edge, c.ClipLinesXY(closed)...)
	}
}

// DataRange returns the rectangle's corners.
func (r Rect) DataRange() (xmin, xmax, ymin, ymax float64) {
	return math.Min(r.X0, r.X1), math.Max(r.X0, r.X1), math.Min(r.Y0, r.Y1), math.Max(r.Y0, r.Y1)
}

// Whisker is an interval drawn as a line with end caps: at position At on
// one axis, from Lo to Hi on the other. It is vertical (At on x) unless
// Horizontal is set (At on y).
type Whisker struct {
	At, Lo, Hi float64
	Horizontal bool
	Style      draw.LineStyle
	// Cap is the full width of each end cap.
	Cap vg.Length
}

// Plot draws the interval line and its two caps, unclipped.
func (w Whisker) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	half := w.Cap / 2
	if w.Horizontal {
		y := ty(w.At)
		x0, x1 := tx(w.Lo), tx(w.Hi)
		c.StrokeLine2(w.Style, x0, y, x1, y)
		c.StrokeLine2(w.Style, x0, y-half, x0, y+half)
		c.StrokeLine2(w.Style, x1, y-half, x1, y+half)
		return
	}
	x := tx(w.At)
	y0, y1 := ty(w.Lo), ty(w.Hi)
	c.StrokeLine2(w.Style, x, y0, x, y1)
	c.StrokeLine2(w.Style, x-half, y0, x+half, y0)
	c.StrokeLine2(w.Style, x-half, y1, x+half, y1)
}

// DataRange returns At on one axis and Lo..Hi on the other.
func (w Whisker) DataRange() (xmin, xmax, ymin, ymax float64) {
	if w.Horizontal {
		return w.Lo, w.Hi, w.At, w.At
	}
	return w.At, w.At, w.Lo, w.Hi
}

// Band fills the area between Lo and Hi over X (X increasing; the three
// slices have one length): an interval over time or over spend.
type Band struct {
	X, Lo, Hi []float64
	Fill      color.Color
}

// Plot fills the band, clipped to the data area.
func (b Band) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pts := make([]vg.Point, 0, 2*len(b.X))
	for i := range b.X {
		pts = append(pts, vg.Point{X: tx(b.X[i]), Y: ty(b.Hi[i])})
	}
	for i := len(b.X) - 1; i >= 0; i-- {
		pts = append(pts, vg.Point{X: tx(b.X[i]), Y: ty(b.Lo[i])})
	}
	c.FillPolygon(b.Fill, c.ClipPolygonXY(pts))
}

// DataRange returns the range of X and the range from the least Lo to the
// greatest Hi.
func (b Band) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, ymin = inf, inf
	xmax, ymax = -inf, -inf
	for i := range b.X {
		xmin, xmax = math.Min(xmin, b.X[i]), math.Max(xmax, b.X[i])
		ymin, ymax = math.Min(ymin, b.Lo[i]), math.Max(ymax, b.Hi[i])
	}
	return
}

// Line is a polyline through (X[i], Y[i]).
type Line struct {
	X, Y  []float64
	Style draw.LineStyle
	// DotSingle draws a line of one point as a filled circle of radius
	// 1.5 × Style.Width in Style.Color, unclipped, so that it stays
	// visible; when it is false such a line is stroked like any other.
	DotSingle bool
}

// Plot strokes the line, clipped to the data area.
func (l Line) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pts := make([]vg.Point, len(l.X))
	for i := range l.X {
		pts[i] = vg.Point{X: tx(l.X[i]), Y: ty(l.Y[i])}
	}
	if l.DotSingle && len(pts) == 1 {
		c.DrawGlyph(draw.GlyphStyle{Color: l.Style.Color, Radius: l.Style.Width * 1.5, Shape: draw.CircleGlyph{}}, pts[0])
		return
	}
	c.StrokeLines(l.Style, c.ClipLinesXY(pts)...)
}

// DataRange returns the ranges of X and Y.
func (l Line) DataRange() (xmin, xmax, ymin, ymax float64) {
	return xyRange(l.X, l.Y)
}

func xyRange(x, y []float64) (xmin, xmax, ymin, ymax float64) {
	xmin, ymin = inf, inf
	xmax, ymax = -inf, -inf
	for i := range x {
		xmin, xmax = math.Min(xmin, x[i]), math.Max(xmax, x[i])
		ymin, ymax = math.Min(ymin, y[i]), math.Max(ymax, y[i])
	}
	return
}

// Dots draws one glyph at each (X[i], Y[i]).
type Dots struct {
	X, Y  []float64
	Style draw.GlyphStyle
	// Overflow lets the glyphs spill over the edge of the data area: every
	// glyph is drawn, even one whose centre lies outside, and GlyphBoxes
	// reports none, so the plot does not shrink its data area to make room.
	// When it is false, glyphs centred outside the data area are left out
	// and the data area is inset so that glyphs at its edge are whole.
	Overflow bool
}

// Plot draws the glyphs.
func (d Dots) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	for i := range d.X {
		pt := vg.Point{X: tx(d.X[i]), Y: ty(d.Y[i])}
		if d.Overflow || c.Contains(pt) {
			c.DrawGlyph(d.Style, pt)
		}
	}
}

// DataRange returns the ranges of X and Y.
func (d Dots) DataRange() (xmin, xmax, ymin, ymax float64) {
	return xyRange(d.X, d.Y)
}

// GlyphBoxes returns a box of the glyph radius around each point, which
// keeps glyphs at the edge of the data range from being cut; with
// Overflow set it returns nil.
func (d Dots) GlyphBoxes(p *plot.Plot) []plot.GlyphBox {
	if d.Overflow {
		return nil
	}
	bs := make([]plot.GlyphBox, len(d.X))
	for i := range d.X {
		bs[i].X = p.X.Norm(d.X[i])
		bs[i].Y = p.Y.Norm(d.Y[i])
		r := d.Style.Radius
		bs[i].Rectangle = vg.Rectangle{Min: vg.Point{X: -r, Y: -r}, Max: vg.Point{X: r, Y: r}}
	}
	return bs
}

// Rule is a reference line across the whole data area at value At: a
// horizontal line at y = At, or a vertical one at x = At when Vertical is
// set. A rule outside the data area is not drawn.
type Rule struct {
	At       float64
	Vertical bool
	Style    draw.LineStyle
}

// Plot draws the rule.
func (r Rule) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	if r.Vertical {
		x := tx(r.At)
		if c.ContainsX(x) {
			c.StrokeLine2(r.Style, x, c.Min.Y, x, c.Max.Y)
		}
		return
	}
	y := ty(r.At)
	if c.ContainsY(y) {
		c.StrokeLine2(r.Style, c.Min.X, y, c.Max.X, y)
	}
}

// DataRange returns At on the rule's own axis and leaves the other alone.
func (r Rule) DataRange() (xmin, xmax, ymin, ymax float64) {
	if r.Vertical {
		return r.At, r.At, inf, -inf
	}
	return inf, -inf, r.At, r.At
}

// Span shades the data area between From and To on the x axis, full
// height: a window of time.
type Span struct {
	From, To float64
	Fill     color.Color
}

// Plot fills the part of the span inside the data area.
func (s Span) Plot(c draw.Canvas, p *plot.Plot) {
	tx, _ := p.Transforms(&c)
	x0, x1 := tx(s.From), tx(s.To)
	x0 = max(x0, c.Min.X)
	x1 = min(x1, c.Max.X)
	if x1 <= x0 {
		return
	}
	c.FillPolygon(s.Fill, []vg.Point{{X: x0, Y: c.Min.Y}, {X: x1, Y: c.Min.Y}, {X: x1, Y: c.Max.Y}, {X: x0, Y: c.Max.Y}})
}

// DataRange leaves both axes alone: a span never widens the plot.
func (s Span) DataRange() (xmin, xmax, ymin, ymax float64) {
	return inf, -inf, inf, -inf
}

// Segment is a straight line from (X0, Y0) to (X1, Y1), unclipped: a tick
// on a bar's row.
type Segment struct {
	X0, X1, Y0, Y1 float64
	Style          draw.LineStyle
}

// Plot strokes the segment.
func (s Segment) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	c.StrokeLine2(s.Style, tx(s.X0), ty(s.Y0), tx(s.X1), ty(s.Y1))
}

// DataRange returns the segment's end points.
func (s Segment) DataRange() (xmin, xmax, ymin, ymax float64) {
	return math.Min(s.X0, s.X1), math.Max(s.X0, s.X1), math.Min(s.Y0, s.Y1), math.Max(s.Y0, s.Y1)
}

// Label is Text written at the data point (X, Y), aligned by Style and
// moved by (DX, DY).
type Label struct {
	X, Y   float64
	Text   string
	Style  text.Style
	DX, DY vg.Length
	// Top puts the label at the top edge of the data area (plus DY) at X;
	// Y is then ignored and does not widen the y range.
	Top bool
	// Halo draws a white, slightly transparent box 3 pt larger than the
	// text behind it.
	Halo bool
	// Inside moves a left-aligned label to the other side of its point
	// (right-aligned, DX mirrored) when it would run past the right edge
	// of the data area.
	Inside bool
}

// Plot writes the label, unclipped.
func (l Label) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pt := vg.Point{X: tx(l.X) + l.DX, Y: ty(l.Y) + l.DY}
	if l.Top {
		pt.Y = c.Max.Y + l.DY
	}
	if l.Inside && l.Style.XAlign == text.XLeft && pt.X+l.Style.Width(l.Text) > c.Max.X {
		l.Style.XAlign = text.XRight
		pt.X = tx(l.X) - l.DX
	}
	if l.Halo {
		r := l.Style.Rectangle(l.Text)
		pad := vg.Points(3)
		box := []vg.Point{
			{X: pt.X + r.Min.X - pad, Y: pt.Y + r.Min.Y - pad}, {X: pt.X + r.Max.X + pad, Y: pt.Y + r.Min.Y - pad},
			{X: pt.X + r.Max.X + pad, Y: pt.Y + r.Max.Y + pad}, {X: pt.X + r.Min.X - pad, Y: pt.Y + r.Max.Y + pad},
		}
		c.FillPolygon(color.NRGBA{255, 255, 255, 225}, box)
	}
	c.FillText(l.Style, pt, l.Text)
}

// DataRange returns the label's point (only X when Top is set).
func (l Label) DataRange() (xmin, xmax, ymin, ymax float64) {
	if l.Top {
		return l.X, l.X, inf, -inf
	}
	return l.X, l.X, l.Y, l.Y
}
