package report

import (
	"encoding/base64"
	"fmt"
	"html/template"
	"math"

	"spillway/funnel/fitfolder"
	"spillway/plots"
)

// planView is the budget plan's section, shown when the fit folder holds a
// plan (spillway allocate, or run --allocate).
type planView struct {
	Heading, Intro, Gain, Check string
	Rows                        []planRow
	Notes                       []string
	Src                         template.URL
}

type planRow struct {
	Channel, Current, Planned, Change, Limits string
	Incremental, Marginal                     string
}

// planSection builds the plan's section of f, nil when f has no plan.
func planSection(f *fitfolder.Fit) (*planView, error) {
	p := f.Plan
	if p == nil {
		return nil, nil
	}
	s := p.Summary
	unit := plots.Plain(f.Run.Spec.Outcome)
	v := &planView{Heading: "Budget plan"}
	switch {
	case s.Given:
		v.Heading = "A budget plan evaluated"
		v.Intro = "The plan given, against the current plan:"
	case s.Objective != "mean":
		v.Intro = fmt.Sprintf("The plan that maximises the %s over the current plan (a cautious objective), within the limits and the budget:", s.Objective)
	default:
		v.Intro = "The plan that maximises the posterior mean of the incremental " + unit + ", within the limits and the budget:"
	}
	pattern := "its spend in " + s.Pattern + ", repeated as needed"
	switch s.Pattern {
	case "last":
		pattern = fmt.Sprintf("its own flighting in the data's last %d weeks", s.Weeks)
	case "even":
		pattern = "an even spread"
	}
	v.Intro += fmt.Sprintf(" %d weeks from %s, each channel's weekly spend following %s; each plan's %s counted over its weeks and the %d weeks after them, against no spend in its weeks. Paid search counts with its own (controlled) effect only, never its apparent return.",
		s.Weeks, s.FirstWeek, pattern, unit, s.AfterWeeks)
	for _, c := range p.Channels {
		lim := fmt.Sprintf("%s to %s", plots.Number(c.Min), plots.Number(c.Max))
		if math.IsInf(c.Max, 1) {
			lim = "from " + plots.Number(c.Min)
		}
		if c.Locked {
			lim = "locked"
		}
		if c.AtLimit != "" {
			lim += " (at its " + c.AtLimit + ")"
		}
		change := "new"
		if c.Current > 0 {
			change = fmt.Sprintf("%+.0f%%", 100*(c.Planned/c.Current-1))
		} else if c.Planned == 0 {
			change = "0%"
		}
		v.Rows = append(v.Rows, planRow{Channel: c.Channel, Current: plots.Number(c.Current), Planned: plots.Number(c.Planned), Change: change, Limits: lim,
			Incremental: fmt.Sprintf("%s (%s)", plots.Number(c.IncrementalPlanned.Mean), interval(c.IncrementalPlanned.Q05, c.IncrementalPlanned.Q95)),
			Marginal:    fmt.Sprintf("%.3g (%.3g to %.3g)", c.Marginal.Mean, c.Marginal.Q05, c.Marginal.Q95)})
	}
	v.Gain = fmt.Sprintf("Gain over the current plan: %s %s (90%% interval %s); the plan beats the current one in %.1f%% of the posterior draws (%d draws, paired).",
		plots.Signed(s.Gain.Mean), unit, interval(s.Gain.Q05, s.Gain.Q95), 100*s.PBeatsCurrent, s.Draws)
	if k := s.Check; k != nil {
		if k.OK {
			v.Check = fmt.Sprintf("Optimum checked (first-order conditions, Boyd and Vandenberghe 2004, section 5.5): the marginal returns of the channels inside their limits agree within %.1g, and those at a limit point the right way.", k.Spread)
		} else {
			v.Check = "The optimum's first-order check failed: " + fmt.Sprint(k.Failures)
		}
	}
	v.Notes = append(v.Notes, s.Warnings...)
	v.Notes = append(v.Notes, "A plan rests on the model's assumptions (named in this report) and on response curves that are least certain far from the spend the data saw; confirm large moves with a controlled experiment before making them.")
	fig, err := plots.Plan(p, f.Run.Spec.Outcome)
	if err != nil {
		return nil, err
	}
	png, err := fig.PNG()
	if err != nil {
		return nil, err
	}
	v.Src = template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(png))
	return v, nil
}
