package plots

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/plots/marks"
)

// borrowed: per paid-search channel, two panels. Left: the apparent and
// controlled incremental outcome over the whole period, each with its
// interval, and the refit without queries as a faint cross-check; the bars
// are not stacked, because the borrowed share is a per-draw ratio whose mean
// is not the ratio of the bars' means. Right: the borrowed share itself,
// (apparent - controlled) / apparent per draw, its mean and 90% interval
// on a 0-100% scale, the one figure the title, the label and the tables
// give.
func (r *review) borrowed() (*Figure, error) {
	search := r.f.Run.Spec.Search
	fig := &Figure{
		Legend: []LegendItem{
			{"apparent (model without queries)", ViaSearch, SwatchBox, nil},
			{"controlled (own effect)", Direct, SwatchBox, nil},
			{"refit without queries", Faint, SwatchBox, nil},
			{"90% interval", Ink, SwatchWhisker, nil},
		},
		Caption: "Whole period: " + r.weeksText(r.whole) + ". Bars are posterior means, whiskers 90% credible intervals. " +
			"Borrowed share: per posterior draw, (apparent - controlled) / apparent (by controlled where apparent is smaller), the part of paid search's apparent " +
			"return that is demand the upper funnel created; its mean and 90% interval.",
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
		name := Capital(r.lab.PaidSearch([]string{ch}))
		p := newPanel(name + ", whole period")
		p.X.Label.Text = "incremental " + r.outcome + " over the whole period"
		p.Y.Tick.Marker = marks.CategoryTicks(cats)
		p.Y.Tick.Label = marks.TextStyle(sizeAxis, Ink, true)
		p.Y.Tick.Label.XAlign, p.Y.Tick.Label.YAlign = text.XRight, text.YCenter
		p.Add(gridLines{vertical: true})
		const hh = 0.3
		p.Add(marks.Rect{X0: 0, X1: naive.Mean, Y0: -hh * 0.8, Y1: hh * 0.8, Fill: marks.Tint(Faint, 0.45)})
		p.Add(marks.Whisker{At: 0, Lo: naive.Q05, Hi: naive.Q95, Horizontal: true,
			Style: draw.LineStyle{Color: Faint, Width: vg.Points(2.5)}, Cap: vg.Points(14)})
		for i, b := range []struct {
			v    fitfolder.Borrowed
			fill color.Color
		}{{ctrl, Direct}, {app, ViaSearch}} {
			y := float64(i + 1)
			p.Add(marks.Rect{X0: 0, X1: b.v.Mean, Y0: y - hh, Y1: y + hh, Fill: b.fill})
			p.Add(marks.Whisker{At: y, Lo: b.v.Q05, Hi: b.v.Q95, Horizontal: true,
				Style: draw.LineStyle{Color: Ink, Width: vg.Points(3)}, Cap: vg.Points(16)})
		}
		vl := marks.TextStyle(sizeLabel, Ink, false)
		vl.XAlign, vl.YAlign = text.XLeft, text.YCenter
		for i, b := range []fitfolder.Borrowed{naive, ctrl, app} {
			p.Add(marks.Label{X: b.Q95, Y: float64(i), DX: vg.Points(12), Text: Number(b.Mean), Style: vl})
		}
		p.Y.Min, p.Y.Max = -0.6, 2.6
		p.X.Min = 0
		p.X.Max = math.Max(math.Max(app.Q95, naive.Q95), ctrl.Q95) * 1.18

		q := newPanel("Share of the apparent return that is borrowed")
		q.X.Label.Text = "borrowed share (per posterior draw)"
		q.X.Tick.Marker = percentTicks{}
		q.Y.Tick.Marker = marks.CategoryTicks([]string{""})
		q.Add(gridLines{vertical: true})
		q.Add(marks.Rect{X0: 0, X1: 1, Y0: -hh, Y1: hh, Fill: marks.Tint(Faint, 0.3)})
		q.Add(marks.Rect{X0: 0, X1: share.Mean, Y0: -hh, Y1: hh, Fill: ViaSearch})
		q.Add(marks.Whisker{At: 0, Lo: share.Q05, Hi: share.Q95, Horizontal: true,
			Style: draw.LineStyle{Color: Ink, Width: vg.Points(3)}, Cap: vg.Points(16)})
		bl := marks.TextStyle(sizeLabel+1, Ink, true)
		bl.XAlign, bl.YAlign = text.XCenter, text.YBottom
		q.Add(marks.Label{X: 0.5, Y: hh, DY: vg.Points(10),
			Text: fmt.Sprintf("%s borrowed (90%%: %s–%s)", Percent(share.Mean), Percent(share.Q05), Percent(share.Q95)), Style: bl})
		q.X.Min, q.X.Max = 0, 1
		q.Y.Min, q.Y.Max = -1, 1.2
		panels = append(panels, p, q)
		titleParts = append(titleParts, fmt.Sprintf("%s for %s", Percent(share.Mean), r.lab.Channel(ch)))
	}
	if len(panels) == 0 {
		return nil, fmt.Errorf("spec.json names no paid-search channel")
	}
	fig.grid(len(search), 2, panels...)
	up := List(r.lab.Channels(r.uppers()))
	if len(search) == 1 {
		s, _ := r.f.BorrowedMeasure(search[0], "borrowed_share")
		fig.Title = fmt.Sprintf("%s of paid search's apparent return is demand borrowed from %s", Percent(s.Mean), up)
	} else {
		fig.Title = fmt.Sprintf("Of paid search's apparent return, demand borrowed from %s is %s", up, List(titleParts))
	}
	return fig, nil
}

// percentTicks labels a 0..1 axis in steps of 25%.
type percentTicks struct{}

// Ticks implements plot.Ticker.
func (percentTicks) Ticks(min, max float64) []plot.Tick {
	var ts []plot.Tick
	for v := 0.0; v <= 1.0001; v += 0.25 {
		ts = append(ts, plot.Tick{Value: v, Label: fmt.Sprintf("%.0f%%", 100*v)})
	}
	return ts
}
