package mediation

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"spillway/funnel/model"
	"spillway/funnel/stat"
	"spillway/funnel/window"
)

// DefaultNegligible is the default fraction below which a path counts as
// negligible: under 5% of the channel's total effect (a via-search or
// direct path), or under 5% of the outcome in the window (a channel's
// total, paid search's controlled return).
const DefaultNegligible = 0.05

// PriorDraws is the number of prior draws whose effects stand for the
// prior: 1000 give the prior's 5% and 95% quantiles to within about 1.5
// percentage points of probability (binomial sd sqrt(0.05 0.95 / 1000)).
const PriorDraws = 1000

// PriorInputs returns in with its draws replaced by n paired draws from
// the stages' priors (model.Stage.PriorDraw), from a stream fixed by seed,
// so that the prior's effects go through the same Split as the posterior's.
// A flat or Jeffreys prior has no distribution: the error wraps
// model.ErrImproper.
func PriorInputs(in *Inputs, n int, seed uint64) (*Inputs, error) {
	out := *in
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	draw := func(st *model.Stage) (Draws, error) {
		d := Draws{Names: st.Names()}
		for range n {
			v, err := st.PriorDraw(nil, rng)
			if err != nil {
				return Draws{}, fmt.Errorf("%s stage: %w", st.Name, err)
			}
			d.Rows = append(d.Rows, v)
		}
		return d, nil
	}
	var err error
	if out.DemandDraws, err = draw(in.Demand); err != nil {
		return nil, err
	}
	if out.OutcomeDraws, err = draw(in.Outcome); err != nil {
		return nil, err
	}
	// coefficients under a return prior are drawn given the rest of the
	// pair (model.ReturnPrior.Draw)
	rps, err := model.ReturnDraws(in.Demand, in.Outcome)
	if err != nil {
		return nil, err
	}
	for d := range n {
		for _, r := range rps {
			r.Draw(out.DemandDraws.Rows[d], out.OutcomeDraws.Rows[d], rng)
		}
	}
	// an upper channel's two paths' drift weights are drawn in pairs
	// (model.DriftTie.Draw), unless they were fitted apart
	if !in.DriftsApart {
		ties, err := model.DriftTieDraws(in.Demand, in.Outcome)
		if err != nil {
			return nil, err
		}
		for d := range n {
			for _, t := range ties {
				t.Draw(out.DemandDraws.Rows[d], out.OutcomeDraws.Rows[d], rng)
			}
		}
	}
	out.NaiveDraws = Draws{}
	if in.Naive != nil && len(in.NaiveDraws.Rows) > 0 {
		if out.NaiveDraws, err = draw(in.Naive); err != nil {
			return nil, err
		}
	}
	return &out, nil
}

// Support says how much the data moved one effect from its prior.
type Support struct {
	// PriorQ05 and PriorQ95 are the prior's 90% interval of the effect,
	// computed through the same forward simulation as the posterior.
	PriorQ05, PriorQ95 float64
	// Contraction is 1 - (posterior 90% width) / (prior 90% width): 0 when
	// the data did not narrow the prior at all, near 1 when they pinned the
	// effect down. Interval widths, not standard deviations: the prior of
	// an effect (a product of half-normal coefficients and saturations) is
	// heavy-tailed, and its sd is dominated by a few draws.
	Contraction float64
	// PNegligible is the posterior probability that the effect is
	// negligible: a via-search or direct path under the fraction f of the
	// channel's total in the same draw, a total under f of the outcome in
	// the window. NaN for a share.
	PNegligible float64
	// PriorPNegligible is the same probability under the prior.
	PriorPNegligible float64
}

// Key names one effect.
type Key struct{ Channel, Path, Window string }

// Supports compares every effect of post with the same effect of prior
// (Split on PriorInputs) and returns the support of each, with
// negligible fraction f. outcome is the scaled data the effects were
// computed on (for the outcome in each window); windows are the windows
// of the split.
func Supports(post, prior *Result, sc *model.Scaled, windows []window.Window, f float64) map[Key]Support {
	outcomeIn := map[string]float64{}
	for _, w := range windows {
		var s float64
		for t := w.From; t <= w.To; t++ {
			s += sc.Outcome[t] * sc.OutcomeScale
		}
		outcomeIn[w.Name] = s
	}
	all := func(r *Result) []Effect { return append(append([]Effect(nil), r.Effects...), r.Borrowed...) }
	totalsOf := func(r *Result) map[Key][]float64 {
		m := map[Key][]float64{}
		for _, e := range r.Effects {
			if e.Path == "total" {
				m[Key{e.Channel, "total", e.Window}] = e.Draws
			}
		}
		return m
	}
	postTot, priorTot := totalsOf(post), totalsOf(prior)
	negligible := func(e Effect, totals map[Key][]float64) float64 {
		switch e.Path {
		case "via_search", "direct":
			tot := totals[Key{e.Channel, "total", e.Window}]
			if len(tot) != len(e.Draws) {
				return math.NaN()
			}
			return fractionBelow(e.Draws, func(d int) float64 { return f * math.Abs(tot[d]) })
		case "total", "controlled":
			lim := f * outcomeIn[e.Window]
			return fractionBelow(e.Draws, func(int) float64 { return lim })
		}
		return math.NaN()
	}
	priorOf := map[Key]Effect{}
	for _, e := range all(prior) {
		priorOf[Key{e.Channel, e.Path, e.Window}] = e
	}
	out := map[Key]Support{}
	for _, e := range all(post) {
		k := Key{e.Channel, e.Path, e.Window}
		s := Support{PriorQ05: math.NaN(), PriorQ95: math.NaN(), Contraction: math.NaN(), PNegligible: negligible(e, postTot),
			PriorPNegligible: math.NaN()}
		if pe, ok := priorOf[k]; ok {
			lo, hi := interval(pe.Draws)
			plo, phi := interval(e.Draws)
			s.PriorQ05, s.PriorQ95 = lo, hi
			if hi > lo {
				s.Contraction = 1 - (phi-plo)/(hi-lo)
			}
			s.PriorPNegligible = negligible(pe, priorTot)
		}
		out[k] = s
	}
	return out
}

// BayesFactor returns the Bayes factor of "negligible" against "not
// negligible": the posterior odds of a negligible effect over its prior
// odds (an interval null hypothesis; Morey and Rouder 2011, "Bayes factor
// approaches for testing interval null hypotheses", Psychological
// Methods 16). Above 1 the data made a negligible effect more likely than
// the prior did. Probabilities of 0 or 1 are moved half a draw inwards
// (n draws), so the factor stays finite. NaN when either is unknown.
func (s Support) BayesFactor(nPost, nPrior int) float64 {
	if math.IsNaN(s.PNegligible) || math.IsNaN(s.PriorPNegligible) {
		return math.NaN()
	}
	clamp := func(p float64, n int) float64 {
		e := 0.5 / float64(n)
		return min(max(p, e), 1-e)
	}
	p, q := clamp(s.PNegligible, nPost), clamp(s.PriorPNegligible, nPrior)
	return (p / (1 - p)) / (q / (1 - q))
}

// interval returns the 5% and 95% quantiles of the finite values of x.
func interval(x []float64) (lo, hi float64) {
	s := make([]float64, 0, len(x))
	for _, v := range x {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			s = append(s, v)
		}
	}
	if len(s) == 0 {
		return math.NaN(), math.NaN()
	}
	sort.Float64s(s)
	return stat.Quantile(s, 0.05), stat.Quantile(s, 0.95)
}

// fractionBelow is the share of draws d with x[d] below lim(d).
func fractionBelow(x []float64, lim func(d int) float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	n := 0
	for d, v := range x {
		if v < lim(d) {
			n++
		}
	}
	return float64(n) / float64(len(x))
}

// Thresholds of the per-effect notes. An effect is called negligible when
// the posterior puts at least NegligibleProb on it being under the
// fraction. It is "not distinguishable from zero" when its lower 90% bound
// lies in the negligible zone (P(negligible) >= 0.05) and the data make a
// negligible effect at least as likely as the prior did (BayesFactor >= 1):
// with coefficients positive by construction no interval ever includes 0,
// so this asks instead whether the data speak against a negligible effect
// at all. The data "barely moved the prior" when the posterior's 90%
// interval is less than BarelyMoved narrower than the prior's.
//
// Calibrated on funnel/scenario with short chains (TestSupport in
// funnel/pipeline, numbers in its log, seed 11): every upper-funnel effect
// with a sizeable truth on the demo, slow-burn and direct-audio has
// P(negligible) <= 0.05 and a Bayes factor <= 0.74 (slow-burn's audio
// total; the next largest 0.13); direct-audio's audio via-search path
// (truth 0) has P(negligible) 0.50 against 0.19 under the prior, a Bayes
// factor of 4.3; slow-burn's small direct video path (delta 0.06) 73. The
// upper-funnel effects contract by 0.53 to 0.95; paid search's controlled
// return, whose interval is wide on every scenario, by 0.41 to 0.61 and
// is not distinguishable from zero on all three.
const (
	NegligibleProb = 0.9
	BarelyMoved    = 0.5
)

// SupportNotes returns one plain line per effect of window win that the
// data do not carry: a path that is negligible, or an effect the data
// barely moved from its prior. f is the negligible fraction used for sup.
func SupportNotes(r *Result, sup map[Key]Support, win string, f float64) []string {
	var out []string
	pct := fmt.Sprintf("%.0f%%", 100*f)
	label := map[string]string{"via_search": "via-search path", "direct": "direct path", "total": "total effect", "controlled": "controlled return"}
	note := func(e Effect) {
		n := len(e.Draws)
		s, ok := sup[Key{e.Channel, e.Path, e.Window}]
		name, known := label[e.Path]
		if !ok || !known {
			return
		}
		of := e.Channel + "'s total"
		if e.Path == "total" || e.Path == "controlled" {
			of = "the outcome in the window"
		}
		switch {
		case s.PNegligible >= NegligibleProb:
			out = append(out, fmt.Sprintf("%s's %s (%s): negligible (P = %.2f that it is under %s of %s)", e.Channel, name, e.Window, s.PNegligible, pct, of))
		case s.PNegligible >= 0.05 && s.BayesFactor(n, PriorDraws) >= 1:
			out = append(out, fmt.Sprintf("%s's %s (%s): not distinguishable from zero (P = %.2f that it is under %s of %s, against %.2f under the prior: the data do not speak against a negligible effect)",
				e.Channel, name, e.Window, s.PNegligible, pct, of, s.PriorPNegligible))
		case s.Contraction < BarelyMoved:
			out = append(out, fmt.Sprintf("%s's %s (%s): the data barely moved the prior (90%% interval %.0f%% narrower than the prior's %s to %s); this number is the assumption, not a finding",
				e.Channel, name, e.Window, 100*max(s.Contraction, 0), fmtNum(s.PriorQ05), fmtNum(s.PriorQ95)))
		}
	}
	for _, e := range r.Effects {
		if e.Window == win {
			note(e)
		}
	}
	for _, e := range r.Borrowed {
		if e.Window == win {
			note(e)
		}
	}
	return out
}

func fmtNum(x float64) string {
	if math.IsNaN(x) {
		return "NaN"
	}
	return fmt.Sprintf("%.0f", x)
}
