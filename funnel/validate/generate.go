package validate

import (
	"fmt"
	"math/rand/v2"

	"spillway/funnel/data"
	"spillway/funnel/forward"
	"spillway/funnel/model"
	"spillway/mediation"
)

// generator makes the recovery check's data sets: it picks a parameter
// vector per replicate and simulates the queries and the outcome from it
// on the data's own spend, controls and weeks.
type generator struct {
	// name describes the generator in the manifest.
	name string
	// fromPosterior is true when draw needs the reference fit.
	fromPosterior bool
	// draw returns replicate rep's demand and outcome parameter values
	// (constrained, in the stages' Names() order, model units of the
	// data), drawing from rng if it needs to; ref is the reference fit's
	// paired draws (nil when fromPosterior is false).
	draw func(rep int, rng *rand.Rand, ref *mediation.Inputs) (v1, v2 []float64, err error)
	// regions, if not nil, holds a region panel's true values per region
	// (demand, outcome; each region's stages' Names() order, model units
	// of the region's scaling): every panel replicate is simulated from
	// them (panelRecoveryJob), and draw is nil.
	regions [][2][]float64
	// ramp, if not nil, multiplies upper channel c's demand coefficient
	// in week t by ramp[c][t] (a nil row: no drift): an effect that drifts
	// over time, which the default model lacks. Tests use it to check
	// that a misspecified model is caught.
	ramp [][]float64
}

// posteriorGenerator simulates replicate r from a posterior draw of the
// reference fit chosen uniformly at random.
func posteriorGenerator(sw *Sweep) *generator {
	return &generator{name: "posterior draws of the reference fit", fromPosterior: true,
		draw: func(_ int, rng *rand.Rand, ref *mediation.Inputs) ([]float64, []float64, error) {
			d := rng.IntN(len(ref.DemandDraws.Rows))
			return ref.DemandDraws.Rows[d], ref.OutcomeDraws.Rows[d], nil
		}}
}

// truthGenerator simulates every replicate from the given true values.
func truthGenerator(sw *Sweep, t *Truth) (*generator, error) {
	v1, v2, err := truthValues(sw, t)
	if err != nil {
		return nil, err
	}
	return &generator{name: "given true parameters (" + truthID(sw, v1, v2) + ")",
		draw: func(int, *rand.Rand, *mediation.Inputs) ([]float64, []float64, error) { return v1, v2, nil }}, nil
}

func truthID(sw *Sweep, v1, v2 []float64) string {
	var f fingerprint
	f.point(sw.stages, v1, v2)
	return f.sum()[:16]
}

// point adds parameter values v1, v2 of stages st, each by its name.
func (f *fingerprint) point(st [2]*model.Stage, v1, v2 []float64) {
	for k, v := range [][]float64{v1, v2} {
		for i, n := range st[k].Names() {
			f.str(n)
			f.num(v[i])
		}
	}
}

// replicate is one simulated data set and its truth.
type replicate struct {
	series data.Series
	sc     *model.Scaled // the replicate scaled as a fit scales it
	// u1, u2 are the true parameters in the replicate's model units.
	u1, u2 []float64
	st     [2]*model.Stage
	// effects are the true effects (window all and every quarter).
	effects *mediation.Result
}

// simulate draws a replicate from parameter values v1, v2 (model units of
// the data): q~ = m + sigma_q e1 from the demand stage, paid-search spend
// as observed, y~ = n (with the simulated q~) + sigma_y e2, converted to
// raw units with the data's scales. The true effects are those of v1, v2
// computed by mediation.Split on the replicate's own data (a single
// draw), with the parameters rescaled to the units a fit to the replicate
// works in.
func (sw *Sweep) simulate(g *generator, v1, v2 []float64, rng *rand.Rand) (*replicate, error) {
	base, st := sw.base, sw.stages
	sim, err := forward.New(base, st[0], st[1])
	if err != nil {
		return nil, err
	}
	dr := sim.Draw(v1, v2)
	var run forward.Run
	sim.Fit(&run, dr)
	m, n := run.Queries, run.Outcome // n with the observed queries
	for c, r := range g.ramp {
		if r == nil {
			continue
		}
		lift := run.Upper[c].Lift
		for t := range m {
			m[t] += (r[t] - 1) * lift.Gain * lift.Response[t]
		}
	}
	T := base.T
	gamma := dr.Outcome.Gamma()
	q, y := make([]float64, T), make([]float64, T)
	for t := range q {
		q[t] = forward.Predictive(m[t], dr.Demand.Sigma(), rng)
	}
	for t := range y {
		// the outcome stage's expected value at the simulated queries
		y[t] = forward.Predictive(n[t]+gamma*(q[t]-base.Queries[t]), dr.Outcome.Sigma(), rng)
	}
	s := sw.in.Series
	rep := &replicate{series: data.Series{Weeks: s.Weeks, Upper: s.Upper, Search: s.Search, Controls: s.Controls,
		Exposure: s.Exposure, Frequency: s.Frequency, Queries: make([]float64, T), Outcome: make([]float64, T)}}
	for t := range q {
		rep.series.Queries[t] = q[t] * base.QueriesScale
		rep.series.Outcome[t] = y[t] * base.OutcomeScale
	}
	rep.sc = model.Scale(rep.series, sw.in.Spec)
	if !(rep.sc.QueriesScale > 0 && rep.sc.OutcomeScale > 0) {
		return nil, fmt.Errorf("validate: a simulated data set has mean queries %g and mean outcome %g; the parameters give no positive series", rep.sc.QueriesScale, rep.sc.OutcomeScale)
	}
	if rep.st[0], err = model.Demand(rep.sc, sw.in.Options); err != nil {
		return nil, err
	}
	if rep.st[1], err = model.Outcome(rep.sc, sw.in.Options); err != nil {
		return nil, err
	}
	// q~' = kq q~ and y~' = ky y~ in the replicate's own scaling.
	kq := base.QueriesScale / rep.sc.QueriesScale
	ky := base.OutcomeScale / rep.sc.OutcomeScale
	rep.u1 = rep.st[0].Layout().View(v1).Rescaled(kq, 0)
	rep.u2 = rep.st[1].Layout().View(v2).Rescaled(ky, ky/kq)
	in := &mediation.Inputs{Data: rep.sc, Demand: rep.st[0], Outcome: rep.st[1],
		DemandDraws:  mediation.Draws{Names: rep.st[0].Names(), Rows: [][]float64{rep.u1}},
		OutcomeDraws: mediation.Draws{Names: rep.st[1].Names(), Rows: [][]float64{rep.u2}}}
	if rep.effects, err = mediation.Split(in, sw.windows); err != nil {
		return nil, err
	}
	if g.ramp != nil {
		if err := sw.rampEffects(rep, g.ramp); err != nil {
			return nil, err
		}
	}
	return rep, nil
}

// rampEffects replaces the via-search (and so the total and mediated
// share) effects of ramped channels with their drifting truth: week t's
// response counts ramp[c][t] times.
func (sw *Sweep) rampEffects(rep *replicate, ramp [][]float64) error {
	sc := rep.sc
	sim, err := forward.New(sc, rep.st[0], rep.st[1])
	if err != nil {
		return err
	}
	dr := sim.Draw(rep.u1, rep.u2)
	var up, cf forward.Upper
	var cfx []float64
	for c, col := range sc.UpperNames {
		if c >= len(ramp) || ramp[c] == nil {
			continue
		}
		sim.Upper(&up, dr, c, sc.Upper[c])
		for _, win := range sw.windows {
			cfx = forward.Without(cfx, sc.Upper[c], win.From, win.To)
			sim.Upper(&cf, dr, c, cfx)
			via := forward.EffectWeighted(up.Via, cf.Via, win.From, ramp[c])
			var dir float64
			for i := range rep.effects.Effects {
				e := &rep.effects.Effects[i]
				if e.Channel == col && e.Window == win.Name && e.Path == "direct" {
					dir = e.Draws[0]
				}
			}
			for i := range rep.effects.Effects {
				e := &rep.effects.Effects[i]
				if e.Channel != col || e.Window != win.Name {
					continue
				}
				switch e.Path {
				case "via_search":
					e.Draws = []float64{via}
				case "total":
					e.Draws = []float64{via + dir}
				case "mediated_share":
					e.Draws = []float64{via / (via + dir)}
				}
			}
		}
	}
	return nil
}
