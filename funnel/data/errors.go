package data

import (
	"fmt"
	"strconv"
	"strings"
	"unicode/utf8"
)

// DataError is a problem with the input data (or with the spec that names its
// columns), located as precisely as the problem allows. It is the error type
// of every rejection by Read, Load, LoadSpec and Spec.Validate.
type DataError struct {
	// File is the file name as given to Read or Load (empty when none applies).
	File string
	// Line is the 1-based line in the file, counting the header as line 1;
	// zero when no single line is at fault (such as too few weeks).
	Line int
	// Column is the 1-based field position in the line; zero when no single
	// field is at fault.
	Column int
	// Header is the name of the column at fault, if any; Error names it.
	Header string
	// Err says what is wrong and what was expected.
	Err error
}

// Error formats the error as "FILE:LINE:COLUMN: column "HEADER": message",
// omitting ":COLUMN" when Column is zero, ":LINE:COLUMN" when Line is zero,
// and the column name when Header is empty.
func (e *DataError) Error() string {
	var b strings.Builder
	switch {
	case e.File != "":
		b.WriteString(e.File)
		if e.Line > 0 {
			b.WriteString(":" + strconv.Itoa(e.Line))
			if e.Column > 0 {
				b.WriteString(":" + strconv.Itoa(e.Column))
			}
		}
		b.WriteString(": ")
	case e.Line > 0:
		b.WriteString("line " + strconv.Itoa(e.Line))
		if e.Column > 0 {
			b.WriteString(", column " + strconv.Itoa(e.Column))
		}
		b.WriteString(": ")
	}
	if e.Header != "" {
		fmt.Fprintf(&b, "column %q: ", Excerpt(e.Header))
	}
	if e.Err != nil {
		b.WriteString(e.Err.Error())
	} else {
		b.WriteString("bad data")
	}
	return b.String()
}

// Unwrap returns the underlying error.
func (e *DataError) Unwrap() error { return e.Err }

// errAt builds a located *DataError with a formatted message.
func errAt(file string, line, col int, header, format string, args ...any) *DataError {
	return &DataError{File: file, Line: line, Column: col, Header: header, Err: fmt.Errorf(format, args...)}
}

// excerptRunes is the most of a cell or name an error message quotes whole.
const excerptRunes = 40

// Excerpt returns s, or for a long s its first runes followed by "..." and
// its length, so that a message never quotes a huge cell or header whole.
func Excerpt(s string) string {
	if utf8.RuneCountInString(s) <= excerptRunes {
		return s
	}
	n, i := 0, 0
	for i = range s {
		if n == excerptRunes-8 {
			break
		}
		n++
	}
	return fmt.Sprintf("%s... (%d bytes)", s[:i], len(s))
}
