// Package fitfolder owns the fit folder: the files `spillway fit` and
// `spillway split` write, their columns, writing them and reading them back.
// Every command, the charts, the report and the test fixtures go through it.
//
// A fit folder DIR holds
//
//	spec.json             Run: the data roles and sampler settings, the command that reruns the fit
//	data.csv              Data: the checked data the fit was made on
//	priors.csv            the priors file given with --priors, copied (Fit.Priors)
//	STAGE/draws.csv       Stage.Draws: the posterior draws (mcmc's tidy draws CSV), STAGE demand, outcome or naive
//	STAGE/summary.csv     Param: one row per parameter
//	STAGE/stats.json      Stats: the sampler's cost and health per chain
//	verdict.txt           Verdict: whether the fit deserves trust, and why not
//	effects.csv           Effect (with the split's windows)
//	effect_draws.csv      the effects per posterior draw (Split.EffectDraws)
//	borrowed.csv          Borrowed
//	weekly.csv            Weekly
//	sensitivity.csv       Sensitivity
//	breakeven.csv         Breakeven
//	fitted.csv            Fitted
//	curves.csv            Curve
//	returns.csv           Return (absent in folders written before it existed)
//	effects_by_region.csv RegionEffect: effects.csv per region (a panel of regions only)
//	borrowed_by_region.csv RegionBorrowed: borrowed.csv per region (a panel only)
//	region_differences.csv RegionDifference: each region against the sum over regions, per draw (a panel only)
//	priors_implied.csv    Implied: each return as stated, under the priors and under the posterior (absent in older folders)
//	plan.csv              PlanChannel: the budget plan `spillway allocate` wrote, one row per channel
//	plan_weekly.csv       PlanWeek: the plan's spend per week and channel
//	plan.json             PlanSummary: totals, the gain with its interval, marginal returns, the check
//	plan.png              the plan's chart (PlanChart)
//
// A shard folder (shard.go) holds one chain of a fit sampled as a job of its
// own (`--chain I/N`): shard.json, data.csv, the input copies and each
// stage's draws; Open refuses it, ReadShard reads it for the merge.
//
// The tables are fixed-schema CSV read and written by package table, so
// every error names the file, the line and the column at fault (*Error).
// Open reads what split needs (spec, data, priors), ReadDraws the draws,
// and Load everything the charts and the report use.
package fitfolder // import "spillway/funnel/fitfolder"
