package table

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"reflect"
	"strings"

	"github.com/gocarina/gocsv"
)

// Error locates a problem in a table file.
type Error struct {
	File string
	// Line is 1-based and counts the header as line 1; 0 when the problem
	// concerns the whole file.
	Line int
	// Col is 1-based: the field of a bad cell or header name, or the byte
	// of a CSV syntax error; 0 when no single place is at fault.
	Col int
	// Column is the header name of the field at fault, when known.
	Column string
	Err    error
}

// Error formats the problem as "FILE:LINE:COL: message".
func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
		if e.Col > 0 {
			fmt.Fprintf(&b, ":%d", e.Col)
		}
	}
	b.WriteString(": ")
	b.WriteString(e.Err.Error())
	return b.String()
}

// Unwrap returns the underlying error.
func (e *Error) Unwrap() error { return e.Err }

// Options say how the header must match the row type.
type Options struct {
	// Exact requires the header to be the row type's columns in order and
	// nothing else, for a file whose layout is documented column by
	// column. Otherwise columns may come in any order, and columns the row
	// type does not name are ignored.
	Exact bool
}

// Columns returns the column names of the row struct type of rows (a
// slice, or a pointer to one), in field order.
func Columns(rows any) []string {
	t := reflect.TypeOf(rows)
	for t.Kind() == reflect.Pointer || t.Kind() == reflect.Slice {
		t = t.Elem()
	}
	var cols []string
	for i := range t.NumField() {
		name, _, _ := strings.Cut(t.Field(i).Tag.Get("csv"), ",")
		if name != "" && name != "-" {
			cols = append(cols, name)
		}
	}
	return cols
}

// Read decodes the CSV table in r into rows, a pointer to a slice of the
// row struct. file names r in errors. Cells and header names are trimmed
// of spaces, and a UTF-8 byte-order mark is ignored. Every column of the
// row type must be in the header, no header name may repeat, and every
// row has as many fields as the header. It returns the line each row
// starts on. Every problem is an *Error; a cell's error is the one its
// type's UnmarshalCSV returned.
func Read(r io.Reader, file string, rows any, o Options) (lines []int, err error) {
	want := Columns(rows)
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	header, err := cr.Read()
	if err == io.EOF {
		return nil, &Error{File: file, Line: 1, Err: fmt.Errorf("empty file; expected the header %s", strings.Join(want, ","))}
	}
	if err != nil {
		return nil, syntaxError(file, err)
	}
	if err := checkHeader(file, header, want, o); err != nil {
		return nil, err
	}
	records := [][]string{header}
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, syntaxError(file, err)
		}
		line, _ := cr.FieldPos(0)
		if len(rec) != len(header) {
			return nil, &Error{File: file, Line: line,
				Err: fmt.Errorf("row has %d fields; expected %d (%s)", len(rec), len(header), strings.Join(header, ","))}
		}
		for i, c := range rec {
			rec[i] = strings.TrimSpace(c)
		}
		records = append(records, rec)
		lines = append(lines, line)
	}
	err = gocsv.UnmarshalCSV(recordReader(records), rows)
	var pe *csv.ParseError
	if errors.As(err, &pe) && pe.Line >= 2 && pe.Line-2 < len(lines) && pe.Column >= 1 && pe.Column <= len(header) {
		// gocsv numbers records, not lines: put the line back.
		return nil, &Error{File: file, Line: lines[pe.Line-2], Col: pe.Column, Column: header[pe.Column-1], Err: pe.Err}
	}
	if err != nil {
		return nil, &Error{File: file, Err: err}
	}
	return lines, nil
}

// checkHeader trims header in place and checks it against the columns want.
func checkHeader(file string, header, want []string, o Options) error {
	if len(header) > 0 {
		header[0] = strings.TrimPrefix(header[0], "\ufeff")
	}
	if o.Exact && len(header) != len(want) {
		return &Error{File: file, Line: 1, Err: fmt.Errorf("header has %d columns; expected %s", len(header), strings.Join(want, ","))}
	}
	seen := make(map[string]bool, len(header))
	for i, h := range header {
		h = strings.TrimSpace(h)
		header[i] = h
		if o.Exact && h != want[i] {
			return &Error{File: file, Line: 1, Col: i + 1, Column: h, Err: fmt.Errorf("header column %d is %q; expected %q", i+1, h, want[i])}
		}
		if seen[h] {
			return &Error{File: file, Line: 1, Col: i + 1, Column: h, Err: errors.New("duplicate column")}
		}
		seen[h] = true
	}
	for _, name := range want {
		if !seen[name] {
			return &Error{File: file, Line: 1, Column: name, Err: fmt.Errorf("missing column (header has %s)", strings.Join(header, ","))}
		}
	}
	return nil
}

func syntaxError(file string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &Error{File: file, Line: pe.Line, Col: pe.Column, Err: pe.Err}
	}
	return &Error{File: file, Err: err}
}

// recordReader hands records already read (and located) to gocsv, which
// takes them whole (ReadAll).
type recordReader [][]string

func (r recordReader) Read() ([]string, error) {
	return nil, errors.New("table: records are handed over whole")
}

func (r recordReader) ReadAll() ([][]string, error) { return r, nil }

// Write writes rows (a slice of the row struct) as CSV: a header of the
// row type's columns, then one line per row, each cell as its type's
// MarshalCSV spells it.
func Write(w io.Writer, rows any) error {
	return gocsv.Marshal(rows, w)
}
