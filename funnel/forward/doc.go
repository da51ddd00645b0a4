// Package forward runs spillway's default model (DESIGN.md) forward. For one
// posterior draw of each stage and a weekly spend plan per channel, it gives
// the expected queries and outcome and each channel's contribution along
// each path, week by week:
//
//	lift of queries    alpha[c] H(a(x[c]; lam); K, S)               scaled query units
//	via search         mean(y) gamma alpha[c] H(a(x[c]; lam); K, S) outcome units
//	direct             mean(y) delta[c] H(a(x[c]; lam2); K2, S2)    outcome units
//	paid search        mean(y) beta[s] H(a(s[s]; lam_s); K_s, S_s)  outcome units (controlled)
//
// A contribution is a Path: a gain (the coefficients and mean(y)) times a
// coefficient-free response per week. The effect of a counterfactual plan
// on a path is the gain times the sum over weeks of the difference of the
// two responses (Effect): the effect split, the weekly contributions, the
// response curves, the fitted values, the holdout forecasts and the
// validation's simulated truth all use this one arithmetic.
//
// A plan holds spend in the channels' scaled units from the data's first
// week on. It may differ from the data in the data's weeks (a
// counterfactual: spend set to zero in a window, or scaled), and it may run
// past the data's last week (a budget plan). The adstock runs through the
// whole plan, so the carryover built up in the data's weeks flows into the
// weeks after them: with no spend after week T, a[T+k] = lam^k a[T].
//
// Past the data's last week the baseline continues as model.Scaled.Continue
// says: the trend goes on along its line, the seasons go on, every control
// sits at its mean, and the outcome stage sees the expected queries of the
// plan. In the data's weeks the outcome stage sees the queries it is given
// (the observed ones for fitted values) or else the expected ones.
//
// Runs reuse the caller's buffers (Run, Upper, Path): nothing is allocated
// per draw once they have grown to the plan's length.
package forward
