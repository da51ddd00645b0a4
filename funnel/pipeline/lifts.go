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
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/stat"
)

// FitLifts is Fit with lift tests as data. A test of the outcome ties the
// demand and the outcome stage (via search needs alpha and gamma), so then
// the two are fitted as one joint target (model.Joint) with every test; with
// tests of the queries alone, the demand stage is fitted with them and the
// outcome stage on its own. The naive stage is always fitted on its own,
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

// fitLifts is FitLifts with or without the naive stage (Fits[2] nil
// without), with or without tests.
func fitLifts(ctx context.Context, sc *model.Scaled, o model.Options, tests []lifts.Test, s mcmc.Settings, hook StageHook, naive bool) (*Fitted, error) {
	st, err := Stages(sc, o)
	if err != nil {
		return nil, err
	}
	f := &Fitted{Data: sc, Stages: st, Tests: tests}
	joint, j, err := bindLifts(f, o)
	if err != nil {
		return nil, err
	}
	set := settings(s, 0)
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
		if f.Fits[k], f.Wall[k], err = run(ctx, tg, settings(s, k), hook, st[k].Name); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// bindLifts sets f.Lifts, the terms of f.Tests in the likelihood, bound
// to f's stages in the joint target they are sampled in: the demand stage,
// and the outcome stage too when a test of the outcome ties them. It
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
	if len(o.Returns) > 0 && len(joint) == 1 {
		joint = append(joint, st[1]) // a return prior ties alpha to gamma and delta
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
	j, err := model.NewJoint(joint, cross...)
	return joint, j, err
}

// Assemble is the Fitted of fits sampled elsewhere, such as the chains of
// one fit sampled as separate jobs and put together: the stages of sc and
// o, the lift tests' terms, and the fits and wall times as given. Given the
// same chains, it equals what FitLifts returned.
func Assemble(sc *model.Scaled, o model.Options, tests []lifts.Test, fits [3]*mcmc.Fit, wall [3]float64) (*Fitted, error) {
	st, err := Stages(sc, o)
	if err != nil {
		return nil, err
	}
	f := &Fitted{Data: sc, Stages: st, Fits: fits, Wall: wall}
	if len(tests) > 0 || len(o.Returns) > 0 {
		f.Tests = tests
		if _, _, err := bindLifts(f, o); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// settings returns s for stage k: seed s.Seed + k, the default target
// acceptance unless s sets one.
func settings(s mcmc.Settings, k int) mcmc.Settings {
	set := s
	set.Seed = s.Seed + uint64(k)
	if set.TargetAccept == 0 {
		set.TargetAccept = DefaultTargetAccept
	}
	return set
}

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
	// Without and WithoutSD are the mean and sd the rest of the data (the
	// other tests included) give the lift, in a normal approximation: the
	// posterior's normal with this test's likelihood divided out. NaN when
	// the rest of the data say nothing the test does not.
	Without, WithoutSD float64
	// Z is (estimate - Without) / sqrt(WithoutSD^2 + se^2), the test's
	// standardised distance from what the rest of the data predict, and P
	// its two-sided tail probability: how surprising the test is under the
	// model. Z is 0 and P 1 when Without is NaN (Verdict says unchecked).
	Z, P float64
}

// Unreconciled is the P below which a lift test is reported as one the
// model cannot reconcile with the rest of the data.
const Unreconciled = 0.01

// Verdicts of a lift test.
const (
	// LiftAgrees: the rest of the data predict the test (P >= Unreconciled).
	LiftAgrees = "agrees"
	// LiftContradicts: the rest of the data contradict it (P < Unreconciled).
	LiftContradicts = "contradicts"
	// LiftUnchecked: the posterior of the tested quantity is the test's own
	// (the rest of the data hold under 1% of its precision): the model has
	// taken the test in and nothing checks it. With drifting coefficients
	// and a moving baseline, a test far from the truth can end here rather
	// than as contradicted, so it is reported too.
	LiftUnchecked = "unchecked"
)

// Verdict says whether the test agrees with the rest of the data,
// contradicts them, or could not be checked against them.
func (c LiftCheck) Verdict() string {
	switch {
	case math.IsNaN(c.Without):
		return LiftUnchecked
	case c.P < Unreconciled:
		return LiftContradicts
	}
	return LiftAgrees
}

// Reconciled reports whether the test agrees with the rest of the data.
func (c LiftCheck) Reconciled() bool { return c.Verdict() == LiftAgrees }

// LiftChecks returns, for each lift test of a FitLifts fit, the model's
// posterior of the tested quantity and how surprising the test is under
// the rest of the data.
func (f *Fitted) LiftChecks() []LiftCheck {
	out := make([]LiftCheck, len(f.Lifts))
	for i, l := range f.Lifts {
		t := f.Tests[i]
		div := f.Data.OutcomeScale
		if t.Metric == model.LiftQueries {
			div = f.Data.QueriesScale
		}
		term := l.Clone().(*model.LiftTest)
		var draws []float64
		for c := range f.Fits[0].Chains {
			d := f.Fits[0].Chains[c].Draws
			var y *mat.Dense
			if f.Fits[1] != nil {
				y = f.Fits[1].Chains[c].Draws
			}
			r, _ := d.Dims()
			for k := 0; k < r; k++ {
				var vy []float64
				if y != nil {
					vy = y.RawRowView(k)
				}
				draws = append(draws, div*term.Lift(d.RawRowView(k), vy))
			}
		}
		out[i] = check(t, draws)
	}
	return out
}

func check(t lifts.Test, draws []float64) LiftCheck {
	c := LiftCheck{Test: t}
	m, v1 := stat.Mean(draws), stat.Variance(draws)
	sorted := append([]float64(nil), draws...)
	sort.Float64s(sorted)
	c.Mean, c.Q05, c.Q95 = m, stat.Quantile(sorted, 0.05), stat.Quantile(sorted, 0.95)
	// normal posterior = rest N(m0, v0) times the test N(est | L, se^2)
	se2 := t.SE * t.SE
	p0 := 1/v1 - 1/se2
	c.Without, c.WithoutSD, c.Z, c.P = math.NaN(), math.NaN(), 0, 1
	if !(p0 > 0.01/se2) { // the rest of the data hold under 1% of the test's precision
		return c
	}
	v0 := 1 / p0
	c.Without = v0 * (m/v1 - t.Estimate/se2)
	c.WithoutSD = math.Sqrt(v0)
	c.Z = (t.Estimate - c.Without) / math.Sqrt(v0+se2)
	c.P = 2 * distuv.UnitNormal.CDF(-math.Abs(c.Z))
	return c
}
