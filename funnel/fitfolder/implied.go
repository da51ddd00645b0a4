package fitfolder

import (
	"os"
	"slices"

	"spillway/funnel/table"
)

// Measures of priors_implied.csv.
const (
	// ImpliedReturnOnSpend is the path's incremental outcome per Per units
	// of the channel's spend in the window.
	ImpliedReturnOnSpend = "return_on_spend"
	// ImpliedIncremental is the path's incremental outcome in the window
	// (carryover after it included), in the outcome's units.
	ImpliedIncremental = "incremental"
)

// Implied is one row of priors_implied.csv, the prior predictive check of
// the returns: an upper channel's return over a window along one path as
// the user stated it (a return prior of the priors file; NaN when none),
// as the model's priors imply it (prior draws through the same split as
// the posterior; NaN when a prior is improper) and as the posterior has
// it. Every upper channel has a row for its total return on spend over the
// whole period; each stated return adds its own unless it is that one.
type Implied struct {
	Channel, Path, Window, Measure string
	// Per is the spend unit of a return on spend (1 for Incremental).
	Per float64

	StatedQ05, StatedQ50, StatedQ95 float64
	PriorQ05, PriorQ50, PriorQ95    float64
	PostQ05, PostQ50, PostQ95       float64
}

// Stated reports whether the row holds a stated prior.
func (r Implied) Stated() bool { return !isNaN(r.StatedQ50) }

func isNaN(x float64) bool { return x != x }

type impliedRow struct {
	Channel   string         `csv:"channel"`
	Path      string         `csv:"path"`
	Window    string         `csv:"window"`
	Measure   string         `csv:"measure"`
	Per       table.Float    `csv:"per"`
	StatedQ05 table.OptFloat `csv:"stated_q05"`
	StatedQ50 table.OptFloat `csv:"stated_q50"`
	StatedQ95 table.OptFloat `csv:"stated_q95"`
	PriorQ05  table.OptFloat `csv:"prior_q05"`
	PriorQ50  table.OptFloat `csv:"prior_q50"`
	PriorQ95  table.OptFloat `csv:"prior_q95"`
	PostQ05   table.OptFloat `csv:"posterior_q05"`
	PostQ50   table.OptFloat `csv:"posterior_q50"`
	PostQ95   table.OptFloat `csv:"posterior_q95"`
}

func impliedRows(rows []Implied) []impliedRow {
	out := make([]impliedRow, len(rows))
	for i, r := range rows {
		out[i] = impliedRow{r.Channel, r.Path, r.Window, r.Measure, table.Float(r.Per),
			table.OptFloat(r.StatedQ05), table.OptFloat(r.StatedQ50), table.OptFloat(r.StatedQ95),
			table.OptFloat(r.PriorQ05), table.OptFloat(r.PriorQ50), table.OptFloat(r.PriorQ95),
			table.OptFloat(r.PostQ05), table.OptFloat(r.PostQ50), table.OptFloat(r.PostQ95)}
	}
	return out
}

// readImplied reads priors_implied.csv at path against the spec's upper
// channels; a folder written before the file existed gives nil.
func readImplied(path string, upper []string) ([]Implied, error) {
	if _, err := os.Stat(path); err != nil {
		return nil, nil
	}
	var rows []impliedRow
	lines, err := readTable(path, hintSplit, &rows)
	if err != nil {
		return nil, err
	}
	out := []Implied{}
	for i, r := range rows {
		if !slices.Contains(upper, r.Channel) {
			return nil, rowError(path, lines[i], "channel", "%q is not an upper-funnel channel of spec.json", r.Channel)
		}
		if err := oneOf(path, lines[i], "path", r.Path, PathTotal, PathViaSearch, PathDirect); err != nil {
			return nil, err
		}
		if err := oneOf(path, lines[i], "measure", r.Measure, ImpliedReturnOnSpend, ImpliedIncremental); err != nil {
			return nil, err
		}
		if r.Window == "" {
			return nil, rowError(path, lines[i], "window", "empty; expected all, a quarter or FROM:TO as in effects.csv")
		}
		if !(r.Per > 0) {
			return nil, rowError(path, lines[i], "per", "%v: expected a spend unit > 0", float64(r.Per))
		}
		out = append(out, Implied{Channel: r.Channel, Path: r.Path, Window: r.Window, Measure: r.Measure, Per: float64(r.Per),
			StatedQ05: float64(r.StatedQ05), StatedQ50: float64(r.StatedQ50), StatedQ95: float64(r.StatedQ95),
			PriorQ05: float64(r.PriorQ05), PriorQ50: float64(r.PriorQ50), PriorQ95: float64(r.PriorQ95),
			PostQ05: float64(r.PostQ05), PostQ50: float64(r.PostQ50), PostQ95: float64(r.PostQ95)})
	}
	return out, nil
}

// ImpliedFor returns the priors_implied.csv rows of channel.
func (s *Split) ImpliedFor(channel string) []Implied {
	var out []Implied
	for _, r := range s.Implied {
		if r.Channel == channel {
			out = append(out, r)
		}
	}
	return out
}
