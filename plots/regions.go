package plots

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/plots/marks"
)

// NamesOf lists the charts Build makes for f, in the order the report shows
// them: Names, "regions" after "split" when f is a panel of regions (its
// split holds the region tables), and DriftName last when the fit has
// drifting coefficients (drift.csv).
func NamesOf(f *fitfolder.Fit) []string {
	out := slices.Clone(Names)
	if f.HasRegions() {
		out = slices.Insert(out, slices.Index(out, "split")+1, "regions")
	}
	if len(f.Drift) > 0 {
		out = append(out, DriftName)
	}
	return out
}

// ClearProbability is the posterior probability above which a region's
// difference from the pooled answer is called larger than its
// uncertainty (region_differences.csv's p_beyond_threshold): the chart
// marks such regions and the report names them.
const ClearProbability = 0.9

// labelAllUpTo is the most regions a panel labels every row of; with more,
// it labels the highest and lowest few and those that differ clearly, so
// that the labels keep a readable size.
const labelAllUpTo = 16

// maxNamed is the most regions a panel names when it cannot name all.
const maxNamed = 10

// regions: per upper channel, each region's share of the effect that runs
// through branded search over the whole period, with its 90% interval,
// regions sorted by it, and the pooled share (the sum over regions) as a
// vertical line over its 90% band. Regions whose share differs from the
// pooled one by more than the stated threshold with probability at least
// ClearProbability are drawn dark and named in bold.
func (r *review) regions() (*Figure, error) {
	f := r.f
	if !f.HasRegions() {
		return nil, fmt.Errorf("the fit folder has no %s (not a panel of regions)", fitfolder.EffectsByRegionFile)
	}
	all := f.Regions()
	fig := &Figure{
		Legend: []LegendItem{
			{"region", ViaSearch, SwatchDot, nil},
			{"differs clearly", Ink, SwatchDot, nil},
			{"90% interval", Muted, SwatchWhisker, nil},
			{"pooled (regions summed)", Ink, SwatchDash, nil},
			{"pooled 90% interval", marks.Tint(ViaSearch, 0.3), SwatchBox, nil},
		},
	}
	threshold := math.NaN()
	var panels []*plot.Plot
	var titleParts, notes []string
	many := false
	for _, ch := range r.uppers() {
		pooled, err := r.effect(ch, fitfolder.PathMediatedShare, r.whole)
		if err != nil {
			return nil, err
		}
		type row struct {
			region string
			e      fitfolder.RegionEffect
			clear  bool
			diff   float64
		}
		var rows []row
		var dark []string
		for _, g := range all {
			spend, _ := f.Data.RegionTotal(g, ch, r.whole)
			e, ok := f.RegionEffectOf(g, ch, fitfolder.PathMediatedShare, "all")
			if !ok {
				return nil, fmt.Errorf("%s has no mediated_share row for %s in %s over the whole period", fitfolder.EffectsByRegionFile, ch, g)
			}
			if !(spend > 0) || !finite(e.Mean, e.Q05, e.Q95) {
				dark = append(dark, g)
				continue
			}
			d, ok := f.RegionDifferenceOf(g, ch, fitfolder.MeasureMediatedShare, "all")
			if ok {
				threshold = d.Threshold
			}
			rows = append(rows, row{g, e, ok && d.PBeyond >= ClearProbability, d.Mean})
		}
		if len(rows) == 0 {
			return nil, fmt.Errorf("no region has spend on %s", ch)
		}
		// lowest at the bottom, highest at the top; ties by name
		slices.SortStableFunc(rows, func(a, b row) int {
			if c := cmpFloat(a.e.Mean, b.e.Mean); c != 0 {
				return c
			}
			return strings.Compare(a.region, b.region)
		})
		n := len(rows)
		p := newPanel(fmt.Sprintf("%s: pooled %s", Capital(r.lab.Channel(ch)), Percent(pooled.Mean)))
		p.X.Label.Text = "share of the effect via branded search"
		p.X.Tick.Marker = percentTicks{}
		p.Add(gridLines{vertical: true})
		p.Add(marks.Span{From: pooled.Q05, To: pooled.Q95, Fill: marks.Tint(ViaSearch, 0.3)})
		p.Add(marks.Rule{At: pooled.Mean, Vertical: true, Style: draw.LineStyle{Color: Ink, Width: vg.Points(2.5),
			Dashes: []vg.Length{vg.Points(7), vg.Points(4)}}})

		// Labels as large as the rows allow (about 430 pt of panel height
		// on the page), at most the tick size. Up to labelAllUpTo regions
		// every row is named; beyond, the regions furthest from the pooled
		// share are, as many as fit without touching (at least 14 pt).
		rowPts := 430.0 / float64(max(n, 1))
		size := vg.Length(math.Min(sizeTick, rowPts*0.8))
		labelled := make([]bool, n)
		if n <= labelAllUpTo {
			for i := range labelled {
				labelled[i] = true
			}
		} else {
			size = vg.Length(math.Min(sizeTick, math.Max(14, rowPts*0.8)))
			gap := int(math.Ceil(float64(size) * 1.6 / rowPts))
			order := make([]int, n)
			for i := range order {
				order[i] = i
			}
			far := func(i int) float64 { return math.Abs(rows[i].e.Mean - pooled.Mean) }
			slices.SortStableFunc(order, func(a, b int) int { return cmpFloat(far(b), far(a)) })
			named := 0
			for _, i := range order {
				if named == maxNamed {
					break
				}
				if slices.ContainsFunc(labelled[max(0, i-gap+1):min(n, i+gap)], func(b bool) bool { return b }) {
					continue
				}
				labelled[i] = true
				named++
			}
		}
		names := make([]string, n)
		ys := make([]float64, n)
		for i, rw := range rows {
			y := float64(i)
			ys[i] = y
			if labelled[i] {
				names[i] = rw.region
			}
			wc := Muted
			if rw.clear {
				wc = Ink
			}
			lw := math.Min(2.5, math.Max(1.2, rowPts*0.12))
			p.Add(marks.Whisker{At: y, Lo: rw.e.Q05, Hi: rw.e.Q95, Horizontal: true,
				Style: draw.LineStyle{Color: wc, Width: vg.Points(lw)}, Cap: vg.Length(math.Min(12, rowPts*0.6))})
			fill := ViaSearch
			if rw.clear {
				fill = Ink
			}
			p.Add(marks.Dots{X: []float64{rw.e.Mean}, Y: []float64{y}, Overflow: true,
				Style: draw.GlyphStyle{Color: fill, Radius: vg.Points(math.Min(7, math.Max(3, rowPts*0.3))), Shape: draw.CircleGlyph{}}})
			if rw.clear && labelled[i] {
				// how far from pooled, beside the interval (before it
				// when the interval runs near 100%)
				dl := marks.TextStyle(size, Ink, true)
				dl.XAlign, dl.YAlign = text.XLeft, text.YCenter
				at, dx := rw.e.Q95, vg.Points(8)
				if at > 0.85 {
					dl.XAlign, at, dx = text.XRight, rw.e.Q05, -dx
				}
				p.Add(marks.Label{X: at, Y: y, DX: dx, Text: Points(rw.diff), Style: dl, Halo: true})
			}
			fig.add(Series{Panel: ch, Name: rw.region, X: []float64{y}, Y: []float64{rw.e.Mean},
				Lo: []float64{rw.e.Q05}, Hi: []float64{rw.e.Q95}, Labels: []string{rw.region}})
		}
		fig.add(Series{Panel: ch, Name: "pooled", X: []float64{-1}, Y: []float64{pooled.Mean}, Lo: []float64{pooled.Q05}, Hi: []float64{pooled.Q95}})
		p.Y.Tick.Marker = regionTicks{names: names, bold: boldOf(rows, func(rw row) bool { return rw.clear })}
		p.Y.Tick.Label = marks.TextStyle(size, Ink, false)
		p.Y.Tick.Label.XAlign, p.Y.Tick.Label.YAlign = text.XRight, text.YCenter
		p.Y.Tick.Length = 0
		p.Y.Min, p.Y.Max = -0.7, float64(n)-0.3
		p.X.Min, p.X.Max = 0, 1
		panels = append(panels, p)

		lo, hi := rows[0], rows[n-1]
		titleParts = append(titleParts, fmt.Sprintf("%s %s (%s) to %s (%s), pooled %s", r.lab.Channel(ch),
			Percent(lo.e.Mean), lo.region, Percent(hi.e.Mean), hi.region, Percent(pooled.Mean)))
		if len(dark) > 0 {
			notes = append(notes, fmt.Sprintf("No %s spend in %s.", r.lab.Channel(ch), List(dark)))
		}
		if n > labelAllUpTo {
			many = true
		}
	}
	fig.grid(1, len(panels), panels...)
	fig.Title = "Share via branded search by region: " + strings.Join(titleParts, "; ")
	if many {
		notes = append(notes, "Named: the regions furthest from the pooled share, as many as fit; every region is in "+fitfolder.EffectsByRegionFile+".")
	}
	clear := "Dark: the region's share differs from the pooled one"
	if !math.IsNaN(threshold) {
		clear += " by more than " + strings.TrimPrefix(Points(threshold), "+")
	}
	clear += fmt.Sprintf(" with posterior probability at least %.0f%% (per draw, region against pooled).", 100*ClearProbability)
	fig.Caption = "Whole period: " + r.weeksText(r.whole) + fmt.Sprintf(", %d regions. ", len(all)) +
		"Each dot is a region's share of the channel's effect that runs through branded search (posterior mean), the line its 90% credible interval, " +
		"regions sorted by it; the dashed line is the pooled share, all regions summed. " + clear +
		" Regions with little data lean towards the others by design (partial pooling)." + prefixed(" ", strings.Join(notes, " "))
	return fig, nil
}

// regionTicks labels the rows of a region panel; an empty name leaves its
// row unlabelled, and rows in bold are written in bold.
type regionTicks struct {
	names []string
	bold  []bool
}

// Ticks implements plot.Ticker.
func (t regionTicks) Ticks(min, max float64) []plot.Tick {
	var ts []plot.Tick
	for i, n := range t.names {
		if n == "" {
			continue
		}
		if t.bold[i] {
			n += " ●"
		}
		ts = append(ts, plot.Tick{Value: float64(i), Label: n})
	}
	return ts
}

func boldOf[T any](rows []T, f func(T) bool) []bool {
	out := make([]bool, len(rows))
	for i, r := range rows {
		out[i] = f(r)
	}
	return out
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// prefixed returns p+s, or "" when s is empty.
func prefixed(p, s string) string {
	if s == "" {
		return ""
	}
	return p + s
}
