// Package chart draws validation.png, the one-page picture of a
// validation sweep: interval coverage of the true effects against the
// nominal levels (recovery), holdout forecasts against the actuals and the
// seasonal baseline (holdout), and how far each effect moved over the
// refits (stability). It takes plain numbers and uses the project's palette
// (spillway/plots), its marks and tickers (spillway/plots/marks) and large
// type for slides.
package chart // import "spillway/funnel/validate/chart"
