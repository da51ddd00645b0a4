package main

import (
	"cmp"
	"fmt"
	"io"
	"math"
	"slices"
	"strings"

	"spillway/funnel/fitfolder"
	"spillway/plots"
)

// printRegions prints, for a panel of regions, per upper channel the
// regions whose share via search differs clearly from the pooled one over
// the whole period (region_differences.csv), or the furthest one when none
// does. It prints nothing for a national split.
func printRegions(w io.Writer, s *fitfolder.Split, upper []string) {
	if !s.HasRegions() {
		return
	}
	fmt.Fprintf(w, "\nRegions (whole period; each region's share via search against the pooled share, per posterior draw; all in %s):\n",
		fitfolder.RegionDifferencesFile)
	for _, ch := range upper {
		var ds []fitfolder.RegionDifference
		for _, d := range s.RegionDifferences {
			if d.Channel == ch && d.Measure == fitfolder.MeasureMediatedShare && d.Window == "all" {
				ds = append(ds, d)
			}
		}
		if len(ds) == 0 {
			continue
		}
		slices.SortStableFunc(ds, func(a, b fitfolder.RegionDifference) int { return cmp.Compare(math.Abs(b.Mean), math.Abs(a.Mean)) })
		by := strings.TrimPrefix(plots.Points(ds[0].Threshold), "+")
		line := func(d fitfolder.RegionDifference) string {
			return fmt.Sprintf("%s %s against %s pooled (%s, 90%% interval %s to %s; P(differs by more than %s) = %s)",
				d.Region, plots.Percent(d.RegionMean), plots.Percent(d.PooledMean), plots.Points(d.Mean),
				strings.TrimSuffix(plots.Points(d.Q05), " pts"), plots.Points(d.Q95), by, plots.Percent(d.PBeyond))
		}
		var clear []fitfolder.RegionDifference
		for _, d := range ds {
			if d.PBeyond >= plots.ClearProbability {
				clear = append(clear, d)
			}
		}
		if len(clear) == 0 {
			fmt.Fprintf(w, "  %s: no region differs by more than %s with probability %.0f%% or more; furthest: %s\n",
				ch, by, 100*plots.ClearProbability, line(ds[0]))
			continue
		}
		fmt.Fprintf(w, "  %s: %d of %d regions differ by more than %s with probability %.0f%% or more:\n", ch, len(clear), len(ds), by, 100*plots.ClearProbability)
		for _, d := range clear {
			fmt.Fprintf(w, "    %s\n", line(d))
		}
	}
}
