package plots

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/plots/marks"
)

var intervalCaption = "Bars and lines are posterior means; whiskers and bands are 90% credible intervals."

// split: per upper channel, direct and via-search as stacked bars, for the
// window and the whole period.
func (r *review) split() (*Figure, error) {
	fig := &Figure{
		Legend: []LegendItem{
			{"direct", Direct, SwatchBox, nil},
			{"via branded search", ViaSearch, SwatchBox, nil},
			{"90% interval of each part (in the bar) and of the total (beside it)", Ink, SwatchWhisker, nil},
		},
		Caption: r.windowCaption() + " " + intervalCaption + " Percentages: share of the total that runs through branded search.",
	}
	windows := []window.Window{r.w}
	if r.w.Kind != window.WholePeriod {
		windows = append(windows, r.whole)
	}
	var panels []*plot.Plot
	for _, w := range windows {
		p := newPanel(r.panelTitle(w))
		p.Y.Label.Text = "incremental " + r.outcome
		p.X.Tick.Marker = marks.CategoryTicks(channelNames(r.uppers()))
		p.X.Tick.Label = marks.TextStyle(sizeAxis, Ink, true)
		p.X.Tick.Label.XAlign = text.XCenter
		p.X.Tick.Label.YAlign = text.YTop
		p.Add(gridLines{})
		top := 0.0
		for i, ch := range r.uppers() {
			var es [4]fitfolder.Effect
			for j, path := range []string{fitfolder.PathDirect, fitfolder.PathViaSearch, fitfolder.PathTotal, fitfolder.PathMediatedShare} {
				e, err := r.effect(ch, path, w)
				if err != nil {
					return nil, err
				}
				es[j] = e
				fig.add(Series{Panel: w.Name, Name: ch + "/" + path, X: []float64{float64(i)},
					Y: []float64{e.Mean}, Lo: []float64{e.Q05}, Hi: []float64{e.Q95}})
			}
			d, v, t, s := es[0], es[1], es[2], es[3]
			x := float64(i)
			if !finite(d.Mean, v.Mean, t.Mean) {
				continue // undefined in this window (no spend): nothing to draw
			}
			const hw = 0.3
			p.Add(marks.Rect{X0: x - hw, X1: x + hw, Y0: 0, Y1: d.Mean, Fill: Direct})
			p.Add(marks.Rect{X0: x - hw, X1: x + hw, Y0: d.Mean, Y1: d.Mean + v.Mean, Fill: ViaSearch})
			thin := draw.LineStyle{Color: Ink, Width: vg.Points(2.2)}
			if finite(d.Q05, d.Q95) {
				p.Add(marks.Whisker{At: x - 0.19, Lo: d.Q05, Hi: d.Q95, Style: thin, Cap: vg.Points(12)})
			}
			if finite(v.Q05, v.Q95) {
				p.Add(marks.Whisker{At: x + 0.19, Lo: d.Mean + v.Q05, Hi: d.Mean + v.Q95, Style: thin, Cap: vg.Points(12)})
			}
			if finite(t.Q05, t.Q95) {
				p.Add(marks.Whisker{At: x + hw + 0.1, Lo: t.Q05, Hi: t.Q95,
					Style: draw.LineStyle{Color: Ink, Width: vg.Points(3.5)}, Cap: vg.Points(16)})
			}
			p.Add(marks.Rect{X0: x + hw + 0.06, X1: x + hw + 0.14, Y0: t.Mean, Y1: t.Mean, Edge: draw.LineStyle{Color: Ink, Width: vg.Points(3.5)}})
			// Share on the via-search segment, total above the bar.
			ls := marks.TextStyle(sizeLabel+1, Ink, true)
			ls.XAlign, ls.YAlign = text.XCenter, text.YCenter
			p.Add(marks.Label{X: x, Y: d.Mean + v.Mean/2, Text: Percent(s.Mean), Style: ls, Halo: true})
			ts := marks.TextStyle(sizeLabel, Ink, false)
			ts.XAlign, ts.YAlign = text.XCenter, text.YBottom
			hi := math.Max(nz(t.Q95), d.Mean+nz(v.Q95))
			p.Add(marks.Label{X: x + 0.1, Y: hi, DY: vg.Points(6), Text: "total " + Number(t.Mean), Style: ts})
			top = math.Max(top, hi)
		}
		p.X.Min, p.X.Max = -0.6, float64(len(r.uppers()))-0.4
		p.Y.Min = math.Min(0, p.Y.Min)
		p.Y.Max = top * 1.14
		panels = append(panels, p)
	}
	fig.grid(1, len(panels), panels...)

	// Title: the mediated share of each channel in the window.
	var parts []string
	for i, ch := range r.uppers() {
		s, _ := r.f.Effect(ch, fitfolder.PathMediatedShare, r.w.Name)
		if i == 0 {
			parts = append(parts, fmt.Sprintf("%s of %s's effect", Percent(s.Mean), Channel(ch)))
		} else {
			parts = append(parts, fmt.Sprintf("%s of %s's", Percent(s.Mean), Channel(ch)))
		}
	}
	fig.Title = fmt.Sprintf("%s, %s ran through branded search", windowPhrase(r.w), List(parts))
	return fig, nil
}
