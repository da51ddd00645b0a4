package plots

import (
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/plots/marks"
)

// split: per upper channel, direct and via-search as stacked bars, for the
// window and the whole period.
func (r *review) split() (*Figure, error) {
	fig := &Figure{
		Legend: []LegendItem{
			{"direct", Direct, SwatchBox, nil},
			{"via branded search", ViaSearch, SwatchBox, nil},
			{"90% interval of the total", Ink, SwatchWhisker, nil},
		},
		Caption: r.windowCaption() + " Each bar is the channel's total incremental " + r.outcome + " (posterior mean), split into its direct and " +
			"via-search parts; the whisker is the 90% credible interval of the total. On the via-search part: the share of the total " +
			"that runs through branded search, with its 90% interval. Effect of the window's spend, carryover after the window included.",
	}
	windows := []window.Window{r.w}
	if r.w.Kind != window.WholePeriod {
		windows = append(windows, r.whole)
	}
	var panels []*plot.Plot
	for _, w := range windows {
		p := newPanel(r.panelTitle(w))
		p.Y.Label.Text = "incremental " + r.outcome
		p.X.Tick.Marker = marks.CategoryTicks(r.lab.Channels(r.uppers()))
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
			// one interval per bar: the total's, beside it
			if finite(t.Q05, t.Q95) {
				p.Add(marks.Whisker{At: x + hw + 0.08, Lo: t.Q05, Hi: t.Q95,
					Style: draw.LineStyle{Color: Ink, Width: vg.Points(3)}, Cap: vg.Points(16)})
			}
			// The share via search with its interval on the via-search
			// segment, the total above the bar.
			ls := marks.TextStyle(sizeLabel, Ink, true)
			ls.XAlign, ls.YAlign = text.XCenter, text.YCenter
			share := Percent(s.Mean)
			if finite(s.Q05, s.Q95) {
				share += " (" + strings.TrimSuffix(Percent(s.Q05), "%") + "–" + Percent(s.Q95) + ")"
			}
			p.Add(marks.Label{X: x + 0, Y: d.Mean + v.Mean/2, Text: share, Style: ls, Halo: true})
			ts := marks.TextStyle(sizeLabel, Ink, false)
			ts.XAlign, ts.YAlign = text.XCenter, text.YBottom
			hi := math.Max(nz(t.Q95), d.Mean+v.Mean)
			p.Add(marks.Label{X: x + 0.08, Y: hi, DY: vg.Points(6), Text: "total " + Number(t.Mean), Style: ts})
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
			parts = append(parts, fmt.Sprintf("%s of %s's effect", Percent(s.Mean), r.lab.Channel(ch)))
		} else {
			parts = append(parts, fmt.Sprintf("%s of %s's", Percent(s.Mean), r.lab.Channel(ch)))
		}
	}
	fig.Title = fmt.Sprintf("%s, %s ran through branded search", r.reviewPhrase(), List(parts))
	return fig, nil
}
