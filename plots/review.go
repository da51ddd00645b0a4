package plots

import (
	"fmt"
	"math"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"

	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/plots/marks"
)

// Names lists the charts Build makes for every fit, in the order the report
// shows them; each is written as NAME.png. A panel of regions has one more
// (NamesOf).
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
	"regions":     (*review).regions,
	DriftName:     (*review).drift,
}

// review is what every chart needs: the fit, the window under review and
// the whole period.
type review struct {
	f       *fitfolder.Fit
	w       window.Window
	whole   window.Window
	outcome string // display name of the outcome ("conversions")
	lab     Labels
}

func newReview(f *fitfolder.Fit, window string) (*review, error) {
	w, err := f.Window(window)
	if err != nil {
		return nil, err
	}
	lab := LabelsOf(f)
	return &review{f: f, w: w, whole: f.Whole(), outcome: lab.Outcome(), lab: lab}, nil
}

// Build returns every chart of NamesOf(f) for the window (see
// fitfolder.Fit.Window: empty means the last full quarter). The error is a
// *fitfolder.WindowError when the window is not in effects.csv.
func Build(f *fitfolder.Fit, window string) ([]*Figure, error) {
	r, err := newReview(f, window)
	if err != nil {
		return nil, err
	}
	names := NamesOf(f)
	figs := make([]*Figure, 0, len(names))
	for _, n := range names {
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

// Chart returns the one chart called name (one of NamesOf(f)) for the window.
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
	if p := Partial(r.f, r.w); p != "" {
		return fmt.Sprintf("%s: %s (%s; the data's last week starts %s, so carryover past it is not counted). Whole period: %s.",
			r.w.Name, r.weeksText(r.w), p, window.Day(r.whole.End), r.weeksText(r.whole))
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

// panelTitle names a window for a panel: "2025Q3 (Jul–Sep 2025)",
// "2025Q4 (Oct–Dec 2025), partial: 12 of 13 weeks" or "Whole period
// (Jan 2023 – Dec 2025)".
func (r *review) panelTitle(w window.Window) string {
	if w.Kind == window.WholePeriod {
		return fmt.Sprintf("Whole period (%s – %s)", r.whole.Start.Format("Jan 2006"), r.whole.End.Format("Jan 2006"))
	}
	if p := Partial(r.f, w); p != "" {
		return w.Label() + ", " + p
	}
	return w.Label()
}

// Partial describes a quarter the data cover only in part, "partial: 12 of
// 13 weeks", and is empty for a quarter covered in full and for any other
// window. Effects of such a quarter sum fewer weeks than a full one, and
// the carryover of its spend is cut where the data end, so titles and text
// name it.
func Partial(f *fitfolder.Fit, w window.Window) string {
	if w.Kind != window.Quarter {
		return ""
	}
	have, full := w.Coverage(f.Data.Weeks)
	if have == full {
		return ""
	}
	return fmt.Sprintf("partial: %d of %d weeks", have, full)
}

// reviewPhrase opens a sentence about the window under review, naming a
// partial quarter: "In 2025Q4 (partial: 12 of 13 weeks)".
func (r *review) reviewPhrase() string {
	if p := Partial(r.f, r.w); p != "" {
		return windowPhrase(r.w) + " (" + p + ")"
	}
	return windowPhrase(r.w)
}

func (r *review) uppers() []string { return r.f.Run.Spec.Upper }

func (r *review) effect(ch, path string, w window.Window) (fitfolder.Effect, error) {
	e, ok := r.f.Effect(ch, path, w.Name)
	if !ok {
		return e, fmt.Errorf("effects.csv has no %s row for %s in window %s", path, ch, w.Name)
	}
	return e, nil
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

// shadeWindow shades the review window on a time panel and labels it.
func (r *review) shadeWindow(p *plot.Plot, labelIt bool) {
	if r.w.Kind == window.WholePeriod {
		return
	}
	p.Add(marks.Span{From: marks.Day(r.w.Start), To: marks.Day(r.w.End) + 1, Fill: Shade})
	if labelIt {
		ls := marks.TextStyle(sizeLabel-1, Muted, true)
		ls.XAlign, ls.YAlign = text.XCenter, text.YTop
		p.Add(marks.Label{X: (marks.Day(r.w.Start) + marks.Day(r.w.End)) / 2, Top: true, DY: -vg.Points(4), Text: r.w.Name, Style: ls})
	}
}

func (r *review) timeAxis(p *plot.Plot) {
	p.X.Tick.Marker = marks.QuarterTicks{}
	p.X.Min = marks.Day(r.whole.Start) - 3
	p.X.Max = marks.Day(r.whole.End) + 10
}

// blankTicks keeps a ticker's marks but drops their labels (stacked panels
// that share the x axis of the bottom one).
type blankTicks struct{ plot.Ticker }

func (b blankTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := b.Ticker.Ticks(lo, hi)
	for i := range ts {
		ts[i].Label = ""
	}
	return ts
}

// channelNames returns the plain names of cols made from the column names
// alone (see Labels.Channels for the display names).
func channelNames(cols []string) []string {
	out := make([]string, len(cols))
	for i, c := range cols {
		out[i] = Channel(c)
	}
	return out
}
