package plots

import (
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// This file holds the marks the charts are drawn with. Each implements
// plot.Plotter and plot.DataRanger; an axis a mark does not constrain
// reports (+Inf, -Inf) so that it leaves the range alone.

var inf = math.Inf(1)

// rect is a filled rectangle in data coordinates (a bar or a bar segment).
type rect struct {
	x0, x1, y0, y1 float64
	fill           color.Color
	edge           draw.LineStyle // zero width: no outline
}

func (r rect) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pts := []vg.Point{
		{X: tx(r.x0), Y: ty(r.y0)}, {X: tx(r.x1), Y: ty(r.y0)},
		{X: tx(r.x1), Y: ty(r.y1)}, {X: tx(r.x0), Y: ty(r.y1)},
	}
	if r.fill != nil {
		c.FillPolygon(r.fill, c.ClipPolygonXY(pts))
	}
	if r.edge.Width > 0 {
		closed := append(pts, pts[0])
		c.StrokeLines(r.edge, c.ClipLinesXY(closed)...)
	}
}

func (r rect) DataRange() (xmin, xmax, ymin, ymax float64) {
	return math.Min(r.x0, r.x1), math.Max(r.x0, r.x1), math.Min(r.y0, r.y1), math.Max(r.y0, r.y1)
}

// whisker is an interval drawn as a line with end caps: at position at on
// one axis, from lo to hi on the other (vertical unless horizontal).
type whisker struct {
	at, lo, hi float64
	horizontal bool
	style      draw.LineStyle
	cap        vg.Length // full width of each end cap
}

func (w whisker) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	half := w.cap / 2
	if w.horizontal {
		y := ty(w.at)
		x0, x1 := tx(w.lo), tx(w.hi)
		c.StrokeLine2(w.style, x0, y, x1, y)
		c.StrokeLine2(w.style, x0, y-half, x0, y+half)
		c.StrokeLine2(w.style, x1, y-half, x1, y+half)
		return
	}
	x := tx(w.at)
	y0, y1 := ty(w.lo), ty(w.hi)
	c.StrokeLine2(w.style, x, y0, x, y1)
	c.StrokeLine2(w.style, x-half, y0, x+half, y0)
	c.StrokeLine2(w.style, x-half, y1, x+half, y1)
}

func (w whisker) DataRange() (xmin, xmax, ymin, ymax float64) {
	if w.horizontal {
		return w.lo, w.hi, w.at, w.at
	}
	return w.at, w.at, w.lo, w.hi
}

// band fills the area between lo and hi over x (x increasing).
type band struct {
	x, lo, hi []float64
	fill      color.Color
}

func (b band) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pts := make([]vg.Point, 0, 2*len(b.x))
	for i := range b.x {
		pts = append(pts, vg.Point{X: tx(b.x[i]), Y: ty(b.hi[i])})
	}
	for i := len(b.x) - 1; i >= 0; i-- {
		pts = append(pts, vg.Point{X: tx(b.x[i]), Y: ty(b.lo[i])})
	}
	c.FillPolygon(b.fill, c.ClipPolygonXY(pts))
}

func (b band) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, ymin = inf, inf
	xmax, ymax = -inf, -inf
	for i := range b.x {
		xmin, xmax = math.Min(xmin, b.x[i]), math.Max(xmax, b.x[i])
		ymin, ymax = math.Min(ymin, b.lo[i]), math.Max(ymax, b.hi[i])
	}
	return
}

// line is a polyline through (x, y).
type line struct {
	x, y  []float64
	style draw.LineStyle
}

func (l line) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pts := make([]vg.Point, len(l.x))
	for i := range l.x {
		pts[i] = vg.Point{X: tx(l.x[i]), Y: ty(l.y[i])}
	}
	c.StrokeLines(l.style, c.ClipLinesXY(pts)...)
}

func (l line) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, ymin = inf, inf
	xmax, ymax = -inf, -inf
	for i := range l.x {
		xmin, xmax = math.Min(xmin, l.x[i]), math.Max(xmax, l.x[i])
		ymin, ymax = math.Min(ymin, l.y[i]), math.Max(ymax, l.y[i])
	}
	return
}

// dots draws one glyph at each (x, y).
type dots struct {
	x, y  []float64
	style draw.GlyphStyle
}

func (d dots) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	for i := range d.x {
		pt := vg.Point{X: tx(d.x[i]), Y: ty(d.y[i])}
		if c.Contains(pt) {
			c.DrawGlyph(d.style, pt)
		}
	}
}

func (d dots) DataRange() (xmin, xmax, ymin, ymax float64) {
	return line{x: d.x, y: d.y}.DataRange()
}

// GlyphBoxes keeps glyphs at the edge of the data range from being cut.
func (d dots) GlyphBoxes(p *plot.Plot) []plot.GlyphBox {
	bs := make([]plot.GlyphBox, len(d.x))
	for i := range d.x {
		bs[i].X = p.X.Norm(d.x[i])
		bs[i].Y = p.Y.Norm(d.y[i])
		r := d.style.Radius
		bs[i].Rectangle = vg.Rectangle{Min: vg.Point{X: -r, Y: -r}, Max: vg.Point{X: r, Y: r}}
	}
	return bs
}

// rule is a reference line across the whole data area at value v: a
// vertical line at x = v, or a horizontal one at y = v.
type rule struct {
	v        float64
	vertical bool
	style    draw.LineStyle
}

func (r rule) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	if r.vertical {
		x := tx(r.v)
		if c.ContainsX(x) {
			c.StrokeLine2(r.style, x, c.Min.Y, x, c.Max.Y)
		}
		return
	}
	y := ty(r.v)
	if c.ContainsY(y) {
		c.StrokeLine2(r.style, c.Min.X, y, c.Max.X, y)
	}
}

func (r rule) DataRange() (xmin, xmax, ymin, ymax float64) {
	if r.vertical {
		return r.v, r.v, inf, -inf
	}
	return inf, -inf, r.v, r.v
}

// span shades the data area between from and to on the x axis, full height.
type span struct {
	from, to float64
	fill     color.Color
}

func (s span) Plot(c draw.Canvas, p *plot.Plot) {
	tx, _ := p.Transforms(&c)
	x0, x1 := tx(s.from), tx(s.to)
	x0 = max(x0, c.Min.X)
	x1 = min(x1, c.Max.X)
	if x1 <= x0 {
		return
	}
	c.FillPolygon(s.fill, []vg.Point{{X: x0, Y: c.Min.Y}, {X: x1, Y: c.Min.Y}, {X: x1, Y: c.Max.Y}, {X: x0, Y: c.Max.Y}})
}

func (s span) DataRange() (xmin, xmax, ymin, ymax float64) {
	return inf, -inf, inf, -inf
}

// label is text at a data point, offset by (dx, dy). With top set, the
// label sits at the top edge of the data area at x (y is ignored).
type label struct {
	x, y   float64
	text   string
	style  text.Style
	dx, dy vg.Length
	top    bool
	// halo draws a white box behind the text.
	halo bool
	// inside moves a left-aligned label to the other side of its point
	// (right-aligned, offset mirrored) when it would run past the right
	// edge of the data area.
	inside bool
}

func (l label) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pt := vg.Point{X: tx(l.x) + l.dx, Y: ty(l.y) + l.dy}
	if l.top {
		pt.Y = c.Max.Y + l.dy
	}
	if l.inside && l.style.XAlign == text.XLeft && pt.X+l.style.Width(l.text) > c.Max.X {
		l.style.XAlign = text.XRight
		pt.X = tx(l.x) - l.dx
	}
	if l.halo {
		r := l.style.Rectangle(l.text)
		pad := vg.Points(3)
		box := []vg.Point{
			{X: pt.X + r.Min.X - pad, Y: pt.Y + r.Min.Y - pad}, {X: pt.X + r.Max.X + pad, Y: pt.Y + r.Min.Y - pad},
			{X: pt.X + r.Max.X + pad, Y: pt.Y + r.Max.Y + pad}, {X: pt.X + r.Min.X - pad, Y: pt.Y + r.Max.Y + pad},
		}
		c.FillPolygon(color.NRGBA{255, 255, 255, 225}, box)
	}
	c.FillText(l.style, pt, l.text)
}

func (l label) DataRange() (xmin, xmax, ymin, ymax float64) {
	if l.top {
		return l.x, l.x, inf, -inf
	}
	return l.x, l.x, l.y, l.y
}
