package pipeline

import (
	"context"
	"fmt"
	"math"
	"sort"
	"time"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"spillway/funnel/lifts"
	"spillway/funnel/loo"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/stat"
)

// FitLifts is Fit with lift tests as data. A test of the outcome ties the
// demand and the outcome stage (via search needs alpha and gamma), so then
// the two are fitted as one joint target (model.Joint) with every test; with
// tests of the queries alone, the demand stage is fitted with them and the
// outcome stage on its own, unless a return prior or a drift tie (DriftTies)
// joins them as in Fit. The naive stage is always fitted on its own,
// without tests: it is the cross-check of what a model without the query
// term credits to paid search. The joint fit uses seed s.Seed and its wall
// time is reported as the demand stage's (the outcome's is then 0); the
// draws are split back into one fit per stage, paired by index, so
// everything downstream reads them as always. No tests: Fit itself.
func FitLifts(ctx context.Context, sc *model.Scaled, o model.Options, tests []lifts.Test, s mcmc.Settings, hook StageHook) (*Fitted, error) {
	if len(tests) == 0 && len(o.Returns) == 0 {
		return Fit(ctx, sc, o, s, hook)
	}
	return fitLifts(ctx, sc, o, tests, s, hook, true)
}

// FitStages is FitLifts without the naive stage (Fits[2] is nil): the
// demand and outcome stages with the lift tests, for refits that need only
// the two (validation).
func FitStages(ctx context.Context, sc *model.Scaled, o model.Options, tests []lifts.Test, s mcmc.Settings, hook StageHook) (*Fitted, error) {
	return fitLifts(ctx, sc, o, tests, s, hook, false)
}

// fitLifts is FitLifts with or without the naive stage (Fits[2] nil
// without), with or without tests.
func fitLifts(ctx context.Context, sc *model.Scaled, o model.Options, tests []lifts.Test, s mcmc.Settings, hook StageHook, naive bool) (*Fitted, error) {
	st, err := Stages(sc, o)
	if err != nil {
		return nil, err
	}
	f := &Fitted{Data: sc, Stages: st, Tests: tests, options: o, settings: s}
	joint, j, err := bindLifts(f, o)
	if err != nil {
		return nil, err
	}
	set := settings(s, 0, joint...)
	name := "demand"
	if len(joint) == 2 {
		name = "demand and outcome"
	}
	fit, wall, err := run(ctx, j, set, hook, name)
	if err != nil {
		return nil, err
	}
	n0 := len(st[0].Names())
	f.Fits[0] = columns(fit, 0, n0)
	f.Wall[0] = wall
	if len(joint) == 2 {
		f.Fits[1] = columns(fit, n0, len(fit.Names))
	}
	last := 3
	if !naive {
		last = 2
	}
	for k := len(joint); k < last; k++ {
		tg, err := st[k].Target()
		if err != nil {
			return nil, fmt.Errorf("%s stage: %w", st[k].Name, err)
		}
		if f.Fits[k], f.Wall[k], err = run(ctx, tg, settings(s, k, st[k]), hook, st[k].Name); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// bindLifts sets f.Lifts, the terms of f.Tests in the likelihood, bound
// to f's stages in the joint target they are sampled in: the demand stage,
// and the outcome stage too when a test of the outcome, a return prior or
// a drift tie ties them (the priors and ties join the target's terms). It
// returns the stages of that target and the target.
func bindLifts(f *Fitted, o model.Options) ([]*model.Stage, *model.Joint, error) {
	st := f.Stages
	joint := []*model.Stage{st[0]}
	for _, t := range f.Tests {
		if t.Metric == model.LiftOutcome {
			joint = append(joint, st[1])
			break
		}
	}
	ties := DriftTies(st[0], st[1], o)
	if (len(o.Returns) > 0 || len(ties) > 0) && len(joint) == 1 {
		// a return prior ties alpha to gamma and delta; a drift tie alpha's
		// drift to delta's
		joint = append(joint, st[1])
	}
	f.Lifts = nil
	for _, t := range f.Tests {
		f.Lifts = append(f.Lifts, t.Term(f.Data, 0, 1))
	}
	cross := make([]model.CrossTerm, len(f.Lifts))
	for i, l := range f.Lifts {
		cross[i] = l
	}
	for _, r := range o.Returns {
		cross = append(cross, r.Term(0, 1))
	}
	for _, t := range ties {
		cross = append(cross, t)
	}
	j, err := model.NewJoint(joint, cross...)
	return joint, j, err
}

// Assemble is the Fitted of fits sampled elsewhere, such as the chains of
// one fit sampled as separate jobs and put together: the stages of sc and
// o, the lift tests' terms, and the fits and wall times as given. Given the
// same chains, it equals what FitLifts returned with settings s (which a
// lift test's refit without it, CheckLifts, reuses).
func Assemble(sc *model.Scaled, o model.Options, tests []lifts.Test, s mcmc.Settings, fits [3]*mcmc.Fit, wall [3]float64) (*Fitted, error) {
	st, err := Stages(sc, o)
	if err != nil {
		return nil, err
	}
	f := &Fitted{Data: sc, Stages: st, Fits: fits, Wall: wall, options: o, settings: s}
	if len(tests) > 0 || len(o.Returns) > 0 {
		f.Tests = tests
		if _, _, err := bindLifts(f, o); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// settings returns s for stage k fitted in a target holding the stages
// sts (none for a panel's, whose acceptance panelSettings sets): seed
// s.Seed + k, and StageAccept(sts...) unless s sets a target acceptance.
func settings(s mcmc.Settings, k int, sts ...*model.Stage) mcmc.Settings {
	set := s
	set.Seed = s.Seed + uint64(k)
	if set.TargetAccept == 0 {
		set.TargetAccept = StageAccept(sts...)
	}
	return set
}

// StageAccept is the target acceptance of a national fit's target holding
// the stages sts when its settings set none: DriftAccept when a channel of
// one of them drifts, else DefaultTargetAccept.
func StageAccept(sts ...*model.Stage) float64 {
	for _, st := range sts {
		for _, c := range st.Layout().Channels() {
			if c.Drift.Has() {
				return DriftAccept
			}
		}
	}
	return DefaultTargetAccept
}

// panelSettings is settings for stage k of a region panel: with outcome
// (the outcome or naive panel, or a joint fit holding the outcome's)
// PanelOutcomeAccept for the draws and the warm-up's terminal window and
// DefaultTargetAccept for the warm-up's metric windows
// (mcmc.Settings.WarmupAccept), unless s sets a target acceptance, which
// then applies throughout.
func panelSettings(s mcmc.Settings, k int, outcome bool) mcmc.Settings {
	set := settings(s, k)
	if s.TargetAccept == 0 && outcome {
		set.TargetAccept, set.WarmupAccept = PanelOutcomeAccept, DefaultTargetAccept
	}
	return set
}

// PanelSettings is s for a region panel's stage k (0 demand, 1 outcome, 2
// naive), as FitPanel samples it: seed s.Seed + k and the stage's target
// acceptance, s's own or the stage's default (panelSettings).
func PanelSettings(s mcmc.Settings, k int) mcmc.Settings {
	return panelSettings(s, k, regressesOutcome(k))
}

// regressesOutcome reports whether panel stage k regresses the outcome
// (the outcome and naive stages), whose paid-search tail needs
// PanelOutcomeAccept.
func regressesOutcome(k int) bool { return k != 0 }

func run(ctx context.Context, tg mcmc.Target, set mcmc.Settings, hook StageHook, name string) (*mcmc.Fit, float64, error) {
	var done func()
	if hook != nil {
		set.Recorder, done = hook(name)
	}
	t0 := time.Now()
	fit, err := mcmc.Run(ctx, tg, &set)
	if done != nil {
		done()
	}
	if err != nil {
		return nil, 0, fmt.Errorf("%s stage: %w", name, err)
	}
	return fit, time.Since(t0).Seconds(), nil
}

// columns returns the fit of columns [from, to) of f's draws: one stage of
// a joint fit. The chains' sampler statistics are the joint run's.
func columns(f *mcmc.Fit, from, to int) *mcmc.Fit {
	out := &mcmc.Fit{Names: append([]string(nil), f.Names[from:to]...)}
	for _, c := range f.Chains {
		r, _ := c.Draws.Dims()
		d := mat.NewDense(r, to-from, nil)
		d.Copy(c.Draws.Slice(0, r, from, to))
		out.Chains = append(out.Chains, mcmc.Chain{Draws: d, Stats: c.Stats})
	}
	return out
}

// LiftCheck is one lift test beside the model's posterior of the same
// quantity, in the metric's raw units.
type LiftCheck struct {
	Test lifts.Test
	// Mean, Q05 and Q95 summarise the model's posterior of the lift over
	// the test's window (the fit includes the test).
	Mean, Q05, Q95 float64
	// Without and WithoutSD are the mean and sd of the lift given the rest
	// of the data (the other tests included): the posterior with this test
	// left out, by Pareto-smoothed importance sampling of the fit's draws
	// or, when that is unreliable (K above MaxParetoK), by a refit without
	// the test (Refit).
	Without, WithoutSD float64
	// K is the Pareto shape of the importance ratios that leave the test
	// out; Refit reports that K was too large and the test was left out by
	// fitting the model again without it.
	K     float64
	Refit bool
	// Z is (estimate - Without) / sqrt(WithoutSD^2 + se^2), the test's
	// standardised distance from what the rest of the data predict. P is
	// the two-sided tail probability of the estimate under the posterior
	// predictive distribution of the test from the rest of the data (the
	// lift plus the test's own noise, Normal(0, se)): how surprising the
	// test is under the model. It is computed from the draws, not from a
	// normal approximation.
	Z, P float64
}

// Unreconciled is the P below which a lift test is reported as one the
// model cannot reconcile with the rest of the data.
const Unreconciled = 0.01

// MaxParetoK is the Pareto shape above which leaving a test out by
// importance sampling is unreliable (Vehtari, Simpson, Gelman, Yao and
// Gabry 2024, "Pareto smoothed importance sampling", JMLR 25, section 3.2):
// the test is then left out by a refit.
const MaxParetoK = 0.7

// Uninformed is how many times the test's own sd the rest of the data's sd
// of the lift may reach before the test counts as unchecked: at 10 the
// rest of the data hold under 1% of the test's precision.
const Uninformed = 10

// Verdicts of a lift test.
const (
	// LiftAgrees: the rest of the data predict the test (P >= Unreconciled).
	LiftAgrees = "agrees"
	// LiftContradicts: the rest of the data contradict it (P < Unreconciled).
	LiftContradicts = "contradicts"
	// LiftUnchecked: the rest of the data say too little about the tested
	// quantity to check the test (their sd of it above Uninformed times the
	// test's se), and do not contradict it: the model has taken the test in
	// and nothing checks it.
	LiftUnchecked = "unchecked"
)

// Verdict says whether the test agrees with the rest of the data,
// contradicts them, or could not be checked against them.
func (c LiftCheck) Verdict() string {
	switch {
	case c.P < Unreconciled:
		return LiftContradicts
	case !(c.WithoutSD <= Uninformed*c.Test.SE):
		return LiftUnchecked
	}
	return LiftAgrees
}

// Reconciled reports whether the test agrees with the rest of the data.
func (c LiftCheck) Reconciled() bool { return c.Verdict() == LiftAgrees }

// CheckLifts returns, for each lift test of a FitLifts fit, the model's
// posterior of the tested quantity and how surprising the test is given the
// rest of the data: the fit's draws reweighted to leave the test out
// (Pareto-smoothed importance sampling), or, for a test whose Pareto shape
// is above MaxParetoK (typically one the model has bent to follow, so the
// fit's draws say little about the posterior without it), a refit without
// the test with the fit's options and settings (seed moved by 1000 times
// the test's place). hook reports the refits' progress and may be nil.
func (f *Fitted) CheckLifts(ctx context.Context, hook StageHook) ([]LiftCheck, error) {
	return checkEach(f.Tests, f.settings, func(i int) []float64 { return f.liftDraws(f, i) },
		func(rest []lifts.Test, set mcmc.Settings, i int) ([]float64, error) {
			g, err := fitLifts(ctx, f.Data, f.options, rest, set, hook, false)
			if err != nil {
				return nil, err
			}
			return f.liftDraws(g, i), nil
		})
}

// checkEach is CheckLifts' loop, for a national fit and a region panel
// alike: draws(i) is test i's lift under the fit's paired draws; refit(rest,
// set, i) fits without test i (the other tests, the fit's settings with the
// seed moved by 1000 times the test's place) and returns test i's lift
// under that fit's draws.
func checkEach(tests []lifts.Test, settings mcmc.Settings, draws func(i int) []float64, refit func(rest []lifts.Test, set mcmc.Settings, i int) ([]float64, error)) ([]LiftCheck, error) {
	out := make([]LiftCheck, len(tests))
	for i := range tests {
		c := loCheck(tests[i], draws(i))
		if c.K > MaxParetoK {
			rest := append(append([]lifts.Test(nil), tests[:i]...), tests[i+1:]...)
			set := settings
			set.Seed += 1000 * uint64(i+1)
			d, err := refit(rest, set, i)
			if err != nil {
				return nil, fmt.Errorf("lift test (line %d) left out: %w", tests[i].Line, err)
			}
			pred := refitCheck(tests[i], d)
			c.Without, c.WithoutSD, c.Z, c.P, c.Refit = pred.Without, pred.WithoutSD, pred.Z, pred.P, true
		}
		out[i] = c
	}
	return out, nil
}

// liftDraws returns test i's lift (raw units) under every paired draw of
// g's demand and outcome fits; g has f's stages (f itself, or a refit).
func (f *Fitted) liftDraws(g *Fitted, i int) []float64 {
	t := f.Tests[i]
	div := f.Data.OutcomeScale
	if t.Metric == model.LiftQueries {
		div = f.Data.QueriesScale
	}
	term := f.Lifts[i].Clone().(*model.LiftTest)
	return pairedLifts(g.Fits[0], g.Fits[1], div, term.Lift)
}

// pairedLifts returns scale * lift(demand draw, outcome draw) for every
// paired draw of the demand and outcome fits, chain by chain (outcome may
// be nil: a test of the queries fitted without the outcome stage).
func pairedLifts(demand, outcome *mcmc.Fit, scale float64, lift func(vd, vy []float64) float64) []float64 {
	var draws []float64
	for c := range demand.Chains {
		d := demand.Chains[c].Draws
		var y *mat.Dense
		if outcome != nil {
			y = outcome.Chains[c].Draws
		}
		r, _ := d.Dims()
		for k := 0; k < r; k++ {
			var vy []float64
			if y != nil {
				vy = y.RawRowView(k)
			}
			draws = append(draws, scale*lift(d.RawRowView(k), vy))
		}
	}
	return draws
}

// loCheck summarises the draws of the lift under the fit with the test and
// leaves the test out by Pareto-smoothed importance sampling: the ratio of
// the posterior without the test to the posterior with it is, per draw,
// 1 / Normal(estimate | L, se).
func loCheck(t lifts.Test, draws []float64) LiftCheck {
	c := LiftCheck{Test: t}
	sorted := append([]float64(nil), draws...)
	sort.Float64s(sorted)
	c.Mean, c.Q05, c.Q95 = stat.Mean(draws), stat.Quantile(sorted, 0.05), stat.Quantile(sorted, 0.95)
	lw := make([]float64, len(draws))
	for s, L := range draws {
		z := (t.Estimate - L) / t.SE
		lw[s] = 0.5 * z * z
	}
	w, k := loo.Weights(lw)
	c.K = k
	c.Without, c.WithoutSD, c.Z, c.P = predictive(t, draws, w)
	return c
}

// refitCheck is the check of a test against the draws of a fit without it.
func refitCheck(t lifts.Test, draws []float64) LiftCheck {
	w := make([]float64, len(draws))
	for s := range w {
		w[s] = 1 / float64(len(draws))
	}
	c := LiftCheck{Test: t}
	c.Without, c.WithoutSD, c.Z, c.P = predictive(t, draws, w)
	return c
}

// predictive returns the weighted mean and sd of the lift draws, the
// test's standardised distance from them and its two-sided tail
// probability under the predictive mixture sum_s w_s Normal(L_s, se).
func predictive(t lifts.Test, draws, w []float64) (mean, sd, z, p float64) {
	var m, v, F float64
	for s, L := range draws {
		m += w[s] * L
		F += w[s] * distuv.UnitNormal.CDF((t.Estimate-L)/t.SE)
	}
	for s, L := range draws {
		v += w[s] * (L - m) * (L - m)
	}
	sd = math.Sqrt(v)
	z = (t.Estimate - m) / math.Sqrt(v+t.SE*t.SE)
	// clamped: the weights' sum can miss 1 in the last bits
	p = math.Max(0, math.Min(1, 2*math.Min(F, 1-F)))
	return m, sd, z, p
}
