package plots

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/plots/marks"
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
