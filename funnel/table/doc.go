// Package table reads and writes fixed-schema CSV tables: files whose
// columns are named by the `csv` tags of a row struct, decoded and encoded
// by github.com/gocarina/gocsv.
//
// gocsv alone decodes a missing column to zero and reports a bad cell by
// its record index. Read checks the header against the row type first and
// wraps the reader so that every error is an *Error locating the file, the
// line (a quoted cell may span lines) and the column. The cell types
// (Float, OptFloat, Date, ...) say how a number is spelled in the file and
// which spellings are accepted back.
package table // import "spillway/funnel/table"
