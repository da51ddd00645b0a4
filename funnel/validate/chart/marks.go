package chart

import (
	"image/color"
	"math"
	"strconv"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The marks below implement plot.Plotter and plot.DataRanger; an axis a
// mark does not constrain gets (+Inf, -Inf).

var inf = math.Inf(1)

type rect struct {
	x0, x1, y0, y1 float64
	fill           color.Color
}

func (r rect) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	pts := []vg.Point{{X: tx(r.x0), Y: ty(r.y0)}, {X: tx(r.x1), Y: ty(r.y0)}, {X: tx(r.x1), Y: ty(r.y1)}, {X: tx(r.x0), Y: ty(r.y1)}}
	c.FillPolygon(r.fill, c.ClipPolygonXY(pts))
}

func (r rect) DataRange() (xmin, xmax, ymin, ymax float64) {
	return math.Min(r.x0, r.x1), math.Max(r.x0, r.x1), math.Min(r.y0, r.y1), math.Max(r.y0, r.y1)
}

type dot struct {
	x, y  float64
	style draw.GlyphStyle
}

func (d dot) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	c.DrawGlyph(d.style, vg.Point{X: tx(d.x), Y: ty(d.y)})
}

func (d dot) DataRange() (xmin, xmax, ymin, ymax float64) { return d.x, d.x, d.y, d.y }

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
	xmin, xmax, ymin, ymax = inf, -inf, inf, -inf
	for i := range b.x {
		xmin, xmax = math.Min(xmin, b.x[i]), math.Max(xmax, b.x[i])
		ymin, ymax = math.Min(ymin, b.lo[i]), math.Max(ymax, b.hi[i])
	}
	return
}

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
	if len(pts) == 1 {
		c.DrawGlyph(draw.GlyphStyle{Color: l.style.Color, Radius: l.style.Width * 1.5, Shape: draw.CircleGlyph{}}, pts[0])
		return
	}
	c.StrokeLines(l.style, c.ClipLinesXY(pts)...)
}

func (l line) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, xmax, ymin, ymax = inf, -inf, inf, -inf
	for i := range l.x {
		xmin, xmax = math.Min(xmin, l.x[i]), math.Max(xmax, l.x[i])
		ymin, ymax = math.Min(ymin, l.y[i]), math.Max(ymax, l.y[i])
	}
	return
}

// rule is a vertical reference line across the data area at x = v: a
// nominal level on the bar panels, an origin on the time panel.
type rule struct {
	v     float64
	style draw.LineStyle
}

func (r rule) Plot(c draw.Canvas, p *plot.Plot) {
	tx, _ := p.Transforms(&c)
	x := tx(r.v)
	if c.ContainsX(x) {
		c.StrokeLine2(r.style, x, c.Min.Y, x, c.Max.Y)
	}
}

func (r rule) DataRange() (xmin, xmax, ymin, ymax float64) { return r.v, r.v, inf, -inf }

// segment is a line between two data points.
type segment struct {
	x0, x1, y0, y1 float64
	style          draw.LineStyle
}

func (s segment) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	c.StrokeLine2(s.style, tx(s.x0), ty(s.y0), tx(s.x1), ty(s.y1))
}

func (s segment) DataRange() (xmin, xmax, ymin, ymax float64) {
	return math.Min(s.x0, s.x1), math.Max(s.x0, s.x1), math.Min(s.y0, s.y1), math.Max(s.y0, s.y1)
}

// topLabel writes text centred at x just inside the top of the data area.
type topLabel struct {
	x     float64
	text  string
	style text.Style
}

func (l topLabel) Plot(c draw.Canvas, p *plot.Plot) {
	tx, _ := p.Transforms(&c)
	s := l.style
	s.XAlign, s.YAlign = text.XLeft, text.YTop
	c.FillText(s, vg.Point{X: tx(l.x) + vg.Points(5), Y: c.Max.Y - vg.Points(2)}, l.text)
}

func (l topLabel) DataRange() (xmin, xmax, ymin, ymax float64) { return l.x, l.x, inf, -inf }

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

// categoryTicks labels the integer positions 0..len(names)-1.
func categoryTicks(names []string) plot.ConstantTicks {
	ts := make([]plot.Tick, len(names))
	for i, n := range names {
		ts[i] = plot.Tick{Value: float64(i), Label: n}
	}
	return ts
}

// percentTicks marks 0%, 25%, ..., 100%.
type percentTicks struct{}

func (percentTicks) Ticks(lo, hi float64) []plot.Tick {
	var ts []plot.Tick
	for v := 0.0; v <= 1.0001; v += 0.25 {
		if v >= lo-1e-9 && v <= hi+1e-9 {
			ts = append(ts, plot.Tick{Value: v, Label: strconv.Itoa(int(math.Round(100*v))) + "%"})
		}
	}
	return ts
}

// numberTicks places about five round ticks with thousands separators.
type numberTicks struct{}

func (numberTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) {
		return []plot.Tick{{Value: lo, Label: format(lo, 1)}}
	}
	step := niceStep((hi - lo) / 5)
	var ts []plot.Tick
	for v := math.Ceil(lo/step-1e-9) * step; v <= hi+step*1e-9; v += step {
		if math.Abs(v) < step*1e-9 {
			v = 0
		}
		ts = append(ts, plot.Tick{Value: v, Label: format(v, step)})
	}
	return ts
}

func format(v, step float64) string {
	dec := 0
	if step < 1 {
		dec = int(math.Ceil(-math.Log10(step) - 1e-9))
		if frac := step * math.Pow10(dec); math.Abs(frac-math.Round(frac)) > 1e-6 {
			dec++
		}
	}
	s := strconv.FormatFloat(v, 'f', dec, 64)
	// thousands separators on the integer part
	neg := len(s) > 0 && s[0] == '-'
	if neg {
		s = s[1:]
	}
	intPart, frac := s, ""
	for i := range s {
		if s[i] == '.' {
			intPart, frac = s[:i], s[i:]
			break
		}
	}
	out := ""
	for i, r := range intPart {
		if i > 0 && (len(intPart)-i)%3 == 0 {
			out += ","
		}
		out += string(r)
	}
	if neg {
		out = "-" + out
	}
	return out + frac
}

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

// monthTicks marks the first of each month (labelled every other month
// when the range is long) on an axis of days since 1970-01-01.
type monthTicks struct{}

func (monthTicks) Ticks(lo, hi float64) []plot.Tick {
	t0 := time.Unix(int64(lo*86400), 0).UTC()
	t1 := time.Unix(int64(hi*86400), 0).UTC()
	var ts []plot.Tick
	m := time.Date(t0.Year(), t0.Month(), 1, 0, 0, 0, 0, time.UTC)
	months := int(t1.Sub(t0).Hours()/24/30) + 1
	every := 1
	for months/every > 6 {
		every++
	}
	k := 0
	for ; !m.After(t1); m = m.AddDate(0, 1, 0) {
		if m.Before(t0) {
			continue
		}
		lbl := ""
		if k%every == 0 {
			lbl = m.Format("Jan")
			if m.Month() == time.January || k == 0 {
				lbl = m.Format("Jan 2006")
			}
		}
		ts = append(ts, plot.Tick{Value: float64(m.Unix()) / 86400, Label: lbl})
		k++
	}
	return ts
}
