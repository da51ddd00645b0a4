// Package stat holds the sample statistics every other package shares: the
// mean, the sample variance and standard deviation, and R's default (type 7)
// quantile. Each is written once so that the numbers a table, a chart and a
// test compute from the same draws agree to the last bit. It imports no
// other spillway package, so the sampler can use it too.
package stat // import "spillway/funnel/stat"
