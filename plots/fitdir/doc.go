// Package fitdir reads a spillway fit folder (the output of `spillway fit`
// and `spillway split`) into plain Go values for the charts and the report.
//
// A fit folder DIR holds spec.json, data.csv, one folder per model stage
// (demand/, outcome/, naive/, each with summary.csv and stats.json),
// verdict.txt, and the tables written by split: effects.csv,
// effect_draws.csv, borrowed.csv, weekly.csv, sensitivity.csv,
// breakeven.csv, fitted.csv and curves.csv. Load reads all of them and
// checks their headers and cells; every error names the file, the line and
// the column at fault.
//
// Windows (Window, ParseWindow) follow split's convention: "all", a calendar
// quarter "2024Q3", or a custom range "2024-01-01:2024-03-31" (both ends
// inclusive). A week belongs to a window when the date it starts on falls
// inside the window.
//
// The package only reads; it never writes into the folder.
package fitdir // import "spillway/plots/fitdir"
