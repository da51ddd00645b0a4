package plots

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/plots/marks"
)

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
