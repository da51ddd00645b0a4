package plots

import (
	"fmt"
	"math"
	"time"

	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/plots/marks"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Names lists the charts Build makes, in the order the report shows them;
// each is written as NAME.png.
var Names = []string{"split", "borrowed", "curves", "weekly", "fit", "sensitivity", "diagnostics"}

// builders maps each chart name to its function.
var builders = map[string]func(*review) (*Figure, error){
	"split":       (*review).split,
	"borrowed":    (*review).borrowed,
	"curves":      (*review).curves,
	"weekly":      (*review).weekly,
	"fit":         (*review).fit,
	"sensitivity": (*review).sensitivity,
	"diagnostics": (*review).diagnostics,
}

// review is what every chart needs: the fit, the window under review and
// the whole period.
type review struct {
	f       *fitfolder.Fit
	w       window.Window
	whole   window.Window
	outcome string // plain name of the outcome ("conversions")
}

func newReview(f *fitfolder.Fit, window string) (*review, error) {
	w, err := f.Window(window)
	if err != nil {
		return nil, err
	}
	return &review{f: f, w: w, whole: f.Whole(), outcome: Plain(f.Run.Spec.Outcome)}, nil
}

// Build returns every chart of Names for the window (see fitfolder.Fit.Window:
// empty means the last full quarter). The error is a *fitfolder.WindowError
// when the window is not in effects.csv.
func Build(f *fitfolder.Fit, window string) ([]*Figure, error) {
	r, err := newReview(f, window)
	if err != nil {
		return nil, err
	}
	figs := make([]*Figure, 0, len(Names))
	for _, n := range Names {
		fig, err := builders[n](r)
		if err != nil {
			return nil, fmt.Errorf("chart %s: %w", n, err)
		}
		fig.Name = n
		fig.Warning = warning(f, n)
		figs = append(figs, fig)
	}
	return figs, nil
}

// Chart returns the one chart called name (one of Names) for the window.
func Chart(f *fitfolder.Fit, window, name string) (*Figure, error) {
	b, ok := builders[name]
	if !ok {
		return nil, fmt.Errorf("plots: no chart called %q", name)
	}
	r, err := newReview(f, window)
	if err != nil {
		return nil, err
	}
	fig, err := b(r)
	if err != nil {
		return nil, fmt.Errorf("chart %s: %w", name, err)
	}
	fig.Name = name
	fig.Warning = warning(f, name)
	return fig, nil
}

// warning is the red line under the title of every chart of a fit that is
// not trustworthy.
func warning(f *fitfolder.Fit, name string) string {
	switch {
	case f.Verdict.Trustworthy:
		return ""
	case name == "diagnostics":
		return "This fit failed its checks: do not base decisions on it yet."
	}
	return "This fit failed its checks (see diagnostics): do not base decisions on it yet."
}

// weeksText describes the weeks of the data in w: "13 weeks starting
// 7 Jul – 29 Sep 2025".
func (r *review) weeksText(w window.Window) string {
	var first, last time.Time
	n := 0
	for _, t := range r.f.Data.Weeks {
		if w.Contains(t) {
			if n == 0 {
				first = t
			}
			last = t
			n++
		}
	}
	if n == 0 {
		return "no weeks of data"
	}
	if n == 1 {
		return "1 week starting " + window.Day(first)
	}
	return fmt.Sprintf("%d weeks starting %s – %s", n, window.Day(first), window.Day(last))
}

// windowCaption names the window under review and the whole period.
func (r *review) windowCaption() string {
	if r.w.Kind == window.WholePeriod {
		return "Whole period: " + r.weeksText(r.whole) + "."
	}
	return fmt.Sprintf("%s: %s. Whole period: %s.", r.w.Name, r.weeksText(r.w), r.weeksText(r.whole))
}

// windowPhrase opens a sentence about the window: "In 2025Q3",
// "Over the whole period", "From 1 Jul 2024 to 31 Dec 2024".
func windowPhrase(w window.Window) string {
	switch w.Kind {
	case window.Quarter:
		return "In " + w.Name
	case window.Custom:
		return fmt.Sprintf("From %s to %s", window.Day(w.Start), window.Day(w.End))
	}
	return "Over the whole period"
}

// panelTitle names a window for a panel: "2025Q3 (Jul–Sep 2025)" or
// "Whole period (Jan 2023 – Dec 2025)".
func (r *review) panelTitle(w window.Window) string {
	if w.Kind == window.WholePeriod {
		return fmt.Sprintf("Whole period (%s – %s)", r.whole.Start.Format("Jan 2006"), r.whole.End.Format("Jan 2006"))
	}
	return w.Label()
}

func (r *review) uppers() []string { return r.f.Run.Spec.Upper }

func channelNames(cols []string) []string {
	out := make([]string, len(cols))
	for i, c := range cols {
		out[i] = Channel(c)
	}
	return out
}

func (r *review) effect(ch, path string, w window.Window) (fitfolder.Effect, error) {
	e, ok := r.f.Effect(ch, path, w.Name)
	if !ok {
		return e, fmt.Errorf("effects.csv has no %s row for %s in window %s", path, ch, w.Name)
	}
	return e, nil
}

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

// finite reports whether every v is a finite number.
func finite(vs ...float64) bool {
	for _, v := range vs {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

// nz returns v, or 0 when v is not finite.
func nz(v float64) float64 {
	if !finite(v) {
		return 0
	}
	return v
}
