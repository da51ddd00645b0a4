// Package model holds the two stages of spillway's default model (DESIGN.md):
// the demand stage (branded queries on upper-funnel media) and the outcome
// stage (outcome on queries, paid search and upper-funnel media), plus the
// naive outcome stage without the query term. Each stage is an mcmc.Target:
// a log posterior with an exact analytic gradient on an unconstrained space.
//
// Scaling (DESIGN.md): spend is divided by its mean over weeks with spend > 0,
// queries and outcome by their means, controls are standardised with the
// sample standard deviation (n-1 divisor, as R's scale()).
//
// Parameterisation. The posterior is the one of DESIGN.md on its own
// parameters; only the coordinates the sampler moves in differ, with the
// Jacobians included:
//   - the intercept is centred: the sampler moves mu_c, the mean of the linear
//     predictor, and mu = mu_c - sum_j coef_j mean_t(regressor_j). The map is a
//     shift for fixed other parameters, so its Jacobian is 1. This removes the
//     strong correlation between the intercept and every media coefficient.
//   - each saturating channel's coefficient is moved as u = coef * H(abar; K, S),
//     its contribution at the channel's mean scaled spend abar, on the log scale
//     when the coefficient is positive. K and S then mostly shape the curve
//     instead of trading off against the coefficient. With retention and K, S
//     on logit/log scales, log|J| = log coef + log lam(1-lam) + log K + log S.
package model
