package plots

import (
	"fmt"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"spillway/funnel/fitfolder"
	"spillway/plots/marks"
)

// Convergence thresholds (Vehtari, Gelman, Simpson, Carpenter and Bürkner
// 2021, "Rank-normalization, folding, and localization: an improved R-hat
// for assessing convergence of MCMC", Bayesian Analysis 16(2)).
const (
	RhatMax = 1.01
	ESSMin  = 400
)

// diagnostics: R-hat and ESS per parameter against their thresholds.
func (r *review) diagnostics() (*Figure, error) {
	stages := r.f.Stages
	rows := make([]string, len(stages))
	for i, s := range stages {
		rows[len(stages)-1-i] = s.Name // first stage on top
	}
	pr := newPanel("R-hat (at most 1.01)")
	pr.X.Label.Text = "R-hat"
	pe := newPanel("Effective sample size (at least 400)")
	pe.X.Label.Text = "ESS (log scale)"
	pe.X.Scale = plot.LogScale{}
	for _, p := range []*plot.Plot{pr, pe} {
		p.Y.Tick.Marker = marks.CategoryTicks(rows)
		p.Y.Tick.Label = marks.TextStyle(sizeAxis, Ink, true)
		p.Y.Tick.Label.XAlign, p.Y.Tick.Label.YAlign = text.XRight, text.YCenter
		p.Y.Min, p.Y.Max = -0.6, float64(len(stages))-0.4
		p.Add(gridLines{vertical: true})
	}
	thr := draw.LineStyle{Color: Alert, Width: vg.Points(3), Dashes: []vg.Length{vg.Points(8), vg.Points(5)}}
	pr.Add(marks.Rule{At: RhatMax, Vertical: true, Style: thr})
	pe.Add(marks.Rule{At: ESSMin, Vertical: true, Style: thr})

	var series []Series
	badNames := map[string]bool{}
	rmin, rmax := 1.0, RhatMax
	emin, emax := float64(ESSMin), float64(ESSMin)
	var bad []string
	divs := 0
	var divText []string
	ls := marks.TextStyle(sizeLabel-1, Alert, true)
	ls.XAlign, ls.YAlign = text.XLeft, text.YBottom
	for i, st := range stages {
		y0 := float64(len(stages) - 1 - i)
		rs := Series{Panel: "rhat", Name: st.Name}
		bs := Series{Panel: "ess", Name: st.Name + "/bulk"}
		ts := Series{Panel: "ess", Name: st.Name + "/tail"}
		var okR, badR, okB, badB, okT, badT dotsXY
		worstR, worstE := -1, -1
		var worstRy, worstEy, worstEv float64
		for j, prm := range st.Params {
			jit := y0 + jitter(j, len(st.Params))
			placeDiag(&rs, &okR, &badR, &rmin, &rmax, prm.Rhat, jit, prm.Name, prm.Rhat > RhatMax)
			placeDiag(&bs, &okB, &badB, &emin, &emax, prm.ESSBulk, jit, prm.Name, prm.ESSBulk < ESSMin)
			placeDiag(&ts, &okT, &badT, &emin, &emax, prm.ESSTail, jit, prm.Name, prm.ESSTail < ESSMin)
			failR := prm.Rhat > RhatMax
			failE := prm.ESSBulk < ESSMin || prm.ESSTail < ESSMin
			if failR || failE {
				key := st.Name + ": " + prm.Name
				if !badNames[key] {
					badNames[key] = true
					bad = append(bad, key)
				}
			}
			if failR && (worstR < 0 || prm.Rhat > st.Params[worstR].Rhat) {
				worstR, worstRy = j, jit
			}
			if e := minESS(prm); failE && (worstE < 0 || e < worstEv) {
				worstE, worstEy, worstEv = j, jit, e
			}
		}
		r.addDots(pr, okR, Direct, draw.CircleGlyph{}, 6)
		r.addDots(pr, badR, Alert, draw.CircleGlyph{}, 9)
		r.addDots(pe, okB, Direct, draw.CircleGlyph{}, 6)
		r.addDots(pe, okT, ViaSearch, draw.TriangleGlyph{}, 7)
		r.addDots(pe, badB, Alert, draw.CircleGlyph{}, 9)
		r.addDots(pe, badT, Alert, draw.TriangleGlyph{}, 10)
		// Label the worst failing parameter of the stage in each panel
		// (more labels would overlap on a slide; verdict.txt names the rest).
		if worstR >= 0 {
			prm := st.Params[worstR]
			pr.Add(marks.Label{X: prm.Rhat, Y: worstRy, DX: vg.Points(10), DY: vg.Points(4), Text: prm.Name, Style: ls, Halo: true, Inside: true})
		}
		if worstE >= 0 {
			pe.Add(marks.Label{X: worstEv, Y: worstEy, DX: vg.Points(10), DY: vg.Points(4), Text: st.Params[worstE].Name, Style: ls, Halo: true, Inside: true})
		}
		series = append(series, rs, bs, ts)
		d := st.Stats.TotalDivergences()
		divs += d
		divText = append(divText, fmt.Sprintf("%s %d", st.Name, d))
	}
	span := rmax - rmin
	pr.X.Min, pr.X.Max = rmin-0.08*span-0.0005, rmax+0.25*span
	pe.X.Min, pe.X.Max = emin/1.6, emax*1.5
	pe.X.Tick.Marker = logTicks{}

	fig := &Figure{
		Legend: []LegendItem{
			{"R-hat / bulk ESS of a parameter", Direct, SwatchDot, nil},
			{"tail ESS", ViaSearch, SwatchDot, draw.TriangleGlyph{}},
			{"fails its check", Alert, SwatchDot, nil},
			{"threshold", Alert, SwatchDash, nil},
		},
		Series: series,
	}
	fig.grid(1, 2, pr, pe)
	nParams := 0
	for _, st := range stages {
		nParams += len(st.Params)
	}
	chains := r.f.Run.Chains
	fig.Caption = fmt.Sprintf("Each dot is one parameter of one stage (%d in all; vertical spread only separates the dots). "+
		"Thresholds R-hat 1.01 and ESS 400 (Vehtari et al. 2021). Divergent transitions: %s. %d chains, %d draws each after %d warm-up.",
		nParams, strings.Join(divText, ", "), chains, r.f.Run.Draws, r.f.Run.Warmup)
	fig.add(Series{Panel: "divergences", Name: "total", Y: []float64{float64(divs)}})
	switch {
	case len(bad) == 0 && divs == 0:
		fig.Title = "Every parameter passes the convergence checks, with no divergent transitions"
	case len(bad) == 0:
		fig.Title = fmt.Sprintf("R-hat and ESS pass for every parameter, but %d transitions diverged: treat the fit with care", divs)
	default:
		what := fmt.Sprintf("%d parameters fail", len(bad))
		if len(bad) == 1 {
			what = "1 parameter fails"
		}
		if divs > 0 {
			fig.Title = fmt.Sprintf("%s the convergence checks and %d transitions diverged: do not trust this fit yet", what, divs)
		} else {
			fig.Title = fmt.Sprintf("%s the convergence checks: do not trust this fit yet", what)
		}
	}
	return fig, nil
}

// minESS returns the smaller of a parameter's bulk and tail ESS, ignoring
// a missing (NaN) one.
func minESS(p fitfolder.Param) float64 {
	switch {
	case math.IsNaN(p.ESSBulk):
		return p.ESSTail
	case math.IsNaN(p.ESSTail):
		return p.ESSBulk
	}
	return math.Min(p.ESSBulk, p.ESSTail)
}

// dotsXY collects points for one glyph style.
type dotsXY struct{ x, y []float64 }

// placeDiag records one parameter's diagnostic v (skipped when NaN) at
// height y: into the plotted series, the axis range [lo, hi], and the
// passing or failing dots.
func placeDiag(s *Series, ok, bad *dotsXY, lo, hi *float64, v, y float64, name string, fails bool) {
	if math.IsNaN(v) {
		return
	}
	s.X, s.Y, s.Labels = append(s.X, v), append(s.Y, y), append(s.Labels, name)
	*lo, *hi = math.Min(*lo, v), math.Max(*hi, v)
	if fails {
		bad.add(v, y)
	} else {
		ok.add(v, y)
	}
}

func (d *dotsXY) add(x, y float64) { d.x, d.y = append(d.x, x), append(d.y, y) }

func (r *review) addDots(p *plot.Plot, d dotsXY, c color.Color, shape draw.GlyphDrawer, radius float64) {
	if len(d.x) == 0 {
		return
	}
	p.Add(marks.Dots{X: d.x, Y: d.y, Style: draw.GlyphStyle{Color: c, Radius: vg.Points(radius), Shape: shape}})
}

// jitter spreads n dots of one row over ±0.28 deterministically.
func jitter(i, n int) float64 {
	if n <= 1 {
		return 0
	}
	// A low-discrepancy sequence (golden ratio) so that neighbours in the
	// parameter list do not line up.
	v := math.Mod(float64(i)*0.6180339887498949, 1)
	return (v - 0.5) * 0.56
}

// logTicks labels 1, 2 and 4 times powers of ten on a log axis (so that
// the ESS threshold 400 has a label).
type logTicks struct{}

func (logTicks) Ticks(lo, hi float64) []plot.Tick {
	var ts []plot.Tick
	for e := math.Floor(math.Log10(lo)); e <= math.Ceil(math.Log10(hi)); e++ {
		for _, m := range []float64{1, 2, 4} {
			v := m * math.Pow(10, e)
			if v < lo || v > hi {
				continue
			}
			ts = append(ts, plot.Tick{Value: v, Label: Number(v)})
		}
	}
	return ts
}
