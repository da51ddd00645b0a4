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
//   - with drifting coefficients, the trend's slope is moved as the total
//     slope u = b + sum_c coef_c beta_c, beta_c the least-squares slope on
//     the trend line of what channel c's drift adds to its response
//     (drift_trend.go): a slow drift of an always-on channel is nearly a
//     trend of its own, and the two would otherwise trade off along a
//     curved ridge. b = u - G(the rest) is a shear, Jacobian 1.
//
// Terms. A stage's log density is a sum of terms, each with its own forward
// pass, gradient pass and finite-difference test (terms_test.go):
//   - linear-predictor terms (the predictor interface): a regressor
//     coef * x[t] (trend, seasons, controls, gamma q~), a media channel
//     (saturating or linear), which owns its list of parameters, a channel
//     whose coefficient drifts by week, coef exp(f(t)) (drift.go), and a
//     baseline that moves, f(t) in place of the trend line; f is a smooth
//     function of the week with mean zero over the fitted weeks
//     (smooth.go). Each adds its part minus its mean to n[t] and its mean
//     to the centring of the intercept (the region panel's terms, below,
//     do the same over region-weeks).
//   - the observation term: y[t] ~ Normal(n[t], sigma) over the weeks not
//     masked. It returns d lp/d n[t], which the predictor terms pull back.
//   - a prior term per parameter, with its transform from the sampling
//     coordinate (funnel/mcmc's Positive and Unit) and log-Jacobian; the
//     intercept's prior acts on mu, so its derivative reaches every term.
//
// One evaluation runs them in that order: natural values, linear predictor,
// likelihood, gradients back through the terms and priors (with respect to
// the natural values), then the chain rule to the sampling coordinates
// (each transform, then each channel's rescaled coefficient). Joint puts
// several stages into one target when a CrossTerm ties them, such as a
// LiftTest on the outcome (Normal(estimate | summed lift, se), via search
// and direct, with the drifting coefficients of the test's weeks): cross
// terms add to the natural-value gradients between the two halves. A lift
// test on the queries is a cross term of a joint target of the demand stage
// alone. A ReturnPrior (retprior.go) is a cross term too: a stated prior on
// a channel's return over a window, the conditional prior of the
// coefficients it covers given every other parameter (a change of
// variables with its Jacobian), those coefficients carrying the flat
// Conditional family in their stage. Stages nothing ties are fitted
// separately, which is exact.
//
// Region panel (panel.go, panel_target.go, panelcoords.go). A Panel holds one
// stage of the national shape per region, each on that region's data scaled
// by its own means; its PanelTarget is a sum of panel terms (shared
// regressors, channels with shared transforms and a coefficient per region,
// the hierarchies of the intercepts and coefficients, the likelihood over
// region-weeks). Each region's coefficients are sampled centred or
// non-centred, chosen per region from least squares before sampling. Its
// intercept is sampled in its conditional coordinates by default: the
// exact normal conditional mean given every other parameter plus its
// conditional sd times a standard normal coordinate (Jacobian included),
// which removes both the ridge between a region's intercept and its gamma
// and the funnel between the intercepts and their spread; the former
// choice (centred, sampled as the region's predictor mean by a shear of
// unit Jacobian, or non-centred) remains with Coords.MuConditional off. On
// the outcome stage gamma is sampled in conditional coordinates too
// (panel_condgamma.go: a normal approximation to each region's log gamma
// given the rest, from gamma's hierarchy, the intercepts' collapsed
// level and the region's least squares), which removes the funnel
// between the intercepts' spread and gamma that the conditional
// intercepts leave, and the population intercept is then sampled at the
// regions' mean predictor (a shear). A
// channel's transform is computed once for regions whose scaled flights
// are equal. PanelLayout.Region turns a panel draw into a
// region's national draw, which every national computation reads.
package model
