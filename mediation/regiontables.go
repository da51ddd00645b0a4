package mediation

import (
	"fmt"
	"math"
	"slices"

	"spillway/funnel/fitfolder"
	"spillway/funnel/stat"
)

// The stated amounts a region's answer must differ from the pooled one by
// to matter (region_differences.csv's threshold column). They are choices
// of this project, not estimates: ten percentage points of the share via
// search, and a fifth of the pooled return on spend, differences that would
// change how a brand team reads a channel or a region's budget.
const (
	// ShareThreshold is the threshold of the mediated share, a fraction.
	ShareThreshold = 0.10
	// ReturnThreshold is the threshold of the return on spend, relative to
	// the pooled return's posterior mean.
	ReturnThreshold = 0.20
)

// RegionEffectsTable returns effects_by_region.csv: the rows EffectsTable
// makes of each region's result (without the prior comparison, which is
// made for the sum over regions), region after region in the order given.
// regions[g] names results[g].
func RegionEffectsTable(regions []string, results []*Result) []fitfolder.RegionEffect {
	checkRegions(regions, results)
	var rows []fitfolder.RegionEffect
	for g, r := range results {
		for _, e := range EffectsTable(r, nil) {
			rows = append(rows, fitfolder.RegionEffect{Region: regions[g], Channel: e.Channel, Path: e.Path, Window: e.Window,
				Mean: e.Mean, Q05: e.Q05, Q50: e.Q50, Q95: e.Q95, PerUnitSpend: e.PerUnitSpend})
		}
	}
	return rows
}

// RegionBorrowedTable returns borrowed_by_region.csv: BorrowedTable of
// each region's result, region after region in the order given.
func RegionBorrowedTable(regions []string, results []*Result) []fitfolder.RegionBorrowed {
	checkRegions(regions, results)
	var rows []fitfolder.RegionBorrowed
	for g, r := range results {
		for _, b := range BorrowedTable(r) {
			rows = append(rows, fitfolder.RegionBorrowed{Region: regions[g], Borrowed: b})
		}
	}
	return rows
}

// RegionDifferences returns region_differences.csv: for every region,
// upper channel and window in which both the region and the pooled result
// (the sum over regions) have spend on the channel, how far the region's
// mediated share and return on spend are from the pooled ones, per
// posterior draw (draw d of every region pairs with draw d of pooled, as
// the split pairs the stages' draws): the share is via_search / total and
// the return total / spend of each result, so pooled needs only the summed
// via-search and total effects and spend. The difference region - pooled is
// summarised by its mean and 5/50/95% quantiles, with the posterior
// probability that it exceeds the threshold in size (ShareThreshold; for
// the return, ReturnThreshold times the pooled return's mean) and that it
// is positive. A draw whose share is undefined (a zero total) is left out
// of that row.
func RegionDifferences(regions []string, results []*Result, pooled *Result) ([]fitfolder.RegionDifference, error) {
	checkRegions(regions, results)
	type key struct{ channel, window string }
	type pair struct{ via, total *Effect }
	index := func(r *Result) map[key]pair {
		m := map[key]pair{}
		for i := range r.Effects {
			e := &r.Effects[i]
			p := m[key{e.Channel, e.Window}]
			switch e.Path {
			case "via_search":
				p.via = e
			case "total":
				p.total = e
			}
			m[key{e.Channel, e.Window}] = p
		}
		return m
	}
	pool := index(pooled)
	var keys []key // in the pooled result's order
	for _, e := range pooled.Effects {
		if e.Path == "total" {
			keys = append(keys, key{e.Channel, e.Window})
		}
	}
	var nd int
	if len(keys) > 0 {
		nd = len(pool[keys[0]].total.Draws)
	}
	var rows []fitfolder.RegionDifference
	d := make([]float64, 0, nd)
	rv, pv := make([]float64, nd), make([]float64, nd)
	for g, r := range results {
		own := index(r)
		for _, k := range keys {
			p, q := pool[k], own[k]
			if p.via == nil || p.total == nil || q.via == nil || q.total == nil {
				return nil, fmt.Errorf("mediation: region %s or the pooled result has no via-search or total effect of %s in window %s", regions[g], k.channel, k.window)
			}
			if len(q.total.Draws) != nd || len(q.via.Draws) != nd || len(p.via.Draws) != nd {
				return nil, fmt.Errorf("mediation: region %s has %d draws of %s's total in window %s, the pooled result %d; regions pair draws by index",
					regions[g], len(q.total.Draws), k.channel, k.window, nd)
			}
			if !(q.total.Spend > 0) || !(p.total.Spend > 0) {
				continue
			}
			// the mediated share, of the region and of the sum (via over
			// total, both additive over regions)
			for i := range rv {
				rv[i] = q.via.Draws[i] / q.total.Draws[i]
				pv[i] = p.via.Draws[i] / p.total.Draws[i]
			}
			if row, ok := difference(d, rv, pv, ShareThreshold); ok {
				row.Region, row.Channel, row.Measure, row.Window = regions[g], k.channel, fitfolder.MeasureMediatedShare, k.window
				rows = append(rows, row)
			}
			// the return on spend
			for i := range rv {
				rv[i] = q.total.Draws[i] / q.total.Spend
				pv[i] = p.total.Draws[i] / p.total.Spend
			}
			if row, ok := difference(d, rv, pv, ReturnThreshold*math.Abs(stat.Mean(pv))); ok {
				row.Region, row.Channel, row.Measure, row.Window = regions[g], k.channel, fitfolder.MeasureReturnOnSpend, k.window
				rows = append(rows, row)
			}
		}
	}
	return rows, nil
}

// difference summarises the per-draw difference region - pooled over the
// draws where both are defined; d is scratch. ok is false when no draw is.
func difference(d, region, pooled []float64, threshold float64) (row fitfolder.RegionDifference, ok bool) {
	d = d[:0]
	var rs, ps float64
	beyond, higher := 0, 0
	for i := range region {
		a, b := region[i], pooled[i]
		if math.IsNaN(a) || math.IsNaN(b) || math.IsInf(a, 0) || math.IsInf(b, 0) {
			continue
		}
		d = append(d, a-b)
		rs += a
		ps += b
		if math.Abs(a-b) > threshold {
			beyond++
		}
		if a > b {
			higher++
		}
	}
	if len(d) == 0 {
		return row, false
	}
	n := float64(len(d))
	s := Summarise(d)
	return fitfolder.RegionDifference{RegionMean: rs / n, PooledMean: ps / n, Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95,
		Threshold: threshold, PBeyond: float64(beyond) / n, PHigher: float64(higher) / n}, true
}

// checkRegions panics when regions do not name results one to one or name
// a region twice (a programmer's error: the caller builds both).
func checkRegions(regions []string, results []*Result) {
	if len(regions) != len(results) {
		panic(fmt.Sprintf("mediation: %d region names for %d results", len(regions), len(results)))
	}
	s := slices.Clone(regions)
	slices.Sort(s)
	for i := 1; i < len(s); i++ {
		if s[i] == s[i-1] {
			panic("mediation: region " + s[i] + " named twice")
		}
	}
}
