// Package validation draws validation.png, the one-page picture of a
// validation sweep, from the report funnel/validate aggregates: interval
// coverage of the true effects against the nominal levels (recovery),
// holdout forecasts against the actuals and the seasonal baseline
// (holdout), and how far each effect moved over the refits (stability). It
// uses the project's palette (spillway/plots), its marks and tickers
// (spillway/plots/marks) and large type for slides. Keeping it here, with
// the other charts, leaves the analysis packages free of the plotting
// library.
package validation // import "spillway/plots/validation"
