package validate

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"spillway/funnel/validate/score"
)

// aggregateRegions aggregates a region panel's per-region numbers region
// by region, through the same aggregate as the sums (each region's records
// with every job's convergence records, which are the panel fit's), and
// adds to the sums' verdicts what the regions show.
func (rep *Report) aggregateRegions(m Manifest, main []Record, byRegion map[string][]Record) error {
	var fits []Record
	for _, r := range main {
		if r.Kind == "fit" {
			fits = append(fits, r)
		}
	}
	// the placebo check judges the sums only (panel.go)
	m.Settings.Checks = slices.DeleteFunc(slices.Clone(m.Settings.Checks), func(c string) bool { return c == Placebo })
	for _, name := range m.Regions {
		recs, ok := byRegion[name]
		if !ok {
			continue
		}
		own := make([]Record, 0, len(recs)+len(fits))
		for _, r := range recs {
			r.Region = ""
			own = append(own, r)
		}
		sub, err := aggregate(m, append(own, fits...))
		if err != nil {
			return fmt.Errorf("region %s: %w", name, err)
		}
		rep.Regions = append(rep.Regions, RegionReport{Region: name, Report: sub})
	}
	for i := range rep.Verdicts {
		v := &rep.Verdicts[i]
		switch v.Check {
		case Recovery:
			rep.regionRecovery(v)
		case Holdout:
			rep.regionChecks(v, "forecasts")
		case Stability:
			rep.regionStability(v)
		}
	}
	return nil
}

// regionVerdict returns region r's verdict of check.
func regionVerdict(r RegionReport, check string) (Verdict, bool) {
	for _, v := range r.Verdicts {
		if v.Check == check {
			return v, true
		}
	}
	return Verdict{}, false
}

// regionRecovery pools the regions' coverage of their own true
// whole-period effects and judges it against its binomial range.
func (rep *Report) regionRecovery(v *Verdict) {
	R := rep.Replicates
	if R == 0 {
		return
	}
	var n, in50, in90 float64
	var bad []string
	for _, r := range rep.Regions {
		for _, row := range r.Rows {
			if row.Check != Recovery || strings.HasSuffix(row.Effect, "_quarterly") || math.IsNaN(row.Value) {
				continue
			}
			switch row.Metric {
			case "coverage_90":
				in90 += math.Round(row.Value * float64(R))
				n += float64(R)
			case "coverage_50":
				in50 += math.Round(row.Value * float64(R))
			}
		}
		if rv, ok := regionVerdict(r, Recovery); ok && !rv.OK && !strings.HasPrefix(rv.Headline, "no claim") {
			bad = append(bad, r.Region+" ("+rv.Headline+")")
		}
	}
	if n == 0 {
		return
	}
	N := int(n)
	lo90, hi90 := score.BinomialRange(N, 0.9, 0.95)
	lo50, hi50 := score.BinomialRange(N, 0.5, 0.95)
	v.Details = append(v.Details, fmt.Sprintf("By region (%s): 90%% intervals cover %.0f of %d true whole-period region effects (%s; a calibrated posterior gives %d-%d), 50%% intervals %.0f (%d-%d); the ranges treat the effects as independent, while the effects of one replicate share its errors, so they are a lower bar. validation_by_region.csv has every region's coverage.",
		plural(len(rep.Regions), "region"), in90, N, pct(in90/n), lo90, hi90, in50, lo50, hi50))
	if score.BinomialLowerTail(in90, N, 0.9) < Alpha {
		v.OK = false
		v.Headline += fmt.Sprintf("; per-region 90%% intervals cover too few true values (%s)", pct(in90/n))
	}
	if len(bad) > 0 {
		v.Details = append(v.Details, "Regions whose own recovery found a problem: "+strings.Join(bad, "; ")+".")
	}
}

// regionChecks names the regions whose own check found a problem.
func (rep *Report) regionChecks(v *Verdict, what string) {
	var bad []string
	for _, r := range rep.Regions {
		if rv, ok := regionVerdict(r, v.Check); ok && !rv.OK {
			bad = append(bad, r.Region+" ("+rv.Headline+")")
		}
	}
	if len(bad) == 0 {
		v.Details = append(v.Details, fmt.Sprintf("By region: the %s of each of the %s pass the same check.", what, plural(len(rep.Regions), "region")))
		return
	}
	v.Details = append(v.Details, fmt.Sprintf("By region: %d of %s found a problem: %s.", len(bad), plural(len(rep.Regions), "region"), strings.Join(bad, "; ")))
}

// regionStability reports the largest move of any region's effect and
// flags the verdict when a region's effect moved beyond its level.
func (rep *Report) regionStability(v *Verdict) {
	var best ShiftBar
	bestRegion := ""
	best.Shift = -1
	var flagged []string
	for _, r := range rep.Regions {
		for _, s := range r.Shifts {
			if s.Shift > best.Shift || math.IsNaN(s.Shift) {
				best, bestRegion = s, r.Region
			}
			if s.Flagged {
				flagged = append(flagged, fmt.Sprintf("%s %s %.1f sd (%s)", r.Region, s.Label, s.Shift, s.Worst))
			}
		}
	}
	if bestRegion == "" {
		return
	}
	v.Details = append(v.Details, fmt.Sprintf("By region: the largest move of a region's own effect was %s %s, %.1f sd (%s). A refit without a region compares the others' effects with the reference's, and their sum with the reference's sum over the same regions.", bestRegion, best.Label, best.Shift, best.Worst))
	if len(flagged) > 0 {
		if v.OK {
			v.OK = false
			v.Headline = "unstable by region: " + flagged[0]
		}
		v.Details = append(v.Details, "Region effects that moved beyond their flag level: "+strings.Join(flagged, "; ")+".")
	}
}

// RegionCSV renders validation_by_region.csv: validation.csv's columns
// with the region first (region,check,effect,channel,metric,value), nil
// for a national sweep.
func (rep *Report) RegionCSV() ([]byte, error) {
	if len(rep.Regions) == 0 {
		return nil, nil
	}
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	if err := w.Write(append([]string{"region"}, tableHeader...)); err != nil {
		return nil, err
	}
	for _, r := range rep.Regions {
		for _, row := range r.Rows {
			if err := w.Write(append([]string{r.Region}, tableRow(row)...)); err != nil {
				return nil, err
			}
		}
	}
	w.Flush()
	return b.Bytes(), w.Error()
}

// tableRow is one row of validation.csv's columns.
func tableRow(r Row) []string {
	v := "NA"
	if !math.IsNaN(r.Value) && !math.IsInf(r.Value, 0) {
		v = strconv.FormatFloat(r.Value, 'g', 6, 64)
	}
	return []string{r.Check, r.Effect, r.Channel, r.Metric, v}
}
