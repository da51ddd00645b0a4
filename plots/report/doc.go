// Package report writes spillway's quarterly-review report: one
// self-contained HTML page (html/template, charts embedded as PNG data
// URIs, print styles, no network) with the trust verdict, the headline
// findings in plain words, the review quarter set beside the previous
// quarter and the same quarter a year earlier (changes computed from
// paired posterior draws), the tables of effects and borrowed demand, the
// causal assumptions with their sensitivity, the cautions, a data summary
// and the command that reruns the fit.
package report // import "spillway/plots/report"
