// Package validate checks whether the model deserves trust on a data set,
// by refitting it many times:
//
//   - recovery: data sets simulated from the fitted posterior (or from given
//     true parameters) with the data's own spend, controls and weeks are
//     refitted, and the true effects are compared with their credible
//     intervals (coverage of the 50% and 90% intervals, bias, width), with
//     simulation-based calibration ranks of the key parameters (Talts,
//     Betancourt, Simpson, Vehtari and Gelman 2018);
//   - holdout: rolling-origin forecasts of the weeks after each origin from
//     a fit to the weeks before it, scored by MAPE, CRPS and interval
//     coverage against a seasonal baseline and against the same model
//     without any spend term;
//   - stability: refits that leave out one quarter at a time, and refits
//     with other seeds, and how far each effect moves in units of its
//     posterior sd;
//   - placebo (opt-in): refits with each channel's spend moved circularly
//     in time, and the permutation p-value of the real effect among them.
//
// A verdict claims only what its evidence carries: "recovers truth" needs
// MinReplicates replicates with both coverages inside their binomial
// ranges and at least MinConvergedShare of the refits converged
// (converge.go: what converged means, and why coverage counts every
// refit); "beats" needs a weekly score difference whose interval over the
// effective number of weeks (AR(1), compare.go) excludes zero; "stable"
// needs a converged reference and MinConvergedShare of the refits
// converged. A problem found is reported whatever
// the amount of evidence; its absence is not claimed without enough.
//
// A sweep is a fixed list of jobs (Plan): the reference fit, every
// replicate, origin, left-out quarter and extra seed, each with a seed
// derived from the sweep's seed and its index. Run executes all jobs, or
// one shard of them (jobs with index % n == i-1), on a worker pool, and
// returns their raw per-job numbers as Records at full precision. Merge
// joins the shards' Results after checking that they come from the same
// data and settings and hold every job exactly once; Aggregate turns a
// complete set of Records into the validation table and verdicts, and
// Files renders the output folder (validation.png is drawn from the Report
// by spillway/plots/validation, so this package needs no plotting library). The unsharded path goes through the same
// records, so a merged sweep is byte-identical to an unsharded one.
//
// The package does no file or terminal I/O of its own: readers and
// writers are passed in, and progress is reported through a callback.
package validate // import "spillway/funnel/validate"
