// Package mcmc samples posterior distributions on unconstrained R^n with the
// No-U-Turn Sampler, runs several chains in parallel, and diagnoses the result
// (rank-normalised split R-hat, bulk and tail ESS; Vehtari et al. 2021). Of
// the other spillway packages it imports only funnel/stat.
//
// # Using it
//
// A model implements Target (log density and exact gradient on the
// unconstrained scale, names, the map to constrained values, Clone). Run
// samples it with Settings (nil means 4 chains, 1000 warm-up and 1000 kept
// iterations, target acceptance 0.8, tree depth 10), Summarize computes the
// per-parameter table, Judge gives the verdict, and WriteDraws and ReadDraws
// move fits through tidy CSV files. Package
// mcmctest checks a model's gradient against finite differences; package
// progress prints progress for a Recorder.
//
// # Algorithm choices (for developers)
//
// The transition is the multinomial No-U-Turn Sampler (Hoffman and Gelman
// 2014, JMLR 15:1593-1623) in the form Betancourt describes ("A Conceptual
// Introduction to Hamiltonian Monte Carlo", 2017, appendix A): the
// trajectory doubles in a random direction; within a new subtree a state is
// drawn in proportion to exp(−H) (uniform multinomial), and between the old
// trajectory and the new subtree by biased progressive sampling, which
// favours states far from the start. Growth stops on the generalised
// no-U-turn criterion, evaluated with sharp momenta M⁻¹p on the summed
// momentum of the subtree, and, as in Stan's base_nuts.hpp, also across the
// seam of every merge (old subtree plus the first momentum of the new one and
// vice versa), which catches U-turns that the two halves hide from each
// other. A leaf whose energy error exceeds 1000 is divergent and ends the
// trajectory; only sampling-phase divergences are counted. The acceptance
// statistic is the mean Metropolis probability over all leaves built. The
// metric is diagonal, or diagonal with one dense block (Settings.DenseBlock:
// Welford covariances over the block's coordinates, regularised likewise,
// Stan's dense_e confined to a few coordinates). Warm-up follows Stan exactly: a step-size heuristic
// (double or halve until one leapfrog step crosses acceptance 0.8), Nesterov
// dual averaging of log ε toward TargetAccept (γ 0.05, κ 0.75, t0 10; see
// DualAveraging), and the diagonal inverse metric from Welford variances in
// expanding windows (75 + 25·2^k + 50; see Windows) regularised as
// (n/(n+5))·var + 1e-3·5/(n+5); after each window the step size is searched
// again, μ = log(10 ε) and the averaging restarts. Two deliberate
// differences: the first μ is log(10 ε) for the heuristic's ε rather than
// for the user's initial step size 1 (it helps models whose scales are far
// from 1), and the reduced 15%/75%/10% schedule for short warm-ups restarts
// its window counter (Stan's code skips that restart, leaving the window
// never ending). An option Stan does not have: Settings.WarmupAccept, a
// target for the windows before the last metric update, the terminal
// window and the draws keeping TargetAccept. Every buffer the transition needs, including one set of
// temporaries per tree depth, is allocated once per chain, so a transition
// makes no allocation and the cost per leapfrog step is the model's gradient
// plus a few passes over n numbers. Chain c draws from
// rand.NewPCG(Seed, uint64(c)) and owns a Clone of the target, so draws do
// not depend on scheduling or GOMAXPROCS (on one architecture; compilers
// that fuse multiply-adds may round differently elsewhere).
//
// The diagnostics transcribe R posterior's convergence.R (1.4.0; the same
// definitions as Vehtari et al. 2021): split chains (odd lengths drop the
// middle draw), average-rank normal scores (r − 3/8)/(S + 1/4), FFT
// autocovariances, Geyer's initial positive and monotone sequences with the
// 1/log10(S) floor on τ, and posterior's NA rules (NaN here), so values agree
// with posterior to rounding; the tests check that against committed
// reference output.
package mcmc
