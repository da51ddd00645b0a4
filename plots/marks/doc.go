// Package marks holds the small gonum/plot plotters and tick markers that
// spillway's charts are drawn with: bars (Rect), intervals (Whisker, Band),
// lines (Line, Segment, Rule), points (Dots), shading (Span) and text
// (Label); round-number, percent, calendar and category tickers; and the
// text style, wrapping and tint helpers the chart pages share.
//
// Every mark is a plain struct built as a literal and implements
// plot.Plotter and plot.DataRanger. Positions are in data coordinates;
// lengths (widths, offsets, caps) are in vg units. An axis a mark does
// not constrain is reported as (+Inf, -Inf), which leaves the plot's range
// on that axis alone. Time axes count days since 1970-01-01 UTC (Day).
//
// The package draws what it is given and does not check it: slices of one
// mark must have equal lengths, and NaN or infinite values are the
// caller's to remove.
package marks // import "spillway/plots/marks"
