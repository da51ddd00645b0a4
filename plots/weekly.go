package plots

import (
	"fmt"
	"sort"
	"strings"
	"time"

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

// weekly: weekly direct and via-search contributions as small multiples,
// one row per channel and one column per path, each panel one line with
// its band (no band lies over another), the two panels of a row on one
// scale. The title's weekly figure is the mean weekly contribution in the
// window, carryover from earlier spend included; the caption gives the
// split chart's figure beside it (the effect of the window's own spend,
// its carryover after the window included, per week of the window), so the
// two definitions are both named.
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
		Caption: "Weekly contributions in " + r.outcome + ": what each week owes to the channel's spend in that week and before it (carryover). " +
			r.windowCaption() + " Lines are posterior means, bands 90% credible intervals.",
	}
	if r.w.Kind != window.WholePeriod {
		fig.Legend = append(fig.Legend, LegendItem{"review window " + r.w.Name, Shade, SwatchBox, nil})
	}
	paths := []string{fitfolder.PathDirect, fitfolder.PathViaSearch}
	var panels []*plot.Plot
	var parts, splitParts []string
	for k, ch := range chans {
		row := make([]*plot.Plot, len(paths))
		top := 0.0
		for j, path := range paths {
			ws := r.weeklyOf(ch, path)
			if len(ws) == 0 {
				continue
			}
			col := Direct
			if path == fitfolder.PathViaSearch {
				col = ViaSearch
			}
			p := newPanel("")
			r.timeAxis(p)
			p.X.Tick.Marker = yearTicks{}
			r.shadeWindow(p, k == 0)
			p.Add(gridLines{})
			s := Series{Panel: ch, Name: path}
			for _, w := range ws {
				s.X = append(s.X, marks.Day(w.Week))
				s.Y = append(s.Y, w.Mean)
				s.Lo = append(s.Lo, w.Q05)
				s.Hi = append(s.Hi, w.Q95)
				top = max(top, w.Q95)
			}
			fig.add(s)
			p.Add(marks.Band{X: s.X, Lo: s.Lo, Hi: s.Hi, Fill: marks.Tint(col, 0.25)})
			p.Add(marks.Line{X: s.X, Y: s.Y, Style: draw.LineStyle{Color: col, Width: vg.Points(2.4)}})
			if path == fitfolder.PathViaSearch {
				sum, n := 0.0, 0
				for _, w := range ws {
					if r.w.Contains(w.Week) {
						sum += w.Mean
						n++
					}
				}
				if n > 0 {
					parts = append(parts, fmt.Sprintf("%s from %s", About(sum/float64(n)), r.lab.Channel(ch)))
					if e, ok := r.f.Effect(ch, path, r.w.Name); ok {
						splitParts = append(splitParts, fmt.Sprintf("%s %s / %d = %s a week", r.lab.Channel(ch), Number(e.Mean), n, About(e.Mean/float64(n))))
					}
				}
			}
			// Channel and path inside the panel, top left.
			ns := marks.TextStyle(sizeAxis, Ink, true)
			ns.XAlign, ns.YAlign = text.XLeft, text.YTop
			name := "direct"
			if path == fitfolder.PathViaSearch {
				name = "via branded search"
			}
			p.Add(marks.Label{X: p.X.Min, Top: true, DX: vg.Points(8), DY: -vg.Points(4), Text: Capital(r.lab.Channel(ch)) + ", " + name, Style: ns, Halo: true})
			p.Y.Min = 0
			if k < len(chans)-1 {
				p.X.Tick.Label.Color = nil
				p.X.Tick.Marker = blankTicks{yearTicks{}}
			}
			row[j] = p
		}
		// one scale per row, with room for the panel's name
		for _, p := range row {
			if p != nil {
				p.Y.Max = top * 1.15
			}
		}
		panels = append(panels, row...)
	}
	fig.grid(len(chans), len(paths), panels...)
	if len(parts) > 0 {
		// "In 2025Q3, branded search carried about 31 conversions a week
		// from video and 14 from audio, carryover from earlier spend
		// included"
		first, rest, _ := strings.Cut(parts[0], " from ")
		tail := ""
		if len(parts) > 1 {
			tail = " and " + List(parts[1:])
		}
		fig.Title = fmt.Sprintf("%s, branded search carried about %s %s a week from %s%s (spend to date)",
			r.reviewPhrase(), first, r.outcome, rest, tail)
	}
	if len(splitParts) > 0 {
		fig.Caption += fmt.Sprintf(" The split chart counts instead the effect of the %s spend itself, its carryover after the window included: via search %s.",
			r.w.Short(), List(splitParts))
	}
	if len(parts) == 0 {
		fig.Title = "Weekly contributions of each channel"
	}
	return fig, nil
}

// yearTicks marks quarter starts and labels only the years ("2024"), for
// time axes of panels too narrow for month names.
type yearTicks struct{}

func (yearTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := marks.QuarterTicks{}.Ticks(lo, hi)
	for i := range ts {
		if d := marks.DayTime(ts[i].Value); d.Month() == time.January {
			ts[i].Label = d.Format("2006")
		} else {
			ts[i].Label = ""
		}
	}
	return ts
}
