package data

import (
	"encoding/csv"
	"io"
	"time"
)

// Series is the weekly data of one region (or the nation), in raw units as
// read from the file: spend in currency, queries in searches, the outcome in
// its own unit, controls as given.
type Series struct {
	// Weeks are the week-start dates (UTC midnight), consecutive 7-day steps.
	Weeks []time.Time
	// Upper holds upper-funnel spend, [channel][week], in the order of Spec.Upper.
	Upper [][]float64
	// Search holds paid-search spend, [channel][week], in the order of Spec.Search.
	Search [][]float64
	// Queries is the branded query volume per week.
	Queries []float64
	// Outcome is the outcome per week.
	Outcome []float64
	// Controls holds the controls, [control][week], in the order of
	// Spec.Controls; nil when there are none.
	Controls [][]float64
	// Exposure holds each upper-funnel channel's exposure, [channel][week]
	// in the order of Spec.Upper, nil for a channel without an exposure
	// column; Exposure itself is nil when no channel has one.
	Exposure [][]float64
	// Frequency holds, for a channel whose exposure is its reach, the
	// average frequency (exposures per person reached), [channel][week] in
	// the order of Spec.Upper; nil rows and nil as for Exposure.
	Frequency [][]float64
}

// Region is the Series of one region with its name and population.
type Region struct {
	// Name is the region's name; "" for national data.
	Name string
	// Population is the region's population; 0 when the spec has none.
	Population float64
	Series
}

// Dataset is a checked input file: every region covers the same weeks
// (at least MinWeeks), values are finite, spend, queries and outcome are
// non-negative, every spend column has spend in some week and no control is
// constant within a region.
type Dataset struct {
	// Spec is the spec the file was read with.
	Spec Spec
	// File is the file name given to Read or Load.
	File string
	// Weeks are the week-start dates shared by all regions.
	Weeks []time.Time
	// Regions are the regions in the order of their first row; one region
	// with Name "" for national data.
	Regions []Region
	// Warnings are the problems found that do not stop a fit.
	Warnings []Warning
}

// National returns the national series: spend, queries and outcome summed
// over regions, controls averaged over regions weighted by population (a
// plain mean when the data has no population). For national data it is a
// copy of the single region's series. The returned slices are new.
func (d *Dataset) National() Series {
	n := len(d.Weeks)
	first := d.Regions[0].Series
	s := Series{
		Weeks:   append([]time.Time(nil), d.Weeks...),
		Upper:   zeros(len(first.Upper), n),
		Search:  zeros(len(first.Search), n),
		Queries: make([]float64, n),
		Outcome: make([]float64, n),
	}
	if len(first.Controls) > 0 {
		s.Controls = zeros(len(first.Controls), n)
	}
	if first.Frequency != nil {
		s.Frequency = make([][]float64, len(first.Frequency))
		for c, x := range first.Frequency {
			if x != nil {
				s.Frequency[c] = make([]float64, n)
			}
		}
	}
	if first.Exposure != nil {
		s.Exposure = make([][]float64, len(first.Exposure))
		for c, x := range first.Exposure {
			if x != nil {
				s.Exposure[c] = make([]float64, n)
			}
		}
	}
	// Weights relative to the largest population, so that the sum cannot
	// overflow.
	weights := make([]float64, len(d.Regions))
	most := 0.0
	for _, r := range d.Regions {
		most = max(most, r.Population)
	}
	total := 0.0
	for g, r := range d.Regions {
		if most > 0 {
			weights[g] = r.Population / most
		}
		total += weights[g]
	}
	if !(total > 0) {
		for g := range weights {
			weights[g] = 1
		}
		total = float64(len(weights))
	}
	for g, r := range d.Regions {
		addTo(s.Upper, r.Upper, 1)
		addTo(s.Search, r.Search, 1)
		addTo(s.Controls, r.Controls, weights[g]/total)
		addTo(s.Exposure, r.Exposure, 1)
		addWeighted(s.Frequency, r.Frequency, r.Exposure)
		for t := range n {
			s.Queries[t] += r.Queries[t]
			s.Outcome[t] += r.Outcome[t]
		}
	}
	// a frequency sums as impressions (reach times frequency); back to
	// exposures per person reached nationally
	for c, f := range s.Frequency {
		for t := range f {
			if r := s.Exposure[c][t]; r > 0 {
				f[t] /= r
			}
		}
	}
	return s
}

// addWeighted adds w*src to dst, row by row (rows that are nil in dst
// skipped): frequency times reach, which sums over regions.
func addWeighted(dst, src, w [][]float64) {
	for i := range dst {
		if dst[i] == nil {
			continue
		}
		for t, v := range src[i] {
			dst[i][t] += w[i][t] * v
		}
	}
}

func zeros(rows, n int) [][]float64 {
	m := make([][]float64, rows)
	for i := range m {
		m[i] = make([]float64, n)
	}
	return m
}

// addTo adds w*src to dst, row by row.
func addTo(dst, src [][]float64, w float64) {
	for i := range dst {
		if dst[i] == nil {
			continue // a channel without exposure
		}
		for t, v := range src[i] {
			dst[i][t] += w * v
		}
	}
}

// WriteCSV writes d as a CSV file with the spec's column names, in the order
// date, [region, [population]], upper, search, queries, outcome, controls,
// exposure,
// one row per region and week (region by region). Numbers are formatted with
// strconv 'g' and the shortest exact precision, so Read of the output with
// d.Spec gives back d.
func WriteCSV(w io.Writer, d *Dataset) error {
	cw := csv.NewWriter(w)
	s := d.Spec
	if err := cw.Write(s.Columns()); err != nil {
		return err
	}
	rec := make([]string, 0, len(s.Columns()))
	for _, r := range d.Regions {
		for t, wk := range r.Weeks {
			rec = append(rec[:0], wk.Format(DateLayout))
			if s.Region != "" {
				rec = append(rec, r.Name)
			}
			if s.Population != "" {
				rec = append(rec, fmtNum(r.Population))
			}
			for _, x := range r.Upper {
				rec = append(rec, fmtNum(x[t]))
			}
			for _, x := range r.Search {
				rec = append(rec, fmtNum(x[t]))
			}
			rec = append(rec, fmtNum(r.Queries[t]), fmtNum(r.Outcome[t]))
			for _, x := range r.Controls {
				rec = append(rec, fmtNum(x[t]))
			}
			for _, x := range r.Exposure {
				if x != nil {
					rec = append(rec, fmtNum(x[t]))
				}
			}
			for _, x := range r.Frequency {
				if x != nil {
					rec = append(rec, fmtNum(x[t]))
				}
			}
			if err := cw.Write(rec); err != nil {
				return err
			}
		}
	}
	cw.Flush()
	return cw.Error()
}
