package plots

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/plots/marks"
)

// sensitivity: the via-search effect against rho, with the break-even rho.
func (r *review) sensitivity() (*Figure, error) {
	fig := &Figure{
		Legend: []LegendItem{
			{"via-search effect", ViaSearch, SwatchLine, nil},
			{"zero", Ink, SwatchLine, nil},
			{"rho where it reaches zero", Alert, SwatchDash, nil},
		},
		Caption: "rho = assumed correlation between the errors of the demand and outcome stages (an unmeasured common cause " +
			"of branded queries and " + r.outcome + "); rho = 0 is the main result. Whole period: " + r.weeksText(r.whole) +
			". Line: posterior mean; band: 90% credible interval.",
	}
	benches := ControlBenchmarks(r.f)
	if len(benches) > 0 {
		fig.Legend = append(fig.Legend, LegendItem{"rho that leaving out an observed control would cause", Muted, SwatchDash, nil})
		fig.Caption += " Dotted lines: the error correlation that leaving an observed control out of both stages would cause " +
			"(at the posterior means), a yardstick for how strong an unmeasured common cause would have to be."
	}
	var panels []*plot.Plot
	var crossing, steady [][2]string // channel and rho, channel and behaviour
	for _, ch := range r.uppers() {
		var rows []fitfolder.Sensitivity
		for _, s := range r.f.Sensitivity {
			if s.Channel == ch {
				rows = append(rows, s)
			}
		}
		if len(rows) < 2 {
			return nil, fmt.Errorf("sensitivity.csv has fewer than 2 rows for %s", ch)
		}
		sort.SliceStable(rows, func(i, j int) bool { return rows[i].Rho < rows[j].Rho })
		s := Series{Panel: ch, Name: "via_search"}
		allPos, allNeg := true, true
		for _, x := range rows {
			s.X, s.Y = append(s.X, x.Rho), append(s.Y, x.Mean)
			s.Lo, s.Hi = append(s.Lo, x.Q05), append(s.Hi, x.Q95)
			allPos = allPos && x.Mean > 0
			allNeg = allNeg && x.Mean < 0
		}
		fig.add(s)
		p := newPanel(Capital(r.lab.Channel(ch)))
		p.X.Label.Text = "error correlation (rho)"
		p.Y.Label.Text = "via-search " + r.outcome
		p.X.Tick.Marker = marks.NumberTicks{}
		p.Add(gridLines{})
		p.Add(marks.Band{X: s.X, Lo: s.Lo, Hi: s.Hi, Fill: marks.Tint(ViaSearch, 0.25)})
		p.Add(marks.Rule{At: 0, Style: draw.LineStyle{Color: Ink, Width: vg.Points(2)}})
		p.Add(marks.Rule{At: 0, Vertical: true, Style: draw.LineStyle{Color: Faint, Width: vg.Points(1.5), Dashes: []vg.Length{vg.Points(3), vg.Points(3)}}})
		p.Add(marks.Line{X: s.X, Y: s.Y, Style: draw.LineStyle{Color: ViaSearch, Width: vg.Points(4)}})
		ls := marks.TextStyle(sizeLabel, Alert, true)
		ls.YAlign = text.YTop
		be, _ := r.f.BreakevenRho(ch)
		if !math.IsNaN(be) {
			fig.add(Series{Panel: ch, Name: "breakeven", X: []float64{be}})
			p.Add(marks.Rule{At: be, Vertical: true, Style: draw.LineStyle{Color: Alert, Width: vg.Points(3),
				Dashes: []vg.Length{vg.Points(8), vg.Points(5)}}})
			ls.XAlign = text.XRight
			dx := -vg.Points(8)
			if be < 0 {
				ls.XAlign, dx = text.XLeft, vg.Points(8)
			}
			p.Add(marks.Label{X: be, Top: true, DX: dx, DY: -vg.Points(8), Text: "zero at rho = " + trimRho(be), Style: ls, Halo: true})
			crossing = append(crossing, [2]string{r.lab.Channel(ch), trimRho(be)})
		} else {
			word := "changes sign"
			switch {
			case allPos:
				word = "stays above zero"
			case allNeg:
				word = "stays below zero"
			}
			steady = append(steady, [2]string{r.lab.Channel(ch), word})
		}
		p.X.Min, p.X.Max = -0.95, 0.95
		lo, hi := 0.0, 0.0
		for i := range s.X {
			lo, hi = math.Min(lo, s.Lo[i]), math.Max(hi, s.Hi[i])
		}
		// round the range out to whole tick steps, so both ends of the
		// axis, the negative side included, carry a labelled tick
		step := marks.NiceStep((hi - lo) / 5)
		lo, hi = math.Floor(lo/step)*step, math.Ceil(hi/step)*step
		p.Y.Min, p.Y.Max = lo, hi+(hi-lo)*0.12
		for _, b := range benches {
			if b.Rho < -0.95 || b.Rho > 0.95 {
				continue
			}
			fig.add(Series{Panel: ch, Name: "benchmark/" + b.Control, X: []float64{b.Rho}})
			p.Add(marks.Rule{At: b.Rho, Vertical: true, Style: draw.LineStyle{Color: Muted, Width: vg.Points(2),
				Dashes: []vg.Length{vg.Points(2), vg.Points(4)}}})
			// at the foot of the line, on the side nearer rho = 0, where
			// the curve is far from the bottom of the panel
			bs := marks.TextStyle(sizeLabel, Muted, false)
			bs.XAlign, bs.YAlign = text.XRight, text.YBottom
			dx := -vg.Points(6)
			if b.Rho < 0 {
				bs.XAlign, dx = text.XLeft, vg.Points(6)
			}
			p.Add(marks.Label{X: b.Rho, Y: lo, DX: dx, DY: vg.Points(6), Text: "without " + Plain(b.Control) + ": " + trimRho(b.Rho), Style: bs, Halo: true})
		}
		panels = append(panels, p)
	}
	fig.grid(1, len(panels), panels...)
	fig.Title = sensitivityTitle(crossing, steady)
	return fig, nil
}

// sensitivityTitle states where each channel's via-search effect reaches
// zero: "The via-search effect would reach zero at rho = 0.45 for video;
// audio's stays above zero for every rho from -0.9 to 0.9".
func sensitivityTitle(crossing, steady [][2]string) string {
	var parts []string
	if len(crossing) > 0 {
		same := true
		var names, at []string
		for _, c := range crossing {
			names = append(names, c[0])
			at = append(at, c[1]+" for "+c[0])
			same = same && c[1] == crossing[0][1]
		}
		switch {
		case len(crossing) == 1:
			parts = append(parts, fmt.Sprintf("The via-search effect of %s would reach zero at rho = %s", names[0], crossing[0][1]))
		case same:
			parts = append(parts, fmt.Sprintf("The via-search effects of %s would reach zero at rho = %s", List(names), crossing[0][1]))
		default:
			parts = append(parts, "The via-search effect would reach zero at rho = "+List(at))
		}
	}
	for i, st := range steady {
		if len(crossing) == 0 && i == 0 {
			parts = append(parts, fmt.Sprintf("The via-search effect of %s %s for every rho from -0.9 to 0.9", st[0], st[1]))
			continue
		}
		parts = append(parts, fmt.Sprintf("%s's %s for every rho from -0.9 to 0.9", st[0], st[1]))
	}
	return strings.Join(parts, "; ")
}

func trimRho(v float64) string {
	s := fmt.Sprintf("%.2f", v)
	s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	if s == "-0" {
		s = "0"
	}
	return s
}
