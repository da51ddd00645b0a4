// Package allocate plans a budget over the weeks after the data (DESIGN.md,
// "Budget plans"), with the constraints real budgets have, through every
// path of the model and with the posterior's uncertainty.
//
// The plan. It covers the N weeks after the data's last week. Each channel
// (upper-funnel and paid search) spends an amount over those weeks, spread
// week by week by the channel's pattern: by default its own spend in the
// data's last N weeks (its flighting), an even spread when that is all
// zero; or even; or a window of the data such as a quarter, repeated if it
// is shorter than the plan. The current plan is every channel at its
// pattern's own amount, and the default budget is its total. Limits hold
// each channel's amount within [min, max] (currency over the plan's weeks);
// a locked channel stays at its current amount.
//
// The objective. In posterior draw d, channel c's incremental outcome at
// amount a is f[c,d](a): the outcome over the plan's weeks and the 52 weeks
// after them, minus the same with the channel's spend in the plan's weeks
// set to zero, the carryover from the data's weeks kept. For an upper-funnel
// channel it is the via-search and the direct path; for paid search, only
// its controlled path: a plan never uses paid search's apparent return,
// which counts demand that the upper funnel created. Every value comes from
// the forward simulator (funnel/forward), which continues each draw from
// the data's carryover. The model is additive across channels, so the
// plan's incremental outcome in draw d is sum_c f[c,d](a[c]). The default
// objective is its posterior mean; a cautious objective maximises a lower
// quantile of the gain over the current plan, draws paired.
//
// The optimiser. The amounts of the channels that are not locked lie on
// the budget's hyperplane inside their limits. They are mapped one to one
// onto R^(m-1) by a stick-breaking transform with bounds: channel i takes a
// share sigmoid(z[i]) of what the limits leave it, given what channels
// before it took (the transform Stan uses for a simplex, with each stick's
// range narrowed so that every channel after it can still meet its own
// limits); the last channel takes the rest. Any z is a feasible plan, so
// gonum's unconstrained methods apply: BFGS on the posterior mean, whose
// gradient comes from forward differences of the simulated outcome (one
// extra simulation per gradient, as channels are separable), and
// Nelder-Mead on a quantile, which is only piecewise smooth. Hill responses
// with shape S > 1 are not concave at low spend, so the search starts from
// several plans (the current one, an even split, and each channel taking
// most of the budget) on a thinned set of draws, then polishes the best on
// every draw. A channel that ends next to a limit is set on it and the rest
// polished again (an active set). Amounts are rounded to cents with the
// total kept exact.
//
// The check. For the posterior mean, the first-order (KKT) conditions of
// Boyd and Vandenberghe (2004), Convex Optimization, section 5.5 are
// checked at the plan and reported: the marginal return of every channel
// strictly inside its limits equals a common lambda, and a channel at its
// minimum returns at most lambda, one at its maximum at least lambda.
package allocate
