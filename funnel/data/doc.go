// Package data reads, checks and summarises spillway's input: one tidy CSV
// with a row per week (per region), whose columns play the roles a Spec
// declares (week start date, optional region and population, upper-funnel
// spend, paid-search spend, branded query volume, outcome and controls).
//
// Read and Load turn the file into a Dataset of raw (unscaled) weekly series,
// or reject it with a *DataError that names the file, line and column and
// says what was expected. Problems a modeller should look at, but that do not
// stop a fit, are returned as Warnings. Summarize and Summary.WriteText give
// the readable overview that `spillway inspect` prints.
//
// Line numbers count the header as line 1, so the first data row is line 2;
// column numbers are 1-based positions of fields in the file.
package data
