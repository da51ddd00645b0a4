// Package plots draws spillway's review charts from a fit folder read by
// package fitfolder: one 1600×900 px PNG per chart (a 16:9 slide at 96 dpi),
// with a title that states the finding in plain words, a legend row, large
// type (titles 30 pt, ticks 19 pt) and a caption naming the data window and
// the interval level.
//
// Build (or Chart for one) returns Figures that keep the numbers each panel
// drew (Series), so tests and the report check numbers, not pixels; PNG
// renders a Figure; Render and WriteCharts render every chart of NamesOf(f).
// WriteCharts and WriteFileAtomic write through a temporary file in the
// target folder and a rename, so an error leaves no half-written file.
//
// Each chart is one file named after it (split.go, borrowed.go, curves.go,
// weekly.go, fit.go, sensitivity.go, diagnostics.go); review.go holds what
// they share: the list of charts, the window under review and its wording.
// figure.go lays a Figure out on the page.
//
// The palette is this package's own: blue for direct effects, amber for
// effects through branded search, near-black for totals and actuals, grey
// for cross-checks, red for thresholds and failed checks. A test simulates
// protanopia, deuteranopia and tritanopia (package cvd, Machado et al.
// 2009) and requires CIEDE2000 differences of at least 20 between every
// pair of these colours (40 between the two paths).
//
// Number, Percent, About and the other formatters are shared with the
// report so that both round the same way. The plotters and tick markers
// the panels are drawn with live in package marks, which the validation
// chart (spillway/plots/validation) uses too.
package plots // import "spillway/plots"
