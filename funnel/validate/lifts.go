package validate

import (
	"context"
	"fmt"
	"math/rand/v2"
	"strconv"
	"strings"

	"spillway/funnel/lifts"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
)

// fitTests is fit with lift tests as data and the stated return priors
// restated on sc (pipeline.FitStages: the two stages as one joint target
// when a test is of the outcome, a return prior or a drift tie ties them);
// with none of them, fit itself, so a sweep without them is unchanged.
func (sw *Sweep) fitTests(ctx context.Context, sc *model.Scaled, seed uint64, tests []lifts.Test) (*fitted, error) {
	if len(tests) == 0 && len(sw.in.Options.Returns) == 0 && !sw.tied {
		return sw.fit(ctx, sc, seed)
	}
	o, err := sw.optionsFor(sc)
	if err != nil {
		return nil, err
	}
	// the target acceptance FitStages gives these stages (StageAccept)
	set := mcmc.Settings{Chains: sw.set.Chains, Warmup: sw.set.Warmup, Draws: sw.set.Draws, Seed: seed}
	pf, err := pipeline.FitStages(ctx, sc, o, tests, set, nil)
	if err != nil {
		return nil, err
	}
	return &fitted{sc: sc, st: [2]*model.Stage{pf.Stages[0], pf.Stages[1]}, fits: [2]*mcmc.Fit{pf.Fits[0], pf.Fits[1]}}, nil
}

// testsBefore returns the lift tests whose weeks all lie before week
// origin: the tests a forecast from origin may know.
func (sw *Sweep) testsBefore(origin int) []lifts.Test {
	var out []lifts.Test
	for _, t := range sw.in.Lifts {
		if t.To < origin {
			out = append(out, t)
		}
	}
	return out
}

// testsOutside returns the lift tests with no week in weeks from..to: a
// fit that leaves those weeks out leaves out the tests of them too.
func (sw *Sweep) testsOutside(from, to int) []lifts.Test {
	var out []lifts.Test
	for _, t := range sw.in.Lifts {
		if t.To < from || t.From > to {
			out = append(out, t)
		}
	}
	return out
}

// simulatedTests returns the sweep's lift tests as a replicate's truth
// would have given them: over the same weeks with the same standard
// errors, each estimate the true lift under the replicate's parameters
// (u1, u2, in its own units) plus Normal(0, se) noise.
func (sw *Sweep) simulatedTests(rep *replicate, rng *rand.Rand) ([]lifts.Test, error) {
	if len(sw.in.Lifts) == 0 {
		return nil, nil
	}
	terms := make([]model.CrossTerm, len(sw.in.Lifts))
	lt := make([]*model.LiftTest, len(sw.in.Lifts))
	for i, t := range sw.in.Lifts {
		lt[i] = t.Term(rep.sc, 0, 1)
		terms[i] = lt[i]
	}
	// binding the terms to the replicate's stages
	if _, err := model.NewJoint(rep.st[:], terms...); err != nil {
		return nil, err
	}
	out := make([]lifts.Test, len(sw.in.Lifts))
	for i, t := range sw.in.Lifts {
		div := rep.sc.OutcomeScale
		if t.Metric == model.LiftQueries {
			div = rep.sc.QueriesScale
		}
		t.Estimate = div*lt[i].Lift(rep.u1, rep.u2) + t.SE*rng.NormFloat64()
		out[i] = t
	}
	return out, nil
}

// liftsID describes the lift tests for the manifest, so that shards of one
// sweep agree on them ("" without tests: the manifest of a sweep without
// tests is unchanged).
func liftsID(tests []lifts.Test) string {
	var b strings.Builder
	for _, t := range tests {
		fmt.Fprintf(&b, "; lift %s %v %d-%d %s %s", t.Channel, t.Metric, t.From, t.To,
			strconv.FormatFloat(t.Estimate, 'g', -1, 64), strconv.FormatFloat(t.SE, 'g', -1, 64))
		if t.Region != "" {
			b.WriteString(" in " + t.Region)
		}
	}
	return b.String()
}
