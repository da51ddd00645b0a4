// Package mcmctest provides test helpers for implementations of mcmc.Model:
// a gradient check against central finite differences (gonum diff/fd) at
// seeded random points, and an allocation check of LogProbGrad. Model
// packages call them from their own tests; Func lets them check one term of
// a log density on its own.
package mcmctest
