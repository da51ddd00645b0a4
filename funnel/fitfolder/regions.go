package fitfolder

import (
	"os"
	"path/filepath"
	"slices"

	"spillway/funnel/table"
	"spillway/funnel/window"
)

// The tables of a region panel. A fit of regional data as a panel writes
// them beside the summed tables (effects.csv, borrowed.csv hold the sum over
// regions); a national fit does not, and Split's region fields are then nil.
const (
	// EffectsByRegionFile is RegionEffect's file.
	EffectsByRegionFile = "effects_by_region.csv"
	// BorrowedByRegionFile is RegionBorrowed's file.
	BorrowedByRegionFile = "borrowed_by_region.csv"
	// RegionDifferencesFile is RegionDifference's file.
	RegionDifferencesFile = "region_differences.csv"
)

// Measures of region_differences.csv.
const (
	// MeasureMediatedShare is the share of a channel's total effect that
	// runs through branded search (a fraction 0..1).
	MeasureMediatedShare = PathMediatedShare
	// MeasureReturnOnSpend is a channel's total effect per unit of its
	// spend (outcome per unit of spend).
	MeasureReturnOnSpend = "return_on_spend"
)

// RegionEffect is one row of effects_by_region.csv: an effect of one
// region, as Effect is for the sum over regions (outcome units of that
// region summed over the window; a fraction for "mediated_share", NaN when
// the region has no spend on the channel in the window).
type RegionEffect struct {
	Region, Channel, Path, Window string
	Mean, Q05, Q50, Q95           float64
	PerUnitSpend                  float64
}

type regionEffectRow struct {
	Region       string           `csv:"region"`
	Channel      string           `csv:"channel"`
	Path         string           `csv:"path"`
	Window       string           `csv:"window"`
	Mean         table.UndefFloat `csv:"mean"`
	Q05          table.UndefFloat `csv:"q05"`
	Q50          table.UndefFloat `csv:"q50"`
	Q95          table.UndefFloat `csv:"q95"`
	PerUnitSpend table.OptFloat   `csv:"per_unit_spend"`
}

// RegionBorrowed is one row of borrowed_by_region.csv: Borrowed for one
// region.
type RegionBorrowed struct {
	Region string
	Borrowed
}

type regionBorrowedRow struct {
	Region  string           `csv:"region"`
	Channel string           `csv:"channel"`
	Measure string           `csv:"measure"`
	Window  string           `csv:"window"`
	Mean    table.UndefFloat `csv:"mean"`
	Q05     table.UndefFloat `csv:"q05"`
	Q50     table.UndefFloat `csv:"q50"`
	Q95     table.UndefFloat `csv:"q95"`
}

// RegionDifference is one row of region_differences.csv: how far one
// region's answer for an upper channel is from the pooled one (the sum over
// regions), computed per posterior draw. Measure is MeasureMediatedShare or
// MeasureReturnOnSpend; RegionMean and PooledMean are the posterior means
// of the region's and the pooled measure; Mean, Q05, Q50 and Q95 summarise
// the per-draw difference region - pooled. Threshold is the stated amount
// a difference must exceed to matter (in the measure's units), PBeyond the
// posterior probability that |region - pooled| > Threshold and PHigher the
// probability that region > pooled.
type RegionDifference struct {
	Region, Channel, Measure, Window string
	RegionMean, PooledMean           float64
	Mean, Q05, Q50, Q95              float64
	Threshold                        float64
	PBeyond, PHigher                 float64
}

type regionDifferenceRow struct {
	Region     string      `csv:"region"`
	Channel    string      `csv:"channel"`
	Measure    string      `csv:"measure"`
	Window     string      `csv:"window"`
	RegionMean table.Float `csv:"region_mean"`
	PooledMean table.Float `csv:"pooled_mean"`
	Mean       table.Float `csv:"difference_mean"`
	Q05        table.Float `csv:"difference_q05"`
	Q50        table.Float `csv:"difference_q50"`
	Q95        table.Float `csv:"difference_q95"`
	Threshold  table.Float `csv:"threshold"`
	PBeyond    table.Float `csv:"p_beyond_threshold"`
	PHigher    table.Float `csv:"p_higher"`
}

// HasRegions reports whether the split holds the region panel's tables.
func (s *Split) HasRegions() bool { return s.RegionEffects != nil }

// Regions returns the regions of effects_by_region.csv in the order they
// first appear (the data's order, as the fit writes them).
func (s *Split) Regions() []string {
	var out []string
	for _, e := range s.RegionEffects {
		if !slices.Contains(out, e.Region) {
			out = append(out, e.Region)
		}
	}
	return out
}

// RegionEffectOf returns the effects_by_region.csv row for region, channel,
// path and window.
func (s *Split) RegionEffectOf(region, channel, path, window string) (RegionEffect, bool) {
	for _, e := range s.RegionEffects {
		if e.Region == region && e.Channel == channel && e.Path == path && e.Window == window {
			return e, true
		}
	}
	return RegionEffect{}, false
}

// RegionDifferenceOf returns the region_differences.csv row for region,
// channel, measure and window; ok is false when there is none (a region
// without spend on the channel in the window has none).
func (s *Split) RegionDifferenceOf(region, channel, measure, window string) (RegionDifference, bool) {
	for _, d := range s.RegionDifferences {
		if d.Region == region && d.Channel == channel && d.Measure == measure && d.Window == window {
			return d, true
		}
	}
	return RegionDifference{}, false
}

// regionFiles renders the region tables through add, when the split has
// them.
func (s *Split) regionFiles(add func(name string, rows any) error) error {
	if !s.HasRegions() {
		return nil
	}
	effects := make([]regionEffectRow, len(s.RegionEffects))
	for i, e := range s.RegionEffects {
		effects[i] = regionEffectRow{e.Region, e.Channel, e.Path, e.Window, table.UndefFloat(e.Mean), table.UndefFloat(e.Q05),
			table.UndefFloat(e.Q50), table.UndefFloat(e.Q95), table.OptFloat(e.PerUnitSpend)}
	}
	borrowed := make([]regionBorrowedRow, len(s.RegionBorrowed))
	for i, b := range s.RegionBorrowed {
		borrowed[i] = regionBorrowedRow{b.Region, b.Channel, b.Measure, b.Window, table.UndefFloat(b.Mean), table.UndefFloat(b.Q05),
			table.UndefFloat(b.Q50), table.UndefFloat(b.Q95)}
	}
	diffs := make([]regionDifferenceRow, len(s.RegionDifferences))
	for i, d := range s.RegionDifferences {
		diffs[i] = regionDifferenceRow{d.Region, d.Channel, d.Measure, d.Window, table.Float(d.RegionMean), table.Float(d.PooledMean),
			table.Float(d.Mean), table.Float(d.Q05), table.Float(d.Q50), table.Float(d.Q95), table.Float(d.Threshold),
			table.Float(d.PBeyond), table.Float(d.PHigher)}
	}
	for _, t := range []struct {
		name string
		rows any
	}{{EffectsByRegionFile, effects}, {BorrowedByRegionFile, borrowed}, {RegionDifferencesFile, diffs}} {
		if err := add(t.name, t.rows); err != nil {
			return err
		}
	}
	return nil
}

// readRegions reads the region tables of dir into f.Split when
// effects_by_region.csv exists (then the other two must), checking each
// row's region against data.csv's regions and its channel, path or measure
// and window as readSplit does for the summed tables.
func readRegions(dir string, f *Fit) error {
	p := func(name string) string { return filepath.Join(dir, name) }
	path := p(EffectsByRegionFile)
	if _, err := os.Stat(path); err != nil {
		return nil
	}
	spec := f.Run.Spec
	known := map[string]bool{}
	if spec.Region != "" {
		for _, r := range f.Data.Regions {
			known[r.Name] = true
		}
	}
	region := func(path string, line int, r string) error {
		switch {
		case r == "":
			return rowError(path, line, "region", "empty cell")
		case spec.Region == "":
			return rowError(path, line, "region", "%q: the fit's data have no region column (spec.json names none)", r)
		case !known[r]:
			return rowError(path, line, "region", "%q is not a region of the data (column %s of data.csv)", r, spec.Region)
		}
		return nil
	}
	win := func(path string, line int, w string) error {
		if w == "" {
			return rowError(path, line, "window", "empty; expected all, a quarter or FROM:TO as in effects.csv")
		}
		if _, err := window.Parse(w); err != nil {
			return rowError(path, line, "window", "%v", err)
		}
		return nil
	}
	upper := func(c string) bool { return slices.Contains(spec.Upper, c) }
	search := func(c string) bool { return slices.Contains(spec.Search, c) }

	var effects []regionEffectRow
	lines, err := readTable(path, hintSplit, &effects)
	if err != nil {
		return err
	}
	type key struct{ a, b, c, d string }
	seen := map[key]int{}
	s := &f.Split
	s.RegionEffects = []RegionEffect{}
	for i, r := range effects {
		if err := region(path, lines[i], r.Region); err != nil {
			return err
		}
		if !upper(r.Channel) && !search(r.Channel) {
			return rowError(path, lines[i], "channel", "%q is not a channel of spec.json", r.Channel)
		}
		if err := oneOf(path, lines[i], "path", r.Path, PathDirect, PathViaSearch, PathTotal, PathMediatedShare); err != nil {
			return err
		}
		if err := win(path, lines[i], r.Window); err != nil {
			return err
		}
		k := key{r.Region, r.Channel, r.Path, r.Window}
		if first, ok := seen[k]; ok {
			return rowError(path, lines[i], "window", "second row for %s %s %s %s (first on line %d)", r.Region, r.Channel, r.Path, r.Window, first)
		}
		seen[k] = lines[i]
		s.RegionEffects = append(s.RegionEffects, RegionEffect{r.Region, r.Channel, r.Path, r.Window, float64(r.Mean), float64(r.Q05),
			float64(r.Q50), float64(r.Q95), float64(r.PerUnitSpend)})
	}

	path = p(BorrowedByRegionFile)
	var borrowed []regionBorrowedRow
	if lines, err = readTable(path, hintSplit, &borrowed); err != nil {
		return err
	}
	clear(seen)
	s.RegionBorrowed = []RegionBorrowed{}
	for i, r := range borrowed {
		if err := region(path, lines[i], r.Region); err != nil {
			return err
		}
		if !search(r.Channel) {
			return rowError(path, lines[i], "channel", "%q is not a paid-search channel of spec.json", r.Channel)
		}
		if err := oneOf(path, lines[i], "measure", r.Measure, "controlled", "apparent", "naive", "borrowed_share"); err != nil {
			return err
		}
		if err := win(path, lines[i], r.Window); err != nil {
			return err
		}
		k := key{r.Region, r.Channel, r.Measure, r.Window}
		if first, ok := seen[k]; ok {
			return rowError(path, lines[i], "window", "second row for %s %s %s %s (first on line %d)", r.Region, r.Channel, r.Measure, r.Window, first)
		}
		seen[k] = lines[i]
		s.RegionBorrowed = append(s.RegionBorrowed, RegionBorrowed{r.Region, Borrowed{r.Channel, r.Measure, r.Window,
			float64(r.Mean), float64(r.Q05), float64(r.Q50), float64(r.Q95)}})
	}

	path = p(RegionDifferencesFile)
	var diffs []regionDifferenceRow
	if lines, err = readTable(path, hintSplit, &diffs); err != nil {
		return err
	}
	clear(seen)
	s.RegionDifferences = []RegionDifference{}
	prob := func(line int, col string, v table.Float) error {
		if v < 0 || v > 1 {
			return rowError(path, line, col, "%v is not a probability (0 to 1)", float64(v))
		}
		return nil
	}
	for i, r := range diffs {
		if err := region(path, lines[i], r.Region); err != nil {
			return err
		}
		if !upper(r.Channel) {
			return rowError(path, lines[i], "channel", "%q is not an upper-funnel channel of spec.json", r.Channel)
		}
		if err := oneOf(path, lines[i], "measure", r.Measure, MeasureMediatedShare, MeasureReturnOnSpend); err != nil {
			return err
		}
		if err := win(path, lines[i], r.Window); err != nil {
			return err
		}
		if r.Threshold < 0 {
			return rowError(path, lines[i], "threshold", "negative threshold %v", float64(r.Threshold))
		}
		if err := prob(lines[i], "p_beyond_threshold", r.PBeyond); err != nil {
			return err
		}
		if err := prob(lines[i], "p_higher", r.PHigher); err != nil {
			return err
		}
		k := key{r.Region, r.Channel, r.Measure, r.Window}
		if first, ok := seen[k]; ok {
			return rowError(path, lines[i], "window", "second row for %s %s %s %s (first on line %d)", r.Region, r.Channel, r.Measure, r.Window, first)
		}
		seen[k] = lines[i]
		s.RegionDifferences = append(s.RegionDifferences, RegionDifference{r.Region, r.Channel, r.Measure, r.Window,
			float64(r.RegionMean), float64(r.PooledMean), float64(r.Mean), float64(r.Q05), float64(r.Q50), float64(r.Q95),
			float64(r.Threshold), float64(r.PBeyond), float64(r.PHigher)})
	}
	return nil
}

// RegionTotal returns the sum of column col over the weeks in w in the
// region called region; ok is false when the data have no such region.
// It panics if col is not a column of the data's spec.
func (d *Data) RegionTotal(region, col string, w window.Window) (total float64, ok bool) {
	for _, r := range d.Regions {
		if r.Name != region {
			continue
		}
		for t, v := range column(d.Spec, r.Series, col) {
			if w.Contains(d.Weeks[t]) {
				total += v
			}
		}
		return total, true
	}
	return 0, false
}
