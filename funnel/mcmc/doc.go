// Package mcmc samples posterior distributions on unconstrained R^n with the
// No-U-Turn Sampler, runs several chains in parallel, and diagnoses the result
// (rank-normalised split R-hat, bulk and tail ESS; Vehtari et al. 2021). It
// imports no other spillway package.
package mcmc
