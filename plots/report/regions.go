package report

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"

	"spillway/funnel/fitfolder"
	"spillway/plots"
)

// regionsView is the Regions section, shown for a panel of regions: per
// upper channel and measure, the regions whose answer differs most from
// the pooled one (all regions summed) and whether that difference is
// larger than its uncertainty, from region_differences.csv (computed per
// posterior draw, region against pooled, by the split).
type regionsView struct {
	Intro    string
	Findings []string
	Rows     []regionRow
	Note     string
}

type regionRow struct {
	Channel, Region, Measure     string
	Value, Pooled                string
	Difference, Interval, Beyond string
	Verdict                      string
	Clear                        bool
}

// regionsShown is how many regions per channel and measure the table
// shows besides those that differ clearly: the furthest from pooled.
const regionsShown = 3

// regionsSection builds the Regions section of f over the whole period,
// nil when f is not a panel of regions. k and perLabel scale returns on
// spend as the rest of the report does. It also returns the headline
// finding, empty when no region differs clearly.
func regionsSection(f *fitfolder.Fit, k float64, perLabel string) (*regionsView, string) {
	if !f.HasRegions() {
		return nil, ""
	}
	lab := plots.LabelsOf(f)
	outcome := lab.Outcome()
	regions := f.Regions()
	v := &regionsView{Intro: fmt.Sprintf("The fit is a panel of %d regions (column %s): each region has its own effects, "+
		"drawn towards the others by partial pooling, and the effects elsewhere in this report are their sum. "+
		"Here each region's answer over the whole period is set against the pooled one, draw by draw of the posterior, "+
		"for the share of each channel's effect that runs through branded search and its return on spend. "+
		"Every region's effects are in %s and %s.", len(regions), f.Run.Spec.Region, fitfolder.EffectsByRegionFile, fitfolder.BorrowedByRegionFile)}
	var headline []string
	for _, ch := range f.Run.Spec.Upper {
		name := lab.Channel(ch)
		for _, m := range []string{fitfolder.MeasureMediatedShare, fitfolder.MeasureReturnOnSpend} {
			var ds []fitfolder.RegionDifference
			for _, d := range f.RegionDifferences {
				if d.Channel == ch && d.Measure == m && d.Window == "all" {
					ds = append(ds, d)
				}
			}
			if len(ds) == 0 {
				continue
			}
			// furthest from pooled first
			slices.SortStableFunc(ds, func(a, b fitfolder.RegionDifference) int { return cmp.Compare(math.Abs(b.Mean), math.Abs(a.Mean)) })
			var clear []string
			for i, d := range ds {
				isClear := d.PBeyond >= plots.ClearProbability
				if isClear {
					clear = append(clear, d.Region)
				}
				if i >= regionsShown && !isClear {
					continue
				}
				v.Rows = append(v.Rows, regionRowOf(d, name, k, isClear))
			}
			what, by := "share via search", thresholdText(ds[0])
			if m == fitfolder.MeasureReturnOnSpend {
				what = "return on spend"
			}
			far := ds[0]
			switch {
			case len(clear) > 0:
				v.Findings = append(v.Findings, fmt.Sprintf("%s's %s: %s of %d regions %s from the pooled %s by more than %s with probability at least %.0f%%: %s. "+
					"The furthest, %s, is at %s against %s pooled (difference %s, 90%% interval %s).",
					plots.Capital(name), what, count(len(clear)), len(ds), plural(len(clear), "differs", "differ"), value(far.PooledMean, m, k), by,
					100*plots.ClearProbability, someOf(clear), far.Region, value(far.RegionMean, m, k), value(far.PooledMean, m, k),
					diffText(far.Mean, m, k), diffInterval(far.Q05, far.Q95, m, k)))
				if m == fitfolder.MeasureMediatedShare {
					headline = append(headline, fmt.Sprintf("%s (%s)", someOf(clear), name))
				}
			default:
				v.Findings = append(v.Findings, fmt.Sprintf("%s's %s: no region differs from the pooled %s by more than %s with probability %.0f%% or more; "+
					"the furthest, %s at %s (difference %s, 90%% interval %s), is within its uncertainty.",
					plots.Capital(name), what, value(far.PooledMean, m, k), by, 100*plots.ClearProbability,
					far.Region, value(far.RegionMean, m, k), diffText(far.Mean, m, k), diffInterval(far.Q05, far.Q95, m, k)))
			}
		}
	}
	v.Note = fmt.Sprintf("Difference: the region's value minus the pooled one (all regions summed), per posterior draw; its mean and 90%% interval. "+
		"Probability: the posterior probability that the difference is larger in size than the stated amount (%s for the share via search, "+
		"a fifth of the pooled value for the return on spend, in %s %s). A difference is called larger than its uncertainty when that probability "+
		"is at least %.0f%%. The table shows, per channel and measure, the %d regions furthest from the pooled value and every region that differs clearly. "+
		"Partial pooling draws regions with little data towards the others, so a region that looks like the pooled one may only lack the data to differ; "+
		"among many regions a few high probabilities are expected by chance alone; before moving budget between regions, confirm with a regional lift test.",
		"10 percentage points", outcome, perLabel, 100*plots.ClearProbability, regionsShown)
	if len(headline) == 0 {
		return v, ""
	}
	return v, fmt.Sprintf("By region, the share via search differs clearly from the pooled one in %s; see Regions.", strings.Join(headline, "; "))
}

func regionRowOf(d fitfolder.RegionDifference, channel string, k float64, clear bool) regionRow {
	m := d.Measure
	row := regionRow{Channel: channel, Region: d.Region, Measure: d.Measure, Value: value(d.RegionMean, m, k), Pooled: value(d.PooledMean, m, k),
		Difference: diffText(d.Mean, m, k), Interval: diffInterval(d.Q05, d.Q95, m, k), Beyond: plots.Percent(d.PBeyond), Clear: clear}
	switch {
	case clear:
		row.Verdict = "yes: differs by more than " + thresholdText(d)
	case d.Q05 > 0 || d.Q95 < 0:
		row.Verdict = "differs, but not clearly by more than " + thresholdText(d)
	default:
		row.Verdict = "no: within its uncertainty"
	}
	return row
}

// thresholdText states a row's threshold: "10 pts" or "20% of pooled".
func thresholdText(d fitfolder.RegionDifference) string {
	if d.Measure == fitfolder.MeasureMediatedShare {
		return strings.TrimPrefix(plots.Points(d.Threshold), "+")
	}
	if d.PooledMean != 0 {
		return plots.Percent(d.Threshold/math.Abs(d.PooledMean)) + " of pooled"
	}
	return plots.Number(d.Threshold)
}

func value(v float64, measure string, k float64) string {
	if measure == fitfolder.MeasureMediatedShare {
		return plots.Percent(v)
	}
	return plots.Number(v * k)
}

func diffText(v float64, measure string, k float64) string {
	if measure == fitfolder.MeasureMediatedShare {
		return plots.Points(v)
	}
	return plots.Signed(v * k)
}

func diffInterval(lo, hi float64, measure string, k float64) string {
	if measure == fitfolder.MeasureMediatedShare {
		return pointsInterval(lo, hi)
	}
	return signedInterval(lo*k, hi*k)
}

func count(n int) string { return fmt.Sprint(n) }

func plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

// namedUpTo is the most regions a sentence names; the rest are counted.
const namedUpTo = 5

// someOf lists names, at most namedUpTo of them and a count of the rest:
// "A, B, C, D, E and 3 more".
func someOf(names []string) string {
	if len(names) <= namedUpTo {
		return plots.List(names)
	}
	return strings.Join(names[:namedUpTo], ", ") + fmt.Sprintf(" and %d more", len(names)-namedUpTo)
}
