package data

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"

	"gonum.org/v1/gonum/stat"
)

// Kinds of Warning.
const (
	// KindCollinear marks two spend columns whose national weekly series have
	// |Pearson correlation| > CollinearLimit.
	KindCollinear = "collinear"
	// KindSparse marks a spend column with spend in fewer than SparseShare of
	// the weeks nationally, or with no spend at all in one region.
	KindSparse = "sparse"
	// KindOutlier marks weeks whose value lies more than OutlierSDs robust
	// standard deviations (1.4826 median absolute deviations) from the
	// column's median (per region); spend is judged on the log scale.
	KindOutlier = "outlier"
	// KindFlat marks a spend column that hardly moves: at least FlatShare of
	// the weeks at one value, or a coefficient of variation below FlatCV.
	KindFlat = "flat"
	// KindNames marks column or region names that differ only in case.
	KindNames = "names"
	// KindCounts marks a queries or outcome column of whole numbers whose
	// weekly mean is below SmallCount in a region (or nationally).
	KindCounts = "counts"
)

// Thresholds of the warnings (common practice, not estimated).
const (
	CollinearLimit = 0.9
	SparseShare    = 0.10
	OutlierSDs     = 5.0
	FlatShare      = 0.9
	FlatCV         = 0.05
	// SmallCount is the weekly mean below which whole-number counts are
	// far from the normal noise the model assumes: a normal curve describes
	// counting noise well from a mean of about 20 (common practice for the
	// Poisson's normal approximation).
	SmallCount = 20.0
	// madToSD turns a median absolute deviation into a standard deviation
	// for normal data (1/Phi^-1(3/4); common practice).
	madToSD = 1.4826
)

// Warning is a problem in the data that does not stop a fit but that a
// modeller should look at.
type Warning struct {
	// Kind is KindCollinear, KindSparse or KindOutlier.
	Kind string
	// Column is the column at fault; for KindCollinear the two columns
	// joined by a comma.
	Column string
	// Message is a self-contained sentence for people.
	Message string
}

// String returns "kind: message".
func (w Warning) String() string { return w.Kind + ": " + w.Message }

// warnings finds the warnings of d, in a fixed order: collinear pairs, sparse
// and flat columns, small counts, then outliers region by region and column
// by column.
func warnings(d *Dataset) []Warning {
	var ws []Warning
	nat := d.National()
	names := d.Spec.Media()
	media := append(append([][]float64(nil), nat.Upper...), nat.Search...)
	for i := range media {
		for j := i + 1; j < len(media); j++ {
			r := stat.Correlation(media[i], media[j], nil)
			if math.Abs(r) > CollinearLimit {
				ws = append(ws, Warning{KindCollinear, names[i] + "," + names[j],
					fmt.Sprintf("spend on %q and %q is nearly collinear (correlation %.2f); the model can hardly tell their effects apart", names[i], names[j], r)})
			}
		}
	}
	n := len(d.Weeks)
	for i, x := range media {
		nz := nonZero(x)
		if float64(nz) < SparseShare*float64(n) {
			ws = append(ws, Warning{KindSparse, names[i],
				fmt.Sprintf("%q has spend in only %d of %d weeks (under %.0f%%); its effect rests on few weeks", names[i], nz, n, 100*SparseShare)})
		}
	}
	for i, x := range media {
		if at, share, flat := flatSeries(x); flat {
			ws = append(ws, Warning{KindFlat, names[i],
				fmt.Sprintf("%q hardly moves (%.0f%% of weeks at %s); the data can hardly tell its effect from the baseline, so its estimate will mostly repeat the prior", names[i], 100*share, strconv.FormatFloat(at, 'g', 6, 64))})
		}
	}
	if len(d.Regions) > 1 {
		for _, r := range d.Regions {
			for i, x := range append(append([][]float64(nil), r.Upper...), r.Search...) {
				if nonZero(x) == 0 {
					ws = append(ws, Warning{KindSparse, names[i],
						fmt.Sprintf("%q has no spend in region %q; that region says nothing about its effect", names[i], r.Name)})
				}
			}
		}
	}
	for i, name := range []string{d.Spec.Queries, d.Spec.Outcome} {
		if w, ok := smallCounts(d, name, i == 1); ok {
			ws = append(ws, w)
		}
	}
	for _, r := range d.Regions {
		cols := append(append([][]float64(nil), r.Upper...), r.Search...)
		cnames := append([]string(nil), names...)
		nspend := len(cols)
		cols = append(cols, r.Queries, r.Outcome)
		cnames = append(cnames, d.Spec.Queries, d.Spec.Outcome)
		for i, x := range cols {
			if w, ok := outliers(cnames[i], r.Name, x, r.Weeks, i < nspend); ok {
				ws = append(ws, w)
			}
		}
	}
	return ws
}

func nonZero(x []float64) int {
	n := 0
	for _, v := range x {
		if v != 0 {
			n++
		}
	}
	return n
}

// outliers looks for values of x more than OutlierSDs robust standard
// deviations (madToSD times the median absolute deviation) from the median.
// Spend (spend true) is right-skewed, so it is judged on the log scale over
// the weeks with spend, and zero weeks are never outliers. Columns with a
// zero MAD are skipped.
func outliers(name, region string, x []float64, weeks []time.Time, spend bool) (Warning, bool) {
	scale := func(v float64) float64 { return v }
	if spend {
		scale = math.Log
	}
	var vals []float64
	for _, v := range x {
		if !spend || v > 0 {
			vals = append(vals, scale(v))
		}
	}
	if len(vals) < 3 {
		return Warning{}, false
	}
	med := median(vals)
	dev := make([]float64, len(vals))
	for i, v := range vals {
		dev[i] = math.Abs(v - med)
	}
	mad := median(dev)
	if !(mad > 0) {
		return Warning{}, false
	}
	var hits []string
	for t, v := range x {
		if spend && v <= 0 {
			continue
		}
		if math.Abs(scale(v)-med) > OutlierSDs*madToSD*mad {
			hits = append(hits, fmt.Sprintf("%s (%s)", weeks[t].Format(DateLayout), fmtNum(v)))
		}
	}
	if len(hits) == 0 {
		return Warning{}, false
	}
	const most = 5
	list := hits
	more := ""
	if len(list) > most {
		more = fmt.Sprintf(" and %d more", len(list)-most)
		list = list[:most]
	}
	in := ""
	if region != "" {
		in = fmt.Sprintf(" in region %q", region)
	}
	weeksWord := "weeks"
	if len(hits) == 1 {
		weeksWord = "week"
	}
	center := med
	if spend {
		center = math.Exp(med)
	}
	return Warning{KindOutlier, name, fmt.Sprintf("%q%s has %d %s more than %g robust standard deviations from its median %s: %s%s",
		name, in, len(hits), weeksWord, OutlierSDs, strconv.FormatFloat(center, 'g', 6, 64), strings.Join(list, ", "), more)}, true
}

// smallCounts looks for regions (or the one national series) where the
// queries (outcome false) or outcome column holds whole numbers averaging
// under SmallCount a week. Counts that small carry rounding and counting
// noise far from the model's normal noise with one sigma for every region;
// on a simulated 200-region panel whose outcome averaged 11 a week and
// whose paid search spend followed the queries, the rounding gave the
// posterior a second mode with a step-shaped paid search curve
// (DEVELOPERS.md).
func smallCounts(d *Dataset, name string, outcome bool) (Warning, bool) {
	type small struct {
		region string
		mean   float64
	}
	var hits []small
	for _, r := range d.Regions {
		x := r.Queries
		if outcome {
			x = r.Outcome
		}
		whole := len(x) > 0 && !slices.ContainsFunc(x, func(v float64) bool { return v != math.Trunc(v) })
		if m := stat.Mean(x, nil); whole && m < SmallCount {
			hits = append(hits, small{r.Name, m})
		}
	}
	if len(hits) == 0 {
		return Warning{}, false
	}
	least := slices.MinFunc(hits, func(a, b small) int { return cmp.Compare(a.mean, b.mean) })
	mean := strconv.FormatFloat(least.mean, 'f', 1, 64)
	where, advice := "("+mean+")", "read its intervals with that in mind"
	if len(d.Regions) > 1 {
		where = fmt.Sprintf("in %d of %d regions (least: %q, %s)", len(hits), len(d.Regions), least.region, mean)
		advice = "summing small regions into larger ones would help"
	}
	return Warning{KindCounts, name, fmt.Sprintf("%q averages fewer than %g a week %s; whole-number counts this small carry rounding and counting noise that the model's normal noise does not describe, which can bias the fit or give its posterior more than one mode; %s", name, SmallCount, where, advice)}, true
}

// median returns the median of x (the mean of the two middle values for an
// even count) without modifying x.
func median(x []float64) float64 {
	s := slices.Clone(x)
	slices.Sort(s)
	n := len(s)
	if n == 0 {
		return math.NaN()
	}
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// flatSeries reports whether x hardly moves: at least FlatShare of its
// values equal to one non-zero value (the most common value at, with its
// share), or a coefficient of variation below FlatCV.
func flatSeries(x []float64) (at, share float64, flat bool) {
	count := map[float64]int{}
	best := 0
	for _, v := range x {
		count[v]++
		if c := count[v]; c > best || c == best && v < at {
			best, at = c, v
		}
	}
	share = float64(best) / float64(len(x))
	m, sd := stat.MeanStdDev(x, nil)
	// mostly zero is sparse spend, warned about as such
	return at, share, at != 0 && share >= FlatShare || m > 0 && sd/m < FlatCV
}

// caseTwins returns the pairs of distinct names that are equal apart from
// case, in order of first appearance.
func caseTwins(names []string) [][2]string {
	seen := map[string]string{}
	var out [][2]string
	for _, n := range names {
		if n == "" {
			continue
		}
		k := strings.ToLower(n)
		if first, ok := seen[k]; ok && first != n {
			out = append(out, [2]string{first, n})
			continue
		}
		seen[k] = n
	}
	return out
}
