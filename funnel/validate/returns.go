package validate

import (
	"fmt"
	"strconv"
	"strings"

	"spillway/funnel/data"
	"spillway/funnel/model"
)

// Return priors in a sweep. Every refit takes the fit's stated return
// priors: the same prior on the same channel's return over the same weeks,
// restated on the refit's data (model.ReturnPrior.On: the window's spend
// and the outcome scale of that data), and is fitted as the joint target
// the priors need (pipeline.FitStages). Two kinds of job cannot take a
// stated prior and are skipped with the reason in the manifest: a holdout
// origin whose fit ends before a prior's window does (the weeks the prior
// is about are not in that fit's data), and a placebo that moves a
// channel's spend out of a prior's window altogether (there is no spend
// left to return on).

// optionsFor returns the sweep's model options for a refit on sc, with
// the return priors restated on sc.
func (sw *Sweep) optionsFor(sc *model.Scaled) (model.Options, error) {
	o := sw.in.Options
	if len(o.Returns) == 0 {
		return o, nil
	}
	o.Returns = make([]*model.ReturnPrior, len(sw.in.Options.Returns))
	for i, r := range sw.in.Options.Returns {
		var err error
		if o.Returns[i], err = r.On(sc); err != nil {
			return model.Options{}, fmt.Errorf("validate: %w", err)
		}
	}
	return o, nil
}

// holdoutReturns returns why a holdout fit of the weeks before cut cannot
// take the stated return priors ("" if it can).
func (sw *Sweep) holdoutReturns(cut int) string {
	for _, r := range sw.in.Options.Returns {
		if r.Window.To >= cut {
			return fmt.Sprintf("the return prior %s (priors file line %d) is over %s, which ends after the fit's last week %s; a fit that ends before the window cannot take it",
				r.Name(), r.Line, r.Window.Name, sw.in.Series.Weeks[cut-1].Format(data.DateLayout))
		}
	}
	return ""
}

// placeboReturns returns why a placebo that moves col's spend by shift
// weeks cannot take the stated return priors ("" if it can).
func (sw *Sweep) placeboReturns(c int, col string, shift int) string {
	for _, r := range sw.in.Options.Returns {
		if r.Column != col {
			continue
		}
		moved := ShiftSpend(nil, sw.in.Series.Upper[c], shift)
		spend := 0.0
		for t := r.Window.From; t <= r.Window.To; t++ {
			spend += moved[t]
		}
		if !(spend > 0) {
			return fmt.Sprintf("the return prior %s (priors file line %d) is over %s, where the moved spend is zero; a return needs spend to return on", r.Name(), r.Line, r.Window.Name)
		}
	}
	return ""
}

// returnsID spells the return priors for the manifest's options.
func returnsID(o model.Options) []string {
	var out []string
	for _, r := range o.Returns {
		out = append(out, fmt.Sprintf("%s over %s per %s=%s(%s,%s)", r.Name(), r.Window.Name, strconv.FormatFloat(r.Per, 'g', -1, 64),
			r.Stated.Family, strconv.FormatFloat(r.Stated.P1, 'g', -1, 64), strconv.FormatFloat(r.Stated.P2, 'g', -1, 64)))
	}
	return out
}

// skippedNotes adds the manifest's skipped jobs of one check to v as
// notes: those starting with prefix ("origin ", "placebo "), or, with
// prefix "", the rest (the quarters the stability check could not leave
// out).
func skippedNotes(v *Verdict, m Manifest, prefix string) {
	for _, s := range m.Skipped {
		other := strings.HasPrefix(s, "origin ") || strings.HasPrefix(s, "placebo ")
		if prefix == "" && !other || prefix != "" && strings.HasPrefix(s, prefix) {
			v.Details = append(v.Details, "Note: "+s+".")
		}
	}
}
