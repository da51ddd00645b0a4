// Package ols fits ordinary least squares by Householder QR (never the normal
// equations), for spillway's closed-form checks and for the per-draw
// regressions of the borrowed-demand identity.
//
// Solve returns a full fit (coefficients, standard errors, residuals, R²).
// Solver is a reusable, allocation-free coefficient solver for hot loops that
// regress many right-hand sides on matrices of one fixed shape.
//
// Rank deficiency is judged per column, as R's lm.fit does: column j is
// rejected when |R[j][j]| < RankTol·‖x_j‖, that is when the part of x_j
// orthogonal to the earlier columns is below RankTol of its length. The test
// is invariant to column scaling, so raw units (as in NIST's Longley data)
// are fine.
package ols
