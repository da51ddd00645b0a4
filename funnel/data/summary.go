package data

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"gonum.org/v1/gonum/stat"
)

// Summary is an overview of a Dataset, computed on the national series (see
// Dataset.National).
type Summary struct {
	// File is the data file name.
	File string
	// Weeks is the number of weeks; First and Last are the first and last
	// week-start dates.
	Weeks       int
	First, Last time.Time
	// Regions are the regions in file order; empty for national data.
	Regions []RegionSummary
	// Columns summarises each column the spec uses except date, region and
	// population, in the order of Spec.Columns.
	Columns []ColumnSummary
	// Media names the spend columns (upper, then search) in the order of the
	// rows and columns of Correlation.
	Media []string
	// Correlation holds the Pearson correlations of the national weekly spend
	// series; NaN where a series is constant.
	Correlation [][]float64
	// Costs summarise the cost per unit of each channel given with an
	// exposure (or reach) column, in the order of Spec.Upper.
	Costs []CostSummary
	// Warnings are the dataset's warnings.
	Warnings []Warning
}

// CostSummary is the national cost per unit (spend over exposure, or over
// reach for a reach column) of one channel, over the weeks with spend.
type CostSummary struct {
	// Spend and Column are the spend and the exposure (or reach) column;
	// Unit is "exposure" or "reach".
	Spend, Column, Unit string
	// Min, Median and Max are over the weeks with spend.
	Min, Median, Max float64
	// First and Last are the medians of the first and the last
	// CostWeeks weeks with spend.
	First, Last float64
	// Break is the declared measurement break's first week ("" if none).
	Break string
}

// CostWeeks is how many weeks with spend the first and last medians of a
// cost-per-unit summary take (a quarter, as Scaled.CostPerUnit's latest
// weeks).
const CostWeeks = 13

// RegionSummary is the name and population (0 when absent) of a region
// and its totals over weeks: all spend columns together, queries and the
// outcome, in the data's units.
type RegionSummary struct {
	Name                    string
	Population              float64
	Spend, Queries, Outcome float64
}

// ColumnSummary describes one column's national weekly series.
type ColumnSummary struct {
	// Name is the column name; Role is "upper", "search", "queries",
	// "outcome", "controls", "exposure", "reach" or "frequency".
	Name, Role string
	// Min, Median and Max are taken over weeks, in the column's raw units.
	Min, Median, Max float64
	// ZeroWeeks counts the weeks whose value is zero.
	ZeroWeeks int
	// Total is the sum over weeks (and regions); for controls, reach and
	// frequencies it is 0.
	Total float64
	// Share is the column's part of all spend (Total over the sum of the
	// spend columns' totals); 0 for other columns.
	Share float64
}

// Summarize describes d: weeks, regions, date range, each column's minimum,
// median, maximum and zero weeks, spend totals and shares, the correlations
// between spend columns and the warnings.
func Summarize(d *Dataset) Summary {
	nat := d.National()
	s := Summary{File: d.File, Weeks: len(d.Weeks), First: d.Weeks[0], Last: d.Weeks[len(d.Weeks)-1], Warnings: d.Warnings}
	if d.Spec.Region != "" {
		sum := func(x []float64) float64 {
			t := 0.0
			for _, v := range x {
				t += v
			}
			return t
		}
		for _, r := range d.Regions {
			rs := RegionSummary{Name: r.Name, Population: r.Population, Queries: sum(r.Queries), Outcome: sum(r.Outcome)}
			for _, x := range r.Upper {
				rs.Spend += sum(x)
			}
			for _, x := range r.Search {
				rs.Spend += sum(x)
			}
			s.Regions = append(s.Regions, rs)
		}
	}
	add := func(name, role string, x []float64) {
		c := ColumnSummary{Name: name, Role: role, Min: math.Inf(1), Max: math.Inf(-1), Median: median(x)}
		for _, v := range x {
			c.Min = math.Min(c.Min, v)
			c.Max = math.Max(c.Max, v)
			if v == 0 {
				c.ZeroWeeks++
			}
			if role != "controls" && role != "frequency" && role != "reach" {
				c.Total += v
			}
		}
		s.Columns = append(s.Columns, c)
	}
	for i, n := range d.Spec.Upper {
		add(n, "upper", nat.Upper[i])
	}
	for i, n := range d.Spec.Search {
		add(n, "search", nat.Search[i])
	}
	add(d.Spec.Queries, "queries", nat.Queries)
	add(d.Spec.Outcome, "outcome", nat.Outcome)
	for i, n := range d.Spec.Controls {
		add(n, "controls", nat.Controls[i])
	}
	for c, col := range d.Spec.Upper {
		e, ok := d.Spec.ExposureOf(col)
		if !ok || c >= len(nat.Exposure) || nat.Exposure[c] == nil {
			continue
		}
		unit := "exposure"
		if e.Frequency != "" {
			unit = "reach"
		}
		add(e.Column, unit, nat.Exposure[c])
		if e.Frequency != "" && c < len(nat.Frequency) && nat.Frequency[c] != nil {
			add(e.Frequency, "frequency", nat.Frequency[c])
		}
		var cost []float64
		for t, x := range nat.Exposure[c] {
			if sp := nat.Upper[c][t]; sp > 0 && x > 0 {
				cost = append(cost, sp/x)
			}
		}
		if len(cost) == 0 {
			continue
		}
		k := min(CostWeeks, len(cost))
		cs := CostSummary{Spend: col, Column: e.Column, Unit: unit, Min: slices.Min(cost), Median: median(cost), Max: slices.Max(cost),
			First: median(cost[:k]), Last: median(cost[len(cost)-k:]), Break: e.Break}
		s.Costs = append(s.Costs, cs)
	}
	spend := 0.0
	nm := len(d.Spec.Upper) + len(d.Spec.Search)
	for _, c := range s.Columns[:nm] {
		spend += c.Total
	}
	for i := range s.Columns[:nm] {
		s.Columns[i].Share = s.Columns[i].Total / spend
	}
	s.Media = d.Spec.Media()
	media := append(append([][]float64(nil), nat.Upper...), nat.Search...)
	s.Correlation = make([][]float64, nm)
	for i := range media {
		s.Correlation[i] = make([]float64, nm)
		for j := range media {
			if i == j {
				s.Correlation[i][j] = 1
				continue
			}
			s.Correlation[i][j] = stat.Correlation(media[i], media[j], nil)
		}
	}
	return s
}

// WriteText writes s as aligned plain text, the report of `spillway inspect`.
func (s Summary) WriteText(w io.Writer) error {
	ew := &errWriter{w: w}
	fmt.Fprintf(ew, "File:     %s\n", s.File)
	fmt.Fprintf(ew, "Weeks:    %d (%s to %s)\n", s.Weeks, s.First.Format(DateLayout), s.Last.Format(DateLayout))
	if len(s.Regions) == 0 {
		fmt.Fprintf(ew, "Regions:  none (national data)\n")
	} else {
		fmt.Fprintf(ew, "Regions:  %d (fit and run fit them as a region panel; --national fits their national sum)\n", len(s.Regions))
	}
	if len(s.Regions) > 0 {
		fmt.Fprintln(ew)
		pop := s.Regions[0].Population > 0
		head := []string{"region"}
		if pop {
			head = append(head, "population")
		}
		rows := [][]string{append(head, "spend", "share of spend", "queries", "outcome")}
		all := 0.0
		for _, r := range s.Regions {
			all += r.Spend
		}
		for _, r := range s.Regions {
			row := []string{r.Name}
			if pop {
				row = append(row, human(r.Population))
			}
			share := "-"
			if all > 0 {
				share = fmt.Sprintf("%.1f%%", 100*r.Spend/all)
			}
			rows = append(rows, append(row, human(r.Spend), share, human(r.Queries), human(r.Outcome)))
		}
		writeTable(ew, rows, 1)
	}
	fmt.Fprintln(ew)
	rows := [][]string{{"column", "role", "min", "median", "max", "zero weeks", "total", "share of spend"}}
	for _, c := range s.Columns {
		total, share := "", ""
		if c.Role != "controls" && c.Role != "frequency" && c.Role != "reach" {
			total = human(c.Total)
		}
		if c.Role == "upper" || c.Role == "search" {
			share = fmt.Sprintf("%.1f%%", 100*c.Share)
		}
		rows = append(rows, []string{c.Name, c.Role, human(c.Min), human(c.Median), human(c.Max), strconv.Itoa(c.ZeroWeeks), total, share})
	}
	writeTable(ew, rows, 2)
	if len(s.Media) > 1 {
		fmt.Fprintf(ew, "\nCorrelation of weekly spend:\n")
		rows = [][]string{append([]string{""}, s.Media...)}
		for i, n := range s.Media {
			row := []string{n}
			for j := range s.Media {
				switch r := s.Correlation[i][j]; {
				case math.IsNaN(r):
					row = append(row, "-")
				case math.Abs(r) < 0.005:
					row = append(row, "0.00")
				default:
					row = append(row, strconv.FormatFloat(r, 'f', 2, 64))
				}
			}
			rows = append(rows, row)
		}
		writeTable(ew, rows, 1)
	}
	if len(s.Costs) > 0 {
		fmt.Fprintf(ew, "\nCost per unit (spend over exposure or reach, weeks with spend):\n")
		rows = [][]string{{"spend", "per unit of", "min", "median", "max", fmt.Sprintf("first %d weeks", CostWeeks), fmt.Sprintf("last %d weeks", CostWeeks), "change", "break"}}
		for _, c := range s.Costs {
			b := c.Break
			if b == "" {
				b = "-"
			}
			rows = append(rows, []string{c.Spend, c.Column, human(c.Min), human(c.Median), human(c.Max), human(c.First), human(c.Last),
				fmt.Sprintf("%+.0f%%", 100*(c.Last/c.First-1)), b})
		}
		writeTable(ew, rows, 2)
		fmt.Fprintf(ew, "A change in cost per unit means the same spend bought a different amount of exposure; a jump rather than a drift is warned about below.\n")
	}
	if len(s.Warnings) == 0 {
		fmt.Fprintf(ew, "\nWarnings: none\n")
	} else {
		fmt.Fprintf(ew, "\nWarnings: %d\n", len(s.Warnings))
		for _, wn := range s.Warnings {
			fmt.Fprintf(ew, "  %s\n", wn)
		}
	}
	return ew.err
}

// writeTable writes rows as columns two spaces apart, the first left
// columns left-aligned and the others right-aligned.
func writeTable(w io.Writer, rows [][]string, left int) {
	var width []int
	for _, r := range rows {
		for j, c := range r {
			if j == len(width) {
				width = append(width, 0)
			}
			width[j] = max(width[j], utf8.RuneCountInString(c))
		}
	}
	for _, r := range rows {
		var b strings.Builder
		for j, c := range r {
			pad := strings.Repeat(" ", width[j]-utf8.RuneCountInString(c))
			if j > 0 {
				b.WriteString("  ")
			}
			if j < left {
				b.WriteString(c + pad)
			} else {
				b.WriteString(pad + c)
			}
		}
		fmt.Fprintln(w, strings.TrimRight(b.String(), " "))
	}
}

// human formats a number for reading: integers in full, others with about
// four significant digits.
func human(v float64) string {
	switch a := math.Abs(v); {
	case v == math.Trunc(v) && a < 1e15:
		return strconv.FormatFloat(v, 'f', 0, 64)
	case a >= 1000:
		return strconv.FormatFloat(v, 'f', 0, 64)
	case a >= 1:
		return strconv.FormatFloat(v, 'f', 2, 64)
	}
	return strconv.FormatFloat(v, 'g', 4, 64)
}

// errWriter keeps the first write error and drops later writes.
type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) Write(p []byte) (int, error) {
	if e.err != nil {
		return len(p), nil
	}
	n, err := e.w.Write(p)
	e.err = err
	return n, nil
}
