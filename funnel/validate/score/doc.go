// Package score holds the scoring rules and calibration tests that
// spillway's validation uses: the continuous ranked probability score (CRPS)
// of a forecast given as draws or as a normal distribution, interval
// coverage with a binomial plausibility test, and the thinned ranks and
// chi-square uniformity test of simulation-based calibration (Talts,
// Betancourt, Simpson, Vehtari and Gelman 2018).
//
// Every function is pure: inputs are never modified, and nothing here
// knows about the model, the data or files.
package score // import "spillway/funnel/validate/score"
