package mediation

import (
	"fmt"
	"math"
	"strconv"

	"spillway/funnel/fitfolder"
	"spillway/funnel/model"
)

// ImpliedTable returns priors_implied.csv, the prior predictive check of
// the returns: for every upper channel its total return on spend over the
// whole period, and for every return prior of the stages (model
// ReturnPrior) its own path, window and measure, each with the stated
// prior's 5%, 50% and 95% quantiles (NaN when none was stated), the
// priors' from prior (Split on PriorInputs: the same counterfactual
// simulation; nil when a prior is improper) and the posterior's from post.
// A return on spend is shown per the stated Per units of spend, per unit
// otherwise (the channel's stated Per on its whole-period row too).
func ImpliedTable(in *Inputs, post, prior *Result) []fitfolder.Implied {
	var stated []*model.ReturnPrior
	if in.Outcome != nil {
		stated = in.Outcome.Returns
	}
	nan := math.NaN()
	fill := func(row *fitfolder.Implied) {
		row.PriorQ05, row.PriorQ50, row.PriorQ95 = nan, nan, nan
		row.PostQ05, row.PostQ50, row.PostQ95 = nan, nan, nan
		if s, ok := impliedOf(post, *row); ok {
			row.PostQ05, row.PostQ50, row.PostQ95 = s.Q05, s.Q50, s.Q95
		}
		if prior == nil {
			return
		}
		if s, ok := impliedOf(prior, *row); ok {
			row.PriorQ05, row.PriorQ50, row.PriorQ95 = s.Q05, s.Q50, s.Q95
		}
	}
	var out []fitfolder.Implied
	for _, col := range in.Data.UpperNames {
		whole := fitfolder.Implied{Channel: col, Path: fitfolder.PathTotal, Window: "all", Measure: fitfolder.ImpliedReturnOnSpend,
			Per: 1, StatedQ05: nan, StatedQ50: nan, StatedQ95: nan}
		var rows []fitfolder.Implied
		for _, r := range stated {
			if r.Column != col {
				continue
			}
			if r.Measure == model.ReturnOnSpend && whole.Per == 1 {
				whole.Per = r.Per
			}
			row := fitfolder.Implied{Channel: col, Path: r.Path.String(), Window: r.Window.Name, Measure: r.Measure.String(), Per: r.Per,
				StatedQ05: r.Quantile(0.05), StatedQ50: r.Quantile(0.5), StatedQ95: r.Quantile(0.95)}
			rows = append(rows, row)
		}
		for i, row := range rows {
			if row.Path == whole.Path && row.Window == whole.Window && row.Measure == whole.Measure {
				whole = row
				rows = append(rows[:i], rows[i+1:]...)
				break
			}
		}
		rows = append([]fitfolder.Implied{whole}, rows...)
		for i := range rows {
			fill(&rows[i])
		}
		out = append(out, rows...)
	}
	return out
}

// impliedOf summarises the effect of r named by row, in the row's units;
// ok is false when r has no such effect or no spend in its window.
func impliedOf(r *Result, row fitfolder.Implied) (Summary, bool) {
	for _, e := range r.Effects {
		if e.Channel != row.Channel || e.Path != row.Path || e.Window != row.Window {
			continue
		}
		x := e.Draws
		if row.Measure == fitfolder.ImpliedReturnOnSpend {
			if !(e.Spend > 0) {
				return Summary{}, false
			}
			x = make([]float64, len(e.Draws))
			for i, v := range e.Draws {
				x[i] = v / e.Spend * row.Per
			}
		}
		return Summarise(x), true
	}
	return Summary{}, false
}

// ImpliedNotes returns one plain line per stated return whose posterior
// median lies outside the stated 90% range: the data pull the return away
// from what the user stated, although the stated prior pulls the posterior
// towards itself, so the statement deserves a second look.
func ImpliedNotes(rows []fitfolder.Implied) []string {
	var out []string
	for _, r := range rows {
		if !r.Stated() || math.IsNaN(r.PostQ50) || (r.PostQ50 >= r.StatedQ05 && r.PostQ50 <= r.StatedQ95) {
			continue
		}
		what := "return per " + fmtG(r.Per) + " of spend"
		if r.Per == 1 {
			what = "return per unit of spend"
		}
		if r.Measure == fitfolder.ImpliedIncremental {
			what = "incremental outcome"
		}
		side := "above"
		if r.PostQ50 < r.StatedQ05 {
			side = "below"
		}
		out = append(out, fmt.Sprintf("%s's %s %s (%s): the posterior median %s lies %s the stated 90%% range %s to %s; the data disagree with the statement, check it (a lift test is a firmer source than memory)",
			r.Channel, r.Path, what, r.Window, fmtG(r.PostQ50), side, fmtG(r.StatedQ05), fmtG(r.StatedQ95)))
	}
	return out
}

// fmtG formats a number with three significant digits, or as a whole
// number from 100 up.
func fmtG(x float64) string {
	if math.Abs(x) >= 100 {
		return strconv.FormatFloat(x, 'f', 0, 64)
	}
	return strconv.FormatFloat(x, 'g', 3, 64)
}
