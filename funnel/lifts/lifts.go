// Package lifts reads a file of lift tests (experiments that removed a
// channel's spend for some weeks) and turns each row into a term of the
// model's likelihood (model.LiftTest).
//
// The file is CSV with a header naming the columns channel, start, end,
// estimate and se, and optionally metric and region, in any order. A row
// says: removing the channel's spend in the weeks from start to end (week
// start dates of the data, YYYY-MM-DD, inclusive) lowered the metric
// (outcome, the default, or queries) summed over those same weeks by
// estimate, in the metric's own units, with standard error se; the
// carryover of spend before the window was kept. Every bad row is an error
// naming FILE:LINE:COLUMN (a *data.DataError).
//
// On regional data fitted as a region panel (LoadPanel), a row may name a
// region: the test removed the channel's spend in that region alone and
// measured that region's metric; a row without a region removed it in every
// region and measured the sum over the regions. Fitted as one national
// series (Load), a region is refused.
//
// The file is read with encoding/csv: the project's fixed-schema table
// package was not yet on the main branch when this one was written.
package lifts

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"
	"time"

	"spillway/funnel/data"
	"spillway/funnel/model"
)

// Test is one row of a lift-test file, resolved against the data.
type Test struct {
	Line         int // the row's line in the file (the header is line 1)
	Channel      string
	Metric       model.LiftMetric
	Region       string    // "" for the national series
	Start, End   time.Time // week start dates
	From, To     int       // their week indices, inclusive
	Estimate, SE float64   // in the metric's raw units
}

// Columns of the file.
const (
	ColChannel  = "channel"
	ColStart    = "start"
	ColEnd      = "end"
	ColEstimate = "estimate"
	ColSE       = "se"
	ColMetric   = "metric"
	ColRegion   = "region"
)

var required = []string{ColChannel, ColStart, ColEnd, ColEstimate, ColSE}

// Load reads the lift tests of file path against the data set ds, fitted
// as one national series: a row naming a region is refused.
func Load(path string, ds *data.Dataset) ([]Test, error) {
	return load(path, ds, false)
}

// LoadPanel reads the lift tests of file path against regional data ds
// fitted as a region panel: a row naming a region is that region's test
// (its spend, its outcome or queries), a row without one a national test
// (every region's spend removed, the metric summed over the regions).
func LoadPanel(path string, ds *data.Dataset) ([]Test, error) {
	return load(path, ds, true)
}

func load(path string, ds *data.Dataset, panel bool) ([]Test, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, &data.DataError{File: path, Err: err}
	}
	defer f.Close()
	return read(f, path, ds, panel)
}

// Read is Load on a reader; file names the source in errors.
func Read(r io.Reader, file string, ds *data.Dataset) ([]Test, error) {
	return read(r, file, ds, false)
}

// ReadPanel is LoadPanel on a reader.
func ReadPanel(r io.Reader, file string, ds *data.Dataset) ([]Test, error) {
	return read(r, file, ds, true)
}

func read(r io.Reader, file string, ds *data.Dataset, panel bool) ([]Test, error) {
	at := func(line, col int, header, f string, args ...any) error {
		return &data.DataError{File: file, Line: line, Column: col, Header: header, Err: fmt.Errorf(f, args...)}
	}
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	head, err := cr.Read()
	if err == io.EOF {
		return nil, at(1, 0, "", "empty file; expected the header %s", strings.Join(required, ","))
	}
	if err != nil {
		return nil, csvError(file, err)
	}
	col := map[string]int{}
	for i, h := range head {
		name := strings.TrimSpace(strings.TrimPrefix(h, "\ufeff"))
		switch name {
		case ColChannel, ColStart, ColEnd, ColEstimate, ColSE, ColMetric, ColRegion:
		default:
			return nil, at(1, i+1, name, "unknown column; expected %s, and optionally %s and %s", strings.Join(required, ", "), ColMetric, ColRegion)
		}
		if _, dup := col[name]; dup {
			return nil, at(1, i+1, name, "column named twice")
		}
		col[name] = i
	}
	for _, name := range required {
		if _, ok := col[name]; !ok {
			return nil, at(1, 0, "", "no column %q; the header must name %s", name, strings.Join(required, ", "))
		}
	}
	upper, search := map[string]int{}, map[string]int{}
	for c, name := range ds.Spec.Upper {
		upper[name] = c
	}
	for s, name := range ds.Spec.Search {
		search[name] = s
	}
	weekIndex := map[time.Time]int{}
	for i, w := range ds.Weeks {
		weekIndex[w] = i
	}
	national := ds.National()
	first, last := ds.Weeks[0].Format(time.DateOnly), ds.Weeks[len(ds.Weeks)-1].Format(time.DateOnly)
	var out []Test
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvError(file, err)
		}
		line, _ := cr.FieldPos(0)
		if len(rec) != len(head) {
			return nil, at(line, 0, "", "%d fields; the header has %d", len(rec), len(head))
		}
		cell := func(name string) (string, int) {
			i, ok := col[name]
			if !ok {
				return "", 0
			}
			return strings.TrimSpace(rec[i]), i + 1
		}
		t := Test{Line: line}
		ch, cc := cell(ColChannel)
		_, isUpper := upper[ch]
		_, isSearch := search[ch]
		if !isUpper && !isSearch {
			return nil, at(line, cc, ColChannel, "unknown channel %q; expected one of the data's spend columns %s", data.Excerpt(ch), strings.Join(append(append([]string(nil), ds.Spec.Upper...), ds.Spec.Search...), ", "))
		}
		t.Channel = ch
		if m, mc := cell(ColMetric); mc > 0 {
			switch strings.ToLower(m) {
			case "", "outcome":
				t.Metric = model.LiftOutcome
			case "queries":
				t.Metric = model.LiftQueries
				if isSearch {
					return nil, at(line, mc, ColMetric, "paid search %s has no effect on queries in the model; a test of it measures the outcome", ch)
				}
			default:
				return nil, at(line, mc, ColMetric, "unknown metric %q; expected outcome or queries", data.Excerpt(m))
			}
		}
		series := national
		r, rc := cell(ColRegion)
		if r != "" {
			switch {
			case len(ds.Regions) == 1 && ds.Regions[0].Name == "":
				return nil, at(line, rc, ColRegion, "region %q, but the data are national (no region column); leave it empty", data.Excerpt(r))
			case !panel:
				return nil, at(line, rc, ColRegion, "a lift test in one region needs the region panel, but the regions are fitted as their national sum; leave it empty for a national test, or fit the panel (no --national)")
			}
			g := slices.IndexFunc(ds.Regions, func(reg data.Region) bool { return reg.Name == r })
			if g < 0 {
				names := make([]string, len(ds.Regions))
				for i, reg := range ds.Regions {
					names[i] = reg.Name
				}
				return nil, at(line, rc, ColRegion, "unknown region %q; expected one of the data's regions %s", data.Excerpt(r), data.Excerpt(strings.Join(names, ", ")))
			}
			t.Region = r
			series = ds.Regions[g].Series
		}
		date := func(name string) (time.Time, int, int, error) {
			s, c := cell(name)
			d, err := time.Parse(time.DateOnly, s)
			if err != nil {
				return d, 0, c, at(line, c, name, "%q is not a date YYYY-MM-DD", data.Excerpt(s))
			}
			i, ok := weekIndex[d]
			if !ok {
				return d, 0, c, at(line, c, name, "%s is not a week start of the data (weekly from %s to %s)", s, first, last)
			}
			return d, i, c, nil
		}
		var sc, ec int
		if t.Start, t.From, sc, err = date(ColStart); err != nil {
			return nil, err
		}
		if t.End, t.To, ec, err = date(ColEnd); err != nil {
			return nil, err
		}
		if t.To < t.From {
			return nil, at(line, ec, ColEnd, "the window ends (%s) before it starts (%s)", t.End.Format(time.DateOnly), t.Start.Format(time.DateOnly))
		}
		x := series.Upper
		idx := upper[ch]
		if isSearch {
			x, idx = series.Search, search[ch]
		}
		spend := 0.0
		for w := t.From; w <= t.To; w++ {
			spend += x[idx][w]
		}
		if spend <= 0 && t.Region != "" {
			return nil, at(line, rc, ColRegion, "%s has no spend in region %s from %s to %s: removing it cannot be tested there", ch, t.Region, t.Start.Format(time.DateOnly), t.End.Format(time.DateOnly))
		}
		if spend <= 0 {
			return nil, at(line, sc, ColStart, "%s has no spend from %s to %s: removing it cannot be tested there", ch, t.Start.Format(time.DateOnly), t.End.Format(time.DateOnly))
		}
		num := func(name string) (float64, int, error) {
			s, c := cell(name)
			v, err := strconv.ParseFloat(s, 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return 0, c, at(line, c, name, "%q is not a finite number", data.Excerpt(s))
			}
			return v, c, nil
		}
		if t.Estimate, _, err = num(ColEstimate); err != nil {
			return nil, err
		}
		var sec int
		if t.SE, sec, err = num(ColSE); err != nil {
			return nil, err
		}
		if t.SE <= 0 {
			return nil, at(line, sec, ColSE, "the standard error must be > 0, not %g", t.SE)
		}
		out = append(out, t)
	}
	if len(out) == 0 {
		return nil, at(1, 0, "", "no lift tests below the header")
	}
	return out, nil
}

func csvError(file string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &data.DataError{File: file, Line: pe.Line, Column: pe.Column, Err: pe.Err}
	}
	return &data.DataError{File: file, Err: err}
}

// Term returns the test as a term of the model's likelihood on the scaled
// data sc (built from the same data set), with the estimate and its
// standard error divided by the metric's mean, and demand and outcome the
// parts of the joint target that hold those stages.
func (t Test) Term(sc *model.Scaled, demand, outcome int) *model.LiftTest {
	div := sc.OutcomeScale
	if t.Metric == model.LiftQueries {
		div = sc.QueriesScale
	}
	return &model.LiftTest{Column: t.Channel, Metric: t.Metric, Start: t.From, End: t.To,
		Estimate: t.Estimate / div, SE: t.SE / div, Demand: demand, Outcome: outcome}
}

// PanelTerm returns the test as a term of the region panel ps (built from
// the same data set), with demand and outcome the parts of the joint target
// that hold those panels. A test in one region is in that region's scaled
// units (estimate and se divided by the region's mean of the metric, as
// Term does nationally); a national test is in units of the sum of the
// regions' means, each region's lift weighted by its mean over that sum, so
// that the model's value is the sum of the regions' lifts in the metric's
// own units divided by the same number (PanelUnit).
func (t Test) PanelTerm(ps *model.PanelScaled, demand, outcome int) *model.PanelLiftTest {
	w := make([]float64, len(ps.Scaled))
	for g, sc := range ps.Scaled {
		switch {
		case t.Region == "":
			w[g] = t.scale(sc)
		case ps.Regions[g] == t.Region:
			w[g] = 1
		}
	}
	u := t.PanelUnit(ps)
	if t.Region == "" {
		for g := range w {
			w[g] /= u
		}
	}
	return &model.PanelLiftTest{Column: t.Channel, Metric: t.Metric, Start: t.From, End: t.To,
		Estimate: t.Estimate / u, SE: t.SE / u, Weights: w, Demand: demand, Outcome: outcome}
}

// PanelUnit returns the unit of PanelTerm's estimate in the metric's own
// units: the region's mean of the metric for a test in one region, the sum
// of the regions' means for a national test.
func (t Test) PanelUnit(ps *model.PanelScaled) float64 {
	u := 0.0
	for g, sc := range ps.Scaled {
		if t.Region == "" || ps.Regions[g] == t.Region {
			u += t.scale(sc)
		}
	}
	return u
}

// scale returns sc's mean of the test's metric.
func (t Test) scale(sc *model.Scaled) float64 {
	if t.Metric == model.LiftQueries {
		return sc.QueriesScale
	}
	return sc.OutcomeScale
}
