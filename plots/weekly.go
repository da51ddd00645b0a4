package plots

import (
	"fmt"
	"sort"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/plots/marks"
)

// weeklyOf returns weekly.csv rows of channel and path in file order.
func (r *review) weeklyOf(ch, path string) []fitfolder.Weekly {
	var ws []fitfolder.Weekly
	for _, w := range r.f.Weekly {
		if w.Channel == ch && w.Path == path {
			ws = append(ws, w)
		}
	}
	sort.SliceStable(ws, func(i, j int) bool { return ws[i].Week.Before(ws[j].Week) })
	return ws
}

// weekly: weekly direct and via-search contributions per channel.
func (r *review) weekly() (*Figure, error) {
	var chans []string
	for _, ch := range append(append([]string{}, r.uppers()...), r.f.Run.Spec.Search...) {
		if len(r.weeklyOf(ch, fitfolder.PathDirect))+len(r.weeklyOf(ch, fitfolder.PathViaSearch)) > 0 {
			chans = append(chans, ch)
		}
	}
	if len(chans) == 0 {
		return nil, fmt.Errorf("weekly.csv has no rows")
	}
	fig := &Figure{
		Legend: []LegendItem{
			{"direct", Direct, SwatchLine, nil},
			{"via branded search", ViaSearch, SwatchLine, nil},
		},
		Caption: "Weekly contributions in " + r.outcome + ". " + r.windowCaption() + " Lines are posterior means, bands 90% credible intervals.",
	}
	if r.w.Kind != window.WholePeriod {
		fig.Legend = append(fig.Legend, LegendItem{"review window " + r.w.Name, Shade, SwatchBox, nil})
	}
	var panels []*plot.Plot
	var parts []string
	for k, ch := range chans {
		p := newPanel("")
		r.timeAxis(p)
		r.shadeWindow(p, k == 0)
		p.Add(gridLines{})
		for _, path := range []string{fitfolder.PathDirect, fitfolder.PathViaSearch} {
			ws := r.weeklyOf(ch, path)
			if len(ws) == 0 {
				continue
			}
			col := Direct
			if path == fitfolder.PathViaSearch {
				col = ViaSearch
			}
			s := Series{Panel: ch, Name: path}
			for _, w := range ws {
				s.X = append(s.X, marks.Day(w.Week))
				s.Y = append(s.Y, w.Mean)
				s.Lo = append(s.Lo, w.Q05)
				s.Hi = append(s.Hi, w.Q95)
			}
			fig.add(s)
			p.Add(marks.Band{X: s.X, Lo: s.Lo, Hi: s.Hi, Fill: marks.Tint(col, 0.2)})
			p.Add(marks.Line{X: s.X, Y: s.Y, Style: draw.LineStyle{Color: col, Width: vg.Points(2.6)}})
			if path == fitfolder.PathViaSearch {
				sum, n := 0.0, 0
				for _, w := range ws {
					if r.w.Contains(w.Week) {
						sum += w.Mean
						n++
					}
				}
				if n > 0 {
					parts = append(parts, fmt.Sprintf("%s from %s", About(sum/float64(n)), Channel(ch)))
				}
			}
		}
		// Channel name inside the panel, top left.
		ns := marks.TextStyle(sizePanel-1, Ink, true)
		ns.XAlign, ns.YAlign = text.XLeft, text.YTop
		p.Add(marks.Label{X: p.X.Min, Top: true, DX: vg.Points(8), DY: -vg.Points(4), Text: Capital(Channel(ch)) + ": " + r.outcome + " per week", Style: ns, Halo: true})
		p.Y.Min = 0
		if k < len(chans)-1 {
			p.X.Tick.Label.Color = nil
			p.X.Tick.Marker = blankTicks{marks.QuarterTicks{}}
		}
		panels = append(panels, p)
	}
	fig.grid(len(panels), 1, panels...)
	if len(parts) > 0 {
		// "In 2025Q3, branded search carried about 31 conversions a week
		// from video and 14 from audio"
		first, rest, _ := strings.Cut(parts[0], " from ")
		tail := ""
		if len(parts) > 1 {
			tail = " and " + List(parts[1:])
		}
		fig.Title = fmt.Sprintf("%s, branded search carried about %s %s a week from %s%s",
			windowPhrase(r.w), first, r.outcome, rest, tail)
	}
	if len(parts) == 0 {
		fig.Title = "Weekly contributions of each channel"
	}
	return fig, nil
}
