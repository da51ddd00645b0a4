package fitfolder

import (
	"bytes"
	"os"

	"spillway/funnel/data"
	"spillway/funnel/window"
)

// Data is data.csv: the checked data the fit was made on.
type Data struct {
	*data.Dataset
}

// readData reads the data file at path with the roles of spec.
func readData(path string, spec data.Spec) (*Data, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, openError(path, hintData, err)
	}
	defer f.Close()
	spec.Data = path
	ds, err := data.Read(f, path, spec)
	if err != nil {
		return nil, located(path, err)
	}
	return &Data{ds}, nil
}

func (d *Data) file() ([]byte, error) {
	var b bytes.Buffer
	err := data.WriteCSV(&b, d.Dataset)
	return b.Bytes(), err
}

// Total returns the sum of column col (a spend, queries, outcome or control
// column) over the weeks in w and every region, in the file's row order.
// It panics if col is not a column of the data's spec.
func (d *Data) Total(col string, w window.Window) float64 {
	s := 0.0
	for _, r := range d.Regions {
		v := column(d.Spec, r.Series, col)
		for t, wk := range d.Weeks {
			if w.Contains(wk) {
				s += v[t]
			}
		}
	}
	return s
}

// WeeksIn returns the number of weeks of d that belong to w.
func (d *Data) WeeksIn(w window.Window) int {
	n := 0
	for _, t := range d.Weeks {
		if w.Contains(t) {
			n++
		}
	}
	return n
}

// column returns the weekly values of the column named col in s.
func column(spec data.Spec, s data.Series, col string) []float64 {
	for _, c := range []struct {
		names []string
		v     [][]float64
	}{{spec.Upper, s.Upper}, {spec.Search, s.Search}, {spec.Controls, s.Controls}} {
		for i, n := range c.names {
			if n == col {
				return c.v[i]
			}
		}
	}
	switch col {
	case spec.Queries:
		return s.Queries
	case spec.Outcome:
		return s.Outcome
	}
	panic("fitfolder: unknown data column " + col)
}

// WeeklyRange returns the least and greatest weekly value of column col
// summed over regions, among the weeks where it is above zero (for a spend
// column: the range of weekly spend the data have seen). Both are zero
// when no week is above zero. It panics if col is not a column of the
// data's spec.
func (d *Data) WeeklyRange(col string) (lo, hi float64) {
	sum := make([]float64, len(d.Weeks))
	for _, r := range d.Regions {
		for t, v := range column(d.Spec, r.Series, col) {
			sum[t] += v
		}
	}
	first := true
	for _, v := range sum {
		if v <= 0 {
			continue
		}
		if first {
			lo, hi, first = v, v, false
		}
		lo, hi = min(lo, v), max(hi, v)
	}
	return lo, hi
}
