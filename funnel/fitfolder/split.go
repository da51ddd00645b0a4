package fitfolder

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"time"

	"spillway/funnel/table"
	"spillway/funnel/window"
)

// Split is the tables `spillway split` writes.
type Split struct {
	Effects []Effect
	// EffectDraws holds the posterior draws of every effect of Effects
	// except the mediated shares (effect_draws.csv).
	EffectDraws map[DrawKey]DrawSeries
	Borrowed    []Borrowed
	Weekly      []Weekly
	Sensitivity []Sensitivity
	Breakeven   []Breakeven
	Fitted      []Fitted
	Curves      []Curve
	// Returns is returns.csv; it is absent (nil) in fit folders written
	// before the file existed.
	Returns []Return

	// The region panel's tables (regions.go): effects_by_region.csv,
	// borrowed_by_region.csv and region_differences.csv, nil unless the fit
	// was a panel of regions.
	RegionEffects     []RegionEffect
	RegionBorrowed    []RegionBorrowed
	RegionDifferences []RegionDifference
	// Implied is priors_implied.csv (implied.go), the returns as stated,
	// under the priors and under the posterior; nil in fit folders written
	// before the file existed.
	Implied []Implied
}

// Paths of effects.csv.
const (
	PathDirect        = "direct"
	PathViaSearch     = "via_search"
	PathTotal         = "total"
	PathMediatedShare = "mediated_share"
	// PathControlled is paid search's own effect (curves.csv and borrowed.csv).
	PathControlled = "controlled"
)

// Effect is one row of effects.csv. Values are in outcome units summed over
// the window, except for the path "mediated_share", a fraction in 0..1.
// PerUnitSpend is the path's effect per unit of the channel's spend in the
// window, NaN when undefined (a share, a window without spend). A value the
// file gives as NaN, NA or an infinity (a share of a zero total) is NaN.
//
// The last four say how much the data moved the effect from its prior
// (NaN when not computed): PriorQ05 and PriorQ95 are the prior's 90%
// interval of the same effect, Contraction is 1 - the posterior's 90%
// interval width over the prior's, and PNegligible the posterior
// probability that the effect is negligible (a path under a fraction of the
// channel's total, a total under that fraction of the outcome in the
// window; NaN for a share).
type Effect struct {
	Channel, Path, Window string
	Mean, Q05, Q50, Q95   float64
	PerUnitSpend          float64

	PriorQ05, PriorQ95       float64
	Contraction, PNegligible float64
}

type effectRow struct {
	Channel      string           `csv:"channel"`
	Path         string           `csv:"path"`
	Window       string           `csv:"window"`
	Mean         table.UndefFloat `csv:"mean"`
	Q05          table.UndefFloat `csv:"q05"`
	Q50          table.UndefFloat `csv:"q50"`
	Q95          table.UndefFloat `csv:"q95"`
	PerUnitSpend table.OptFloat   `csv:"per_unit_spend"`
	PriorQ05     table.OptFloat   `csv:"prior_q05"`
	PriorQ95     table.OptFloat   `csv:"prior_q95"`
	Contraction  table.OptFloat   `csv:"contraction"`
	PNegligible  table.OptFloat   `csv:"p_negligible"`
}

// DrawKey names one series of effect_draws.csv.
type DrawKey struct {
	Channel, Path, Window string
}

// DrawSeries is the posterior draws of one effect: Draw holds the .draw
// numbers in increasing order and Value the matching values (outcome units
// over the window).
type DrawSeries struct {
	Draw  []int
	Value []float64
}

type effectDrawRow struct {
	Channel string      `csv:"channel"`
	Path    string      `csv:"path"`
	Window  string      `csv:"window"`
	Draw    table.Int   `csv:".draw"`
	Value   table.Float `csv:"value"`
}

// Borrowed is one row of borrowed.csv: a paid-search channel's measure
// over a window (as in effects.csv). Measure is "controlled", "apparent",
// "naive" (outcome units from the window's spend, carryover included) or
// "borrowed_share" (a fraction -1..1, per draw mediation.BorrowedShare:
// (apparent - controlled) / apparent, or / controlled where that is the
// larger; the same in every window unless effects drift).
type Borrowed struct {
	Channel, Measure, Window string
	Mean, Q05, Q50, Q95      float64
}

type borrowedRow struct {
	Channel string      `csv:"channel"`
	Measure string      `csv:"measure"`
	Window  string      `csv:"window"`
	Mean    table.Float `csv:"mean"`
	Q05     table.Float `csv:"q05"`
	Q50     table.Float `csv:"q50"`
	Q95     table.Float `csv:"q95"`
}

// Return is one row of returns.csv: an upper channel's return on spend
// ("return_on_spend", outcome per unit of spend) or cost per incremental
// outcome ("cost_per_incremental", spend per unit of outcome) over a
// window, or its marginal return at the current weekly spend
// ("marginal_return", extra weekly outcome per extra unit of weekly spend,
// window "all"). A value the file gives as NaN or NA is NaN.
type Return struct {
	Channel, Window, Measure string
	Mean, Q05, Q50, Q95      float64
}

type returnRow struct {
	Channel string           `csv:"channel"`
	Window  string           `csv:"window"`
	Measure string           `csv:"measure"`
	Mean    table.UndefFloat `csv:"mean"`
	Q05     table.UndefFloat `csv:"q05"`
	Q50     table.UndefFloat `csv:"q50"`
	Q95     table.UndefFloat `csv:"q95"`
}

// Weekly is one row of weekly.csv: a channel's contribution through one
// path in one week, in outcome units.
type Weekly struct {
	Week           time.Time
	Channel, Path  string
	Mean, Q05, Q95 float64
}

type weeklyRow struct {
	Week    table.Date  `csv:"week"`
	Channel string      `csv:"channel"`
	Path    string      `csv:"path"`
	Mean    table.Float `csv:"mean"`
	Q05     table.Float `csv:"q05"`
	Q95     table.Float `csv:"q95"`
}

// Sensitivity is one row of sensitivity.csv: the via-search effect (outcome
// units, whole period) when the two stages' errors are assumed to
// correlate at Rho (written with one decimal).
type Sensitivity struct {
	Channel        string
	Rho            float64
	Mean, Q05, Q95 float64
}

type sensitivityRow struct {
	Channel string       `csv:"channel"`
	Rho     table.Tenths `csv:"rho"`
	Mean    table.Float  `csv:"via_search_mean"`
	Q05     table.Float  `csv:"via_search_q05"`
	Q95     table.Float  `csv:"via_search_q95"`
}

// Breakeven is one row of breakeven.csv: the rho at which the via-search
// mean reaches zero, NaN when it does not within [-0.9, 0.9].
type Breakeven struct {
	Channel string
	RhoZero float64
}

type breakevenRow struct {
	Channel string         `csv:"channel"`
	RhoZero table.OptFloat `csv:"rho_zero"`
}

// Fitted is one row of fitted.csv: actual and posterior predictive
// summaries of stage "demand" (branded queries) or "outcome" in one week,
// in raw units; Q05..Q95 is the 90% predictive band.
type Fitted struct {
	Stage          string
	Week           time.Time
	Actual         float64
	Mean, Q05, Q95 float64
}

type fittedRow struct {
	Stage  string      `csv:"stage"`
	Week   table.Date  `csv:"week"`
	Actual table.Float `csv:"actual"`
	Mean   table.Float `csv:"mean"`
	Q05    table.Float `csv:"q05"`
	Q95    table.Float `csv:"q95"`
}

// Curve is one row of curves.csv: the steady-state weekly incremental
// outcome through Path at a weekly spend of WeeklySpend, with the mean
// weekly spend of the data as CurrentWeeklySpend. Upper-funnel channels
// have the paths direct, via_search and total; paid-search channels have
// PathControlled, their own effect with branded demand held.
type Curve struct {
	Channel, Path      string
	WeeklySpend        float64
	Mean, Q05, Q95     float64
	CurrentWeeklySpend float64
}

type curveRow struct {
	Channel            string      `csv:"channel"`
	Path               string      `csv:"path"`
	WeeklySpend        table.Float `csv:"weekly_spend"`
	Mean               table.Float `csv:"mean"`
	Q05                table.Float `csv:"q05"`
	Q95                table.Float `csv:"q95"`
	CurrentWeeklySpend table.Float `csv:"current_weekly_spend"`
}

// Files renders the split's tables by file name. effect_draws.csv follows
// the order of Effects.
func (s *Split) Files() (map[string][]byte, error) {
	files := map[string][]byte{}
	add := func(name string, rows any) error {
		b, err := tableFile(rows)
		if err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		files[name] = b
		return nil
	}
	effects := make([]effectRow, len(s.Effects))
	var draws []effectDrawRow
	for i, e := range s.Effects {
		effects[i] = effectRow{e.Channel, e.Path, e.Window, table.UndefFloat(e.Mean), table.UndefFloat(e.Q05),
			table.UndefFloat(e.Q50), table.UndefFloat(e.Q95), table.OptFloat(e.PerUnitSpend),
			table.OptFloat(e.PriorQ05), table.OptFloat(e.PriorQ95), table.OptFloat(e.Contraction), table.OptFloat(e.PNegligible)}
		ds := s.EffectDraws[DrawKey{e.Channel, e.Path, e.Window}]
		for j, d := range ds.Draw {
			draws = append(draws, effectDrawRow{e.Channel, e.Path, e.Window, table.Int(d), table.Float(ds.Value[j])})
		}
	}
	borrowed := make([]borrowedRow, len(s.Borrowed))
	for i, b := range s.Borrowed {
		borrowed[i] = borrowedRow{b.Channel, b.Measure, b.Window, table.Float(b.Mean), table.Float(b.Q05), table.Float(b.Q50), table.Float(b.Q95)}
	}
	weekly := make([]weeklyRow, len(s.Weekly))
	for i, w := range s.Weekly {
		weekly[i] = weeklyRow{table.Date(w.Week), w.Channel, w.Path, table.Float(w.Mean), table.Float(w.Q05), table.Float(w.Q95)}
	}
	sens := make([]sensitivityRow, len(s.Sensitivity))
	for i, r := range s.Sensitivity {
		sens[i] = sensitivityRow{r.Channel, table.Tenths(r.Rho), table.Float(r.Mean), table.Float(r.Q05), table.Float(r.Q95)}
	}
	breakeven := make([]breakevenRow, len(s.Breakeven))
	for i, b := range s.Breakeven {
		breakeven[i] = breakevenRow{b.Channel, table.OptFloat(b.RhoZero)}
	}
	fitted := make([]fittedRow, len(s.Fitted))
	for i, r := range s.Fitted {
		fitted[i] = fittedRow{r.Stage, table.Date(r.Week), table.Float(r.Actual), table.Float(r.Mean), table.Float(r.Q05), table.Float(r.Q95)}
	}
	curves := make([]curveRow, len(s.Curves))
	for i, c := range s.Curves {
		curves[i] = curveRow{c.Channel, c.Path, table.Float(c.WeeklySpend), table.Float(c.Mean), table.Float(c.Q05),
			table.Float(c.Q95), table.Float(c.CurrentWeeklySpend)}
	}
	returns := make([]returnRow, len(s.Returns))
	for i, r := range s.Returns {
		returns[i] = returnRow{r.Channel, r.Window, r.Measure, table.UndefFloat(r.Mean), table.UndefFloat(r.Q05),
			table.UndefFloat(r.Q50), table.UndefFloat(r.Q95)}
	}
	if s.Returns != nil {
		if err := add("returns.csv", returns); err != nil {
			return nil, err
		}
	}
	if err := s.regionFiles(add); err != nil {
		return nil, err
	}
	if s.Implied != nil {
		if err := add("priors_implied.csv", impliedRows(s.Implied)); err != nil {
			return nil, err
		}
	}
	for _, t := range []struct {
		name string
		rows any
	}{
		{"effects.csv", effects}, {"effect_draws.csv", draws}, {"borrowed.csv", borrowed}, {"weekly.csv", weekly},
		{"sensitivity.csv", sens}, {"breakeven.csv", breakeven}, {"fitted.csv", fitted}, {"curves.csv", curves},
	} {
		if err := add(t.name, t.rows); err != nil {
			return nil, err
		}
	}
	return files, nil
}

// rowError is the *Error at line of the table file path, column col.
func rowError(path string, line int, col, format string, args ...any) error {
	return &Error{File: path, Line: line, Column: col, Err: fmt.Errorf(format, args...)}
}

// oneOf checks that the cell s of column col is one of allowed.
func oneOf(path string, line int, col, s string, allowed ...string) error {
	if slices.Contains(allowed, s) {
		return nil
	}
	return rowError(path, line, col, "%q is not one of %s", s, strings.Join(allowed, ", "))
}

// readSplit reads the split's tables of dir and checks them against run:
// channels the spec names, paths, windows, draws that belong to an effect.
func readSplit(dir string, run Run) (Split, error) {
	var s Split
	p := func(name string) string { return filepath.Join(dir, name) }
	spec := run.Spec
	known := func(c string) bool { return slices.Contains(spec.Upper, c) || slices.Contains(spec.Search, c) }
	upper := func(path string, line int, c string) error {
		if !slices.Contains(spec.Upper, c) {
			return rowError(path, line, "channel", "%q is not an upper-funnel channel of spec.json", c)
		}
		return nil
	}

	path := p("effects.csv")
	var effects []effectRow
	lines, err := readTable(path, hintSplit, &effects)
	if err != nil {
		return s, err
	}
	seen := map[DrawKey]bool{}
	for i, r := range effects {
		switch {
		case r.Channel == "":
			return s, rowError(path, lines[i], "channel", "empty cell")
		case !known(r.Channel):
			return s, rowError(path, lines[i], "channel", "%q is not a channel of spec.json", r.Channel)
		}
		if err := oneOf(path, lines[i], "path", r.Path, PathDirect, PathViaSearch, PathTotal, PathMediatedShare); err != nil {
			return s, err
		}
		if r.Window == "" {
			return s, rowError(path, lines[i], "window", "empty cell")
		}
		if _, err := window.Parse(r.Window); err != nil {
			return s, rowError(path, lines[i], "window", "%v", err)
		}
		k := DrawKey{r.Channel, r.Path, r.Window}
		if seen[k] {
			return s, rowError(path, lines[i], "window", "second row for %s %s %s", r.Channel, r.Path, r.Window)
		}
		seen[k] = true
		s.Effects = append(s.Effects, Effect{r.Channel, r.Path, r.Window, float64(r.Mean), float64(r.Q05),
			float64(r.Q50), float64(r.Q95), float64(r.PerUnitSpend),
			float64(r.PriorQ05), float64(r.PriorQ95), float64(r.Contraction), float64(r.PNegligible)})
	}
	if len(s.Effects) == 0 {
		return s, &Error{File: path, Err: fmt.Errorf("no rows")}
	}

	path = p("effect_draws.csv")
	var draws []effectDrawRow
	if lines, err = readTable(path, hintSplit, &draws); err != nil {
		return s, err
	}
	s.EffectDraws = map[DrawKey]DrawSeries{}
	for i, r := range draws {
		k := DrawKey{r.Channel, r.Path, r.Window}
		if !seen[k] {
			return s, rowError(path, lines[i], "window", "no effects.csv row for %s %s %s", k.Channel, k.Path, k.Window)
		}
		ds := s.EffectDraws[k]
		ds.Draw = append(ds.Draw, int(r.Draw))
		ds.Value = append(ds.Value, float64(r.Value))
		s.EffectDraws[k] = ds
	}
	for k, ds := range s.EffectDraws {
		idx := make([]int, len(ds.Draw))
		for i := range idx {
			idx[i] = i
		}
		sort.SliceStable(idx, func(a, b int) bool { return ds.Draw[idx[a]] < ds.Draw[idx[b]] })
		sorted := DrawSeries{Draw: make([]int, len(idx)), Value: make([]float64, len(idx))}
		for i, j := range idx {
			sorted.Draw[i], sorted.Value[i] = ds.Draw[j], ds.Value[j]
			if i > 0 && sorted.Draw[i] == sorted.Draw[i-1] {
				return s, &Error{File: path, Column: ".draw",
					Err: fmt.Errorf("draw %d appears twice for %s %s %s", sorted.Draw[i], k.Channel, k.Path, k.Window)}
			}
		}
		s.EffectDraws[k] = sorted
	}

	path = p("borrowed.csv")
	var borrowed []borrowedRow
	if lines, err = readTable(path, hintSplit, &borrowed); err != nil {
		return s, err
	}
	for i, r := range borrowed {
		if !slices.Contains(spec.Search, r.Channel) {
			return s, rowError(path, lines[i], "channel", "%q is not a paid-search channel of spec.json", r.Channel)
		}
		if err := oneOf(path, lines[i], "measure", r.Measure, "controlled", "apparent", "naive", "borrowed_share"); err != nil {
			return s, err
		}
		if r.Window == "" {
			return s, rowError(path, lines[i], "window", "empty; expected all, a quarter or FROM:TO as in effects.csv")
		}
		s.Borrowed = append(s.Borrowed, Borrowed{r.Channel, r.Measure, r.Window, float64(r.Mean), float64(r.Q05), float64(r.Q50), float64(r.Q95)})
	}

	path = p("weekly.csv")
	var weekly []weeklyRow
	if lines, err = readTable(path, hintSplit, &weekly); err != nil {
		return s, err
	}
	for i, r := range weekly {
		if !known(r.Channel) {
			return s, rowError(path, lines[i], "channel", "%q is not a channel of spec.json", r.Channel)
		}
		if err := oneOf(path, lines[i], "path", r.Path, PathDirect, PathViaSearch, PathTotal); err != nil {
			return s, err
		}
		s.Weekly = append(s.Weekly, Weekly{time.Time(r.Week), r.Channel, r.Path, float64(r.Mean), float64(r.Q05), float64(r.Q95)})
	}

	path = p("sensitivity.csv")
	var sens []sensitivityRow
	if lines, err = readTable(path, hintSplit, &sens); err != nil {
		return s, err
	}
	for i, r := range sens {
		if err := upper(path, lines[i], r.Channel); err != nil {
			return s, err
		}
		if r.Rho < -1 || r.Rho > 1 {
			return s, rowError(path, lines[i], "rho", "%v is outside [-1, 1]", float64(r.Rho))
		}
		s.Sensitivity = append(s.Sensitivity, Sensitivity{r.Channel, float64(r.Rho), float64(r.Mean), float64(r.Q05), float64(r.Q95)})
	}

	path = p("breakeven.csv")
	var breakeven []breakevenRow
	if lines, err = readTable(path, hintSplit, &breakeven); err != nil {
		return s, err
	}
	for i, r := range breakeven {
		if err := upper(path, lines[i], r.Channel); err != nil {
			return s, err
		}
		s.Breakeven = append(s.Breakeven, Breakeven{r.Channel, float64(r.RhoZero)})
	}

	path = p("fitted.csv")
	var fitted []fittedRow
	if lines, err = readTable(path, hintSplit, &fitted); err != nil {
		return s, err
	}
	for i, r := range fitted {
		if err := oneOf(path, lines[i], "stage", r.Stage, "demand", "outcome"); err != nil {
			return s, err
		}
		s.Fitted = append(s.Fitted, Fitted{r.Stage, time.Time(r.Week), float64(r.Actual), float64(r.Mean), float64(r.Q05), float64(r.Q95)})
	}

	path = p("returns.csv")
	if _, err := os.Stat(path); err == nil {
		var returns []returnRow
		if lines, err = readTable(path, hintSplit, &returns); err != nil {
			return s, err
		}
		s.Returns = []Return{}
		for i, r := range returns {
			if err := upper(path, lines[i], r.Channel); err != nil {
				return s, err
			}
			if err := oneOf(path, lines[i], "measure", r.Measure, "return_on_spend", "cost_per_incremental", "marginal_return"); err != nil {
				return s, err
			}
			s.Returns = append(s.Returns, Return{r.Channel, r.Window, r.Measure, float64(r.Mean), float64(r.Q05), float64(r.Q50), float64(r.Q95)})
		}
	}

	if s.Implied, err = readImplied(p("priors_implied.csv"), spec.Upper); err != nil {
		return s, err
	}

	path = p("curves.csv")
	var curves []curveRow
	if lines, err = readTable(path, hintSplit, &curves); err != nil {
		return s, err
	}
	for i, r := range curves {
		if slices.Contains(spec.Search, r.Channel) {
			// paid search: its controlled path only
			if err := oneOf(path, lines[i], "path", r.Path, PathControlled); err != nil {
				return s, err
			}
		} else {
			if err := upper(path, lines[i], r.Channel); err != nil {
				return s, err
			}
			if err := oneOf(path, lines[i], "path", r.Path, PathDirect, PathViaSearch, PathTotal); err != nil {
				return s, err
			}
		}
		if r.WeeklySpend < 0 {
			return s, rowError(path, lines[i], "weekly_spend", "negative spend %v", float64(r.WeeklySpend))
		}
		s.Curves = append(s.Curves, Curve{r.Channel, r.Path, float64(r.WeeklySpend), float64(r.Mean), float64(r.Q05),
			float64(r.Q95), float64(r.CurrentWeeklySpend)})
	}
	return s, nil
}
