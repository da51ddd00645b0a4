package fitfolder

import (
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"strings"

	"spillway/funnel/data"
	"spillway/funnel/table"
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

// ErrMissing is wrapped by the error a reader returns when a file of the
// fit folder does not exist.
var ErrMissing = errors.New("fitfolder: file is missing")

// What writes each file, for the message when it is missing.
const (
	hintFit   = "written by spillway fit"
	hintData  = "copied by spillway fit"
	hintSplit = "written by spillway split; run it first"
)

// located turns an error of package table or data into an *Error.
func located(path string, err error) error {
	var te *table.Error
	if errors.As(err, &te) {
		return &Error{File: path, Line: te.Line, Column: te.Column, Err: te.Err}
	}
	var de *data.DataError
	if errors.As(err, &de) {
		return &Error{File: path, Line: de.Line, Column: de.Header, Err: de.Err}
	}
	return &Error{File: path, Err: err}
}

// openError is the *Error for a file that could not be opened.
func openError(path, hint string, err error) error {
	if errors.Is(err, fs.ErrNotExist) {
		return &Error{File: path, Err: fmt.Errorf("%w (%s)", ErrMissing, hint)}
	}
	return &Error{File: path, Err: err}
}

// lineAt returns the 1-based line of byte offset off in b.
func lineAt(b []byte, off int64) int {
	if off > int64(len(b)) {
		off = int64(len(b))
	}
	return bytes.Count(b[:off], []byte("\n")) + 1
}
