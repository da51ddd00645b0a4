// Package linear holds closed forms for linear mediation, used by spillway as
// outside checks on its simulation-based effects: the product-of-coefficients
// decomposition from ordinary least squares, the Sobel, Aroian and Goodman
// standard errors of the indirect effect, and the Imai, Keele and Yamamoto
// (2010) sensitivity of the average causal mediation effect (ACME) to the
// correlation rho between the mediator and outcome errors.
//
// Model (one treatment X, mediators M_k, optional covariates W):
//
//	M_k = i_k + a_k X + W·φ_k + e_k
//	Y   = i_Y + c' X + Σ_k b_k M_k + W·φ_Y + e_Y
//	Y   = i   + c X  + W·φ + e          (total effect)
//
// The indirect effect through M_k is a_k·b_k, and with OLS on one sample and
// one set of covariates c - c' = Σ_k a_k b_k holds exactly.
package linear
