package fitdir

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"strconv"
	"strings"
)

// Error is a problem with one file of a fit folder. Line is 1-based and
// counts the header line (0 when the problem concerns the whole file);
// Column names the CSV column or JSON field (empty when not known).
type Error struct {
	File   string
	Line   int
	Column string
	Err    error
}

// Error formats the problem as "FILE line N, column C: message".
func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, " line %d", e.Line)
	}
	if e.Column != "" {
		if e.Line > 0 {
			b.WriteString(",")
		}
		fmt.Fprintf(&b, " column %s", e.Column)
	}
	b.WriteString(": ")
	b.WriteString(e.Err.Error())
	return b.String()
}

// Unwrap returns the underlying error.
func (e *Error) Unwrap() error { return e.Err }

// ErrMissing is wrapped by the error Load returns when a file of the fit
// folder does not exist.
var ErrMissing = errors.New("fitdir: file is missing")

// table is a CSV file read whole: its header and its records with the
// 1-based line number of each record.
type table struct {
	path   string
	header []string
	col    map[string]int
	rows   [][]string
	lines  []int
}

// readTable reads the CSV file at path and checks that every column of
// required is in its header. Columns beyond required are allowed.
func readTable(path string, required []string, stepHint string) (*table, error) {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, &Error{File: path, Err: fmt.Errorf("%w (%s)", ErrMissing, stepHint)}
		}
		return nil, &Error{File: path, Err: err}
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.ReuseRecord = false
	header, err := r.Read()
	if err == io.EOF {
		return nil, &Error{File: path, Err: errors.New("empty file, expected a header line")}
	}
	if err != nil {
		return nil, csvError(path, err)
	}
	t := &table{path: path, header: header, col: make(map[string]int, len(header))}
	for i, h := range header {
		h = strings.TrimSpace(strings.TrimPrefix(h, "\ufeff"))
		header[i] = h
		if _, dup := t.col[h]; dup {
			return nil, &Error{File: path, Line: 1, Column: h, Err: errors.New("duplicate column")}
		}
		t.col[h] = i
	}
	for _, name := range required {
		if _, ok := t.col[name]; !ok {
			return nil, &Error{File: path, Line: 1, Column: name,
				Err: fmt.Errorf("missing column (header has %s)", strings.Join(header, ","))}
		}
	}
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvError(path, err)
		}
		line, _ := r.FieldPos(0)
		t.rows = append(t.rows, rec)
		t.lines = append(t.lines, line)
	}
	return t, nil
}

// csvError turns an encoding/csv error into an *Error naming path.
func csvError(path string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &Error{File: path, Line: pe.Line, Err: pe.Err}
	}
	return &Error{File: path, Err: err}
}

// str returns the trimmed cell of row i in column name.
func (t *table) str(i int, name string) string {
	return strings.TrimSpace(t.rows[i][t.col[name]])
}

// fail returns an *Error at row i, column name.
func (t *table) fail(i int, name string, format string, args ...any) error {
	return &Error{File: t.path, Line: t.lines[i], Column: name, Err: fmt.Errorf(format, args...)}
}

// num parses the cell of row i in column name as a finite number.
func (t *table) num(i int, name string) (float64, error) {
	s := t.str(i, name)
	if s == "" {
		return 0, t.fail(i, name, "empty cell, expected a number")
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, t.fail(i, name, "%q is not a finite number", s)
	}
	return v, nil
}

// optNum is num, but an empty cell, NA, NaN or an infinity gives NaN (a
// value that could not be computed, such as an effect per unit of spend in
// a window without spend).
func (t *table) optNum(i int, name string) (float64, error) {
	s := t.str(i, name)
	if s == "" {
		return math.NaN(), nil
	}
	return t.undefNum(i, name)
}

// undefNum is num, but NA, NaN or an infinity gives NaN; an empty cell is
// still an error.
func (t *table) undefNum(i int, name string) (float64, error) {
	s := t.str(i, name)
	switch strings.ToLower(strings.TrimLeft(s, "+-")) {
	case "na", "nan", "inf", "infinity":
		return math.NaN(), nil
	}
	return t.num(i, name)
}

// integer parses the cell of row i in column name as an integer.
func (t *table) integer(i int, name string) (int, error) {
	s := t.str(i, name)
	v, err := strconv.Atoi(s)
	if err != nil {
		// Accept integral floats such as "12.0".
		f, ferr := strconv.ParseFloat(s, 64)
		if ferr != nil || f != math.Trunc(f) || math.Abs(f) > 1<<53 {
			return 0, t.fail(i, name, "%q is not an integer", s)
		}
		v = int(f)
	}
	return v, nil
}

// nonEmpty returns the cell of row i in column name, or an error if empty.
func (t *table) nonEmpty(i int, name string) (string, error) {
	s := t.str(i, name)
	if s == "" {
		return "", t.fail(i, name, "empty cell")
	}
	return s, nil
}

// oneOf checks that the cell of row i in column name is one of allowed.
func (t *table) oneOf(i int, name string, allowed ...string) (string, error) {
	s := t.str(i, name)
	for _, a := range allowed {
		if s == a {
			return s, nil
		}
	}
	return "", t.fail(i, name, "%q is not one of %s", s, strings.Join(allowed, ", "))
}
