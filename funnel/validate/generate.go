package validate

import (
	"fmt"
	"math/rand/v2"

	"spillway/funnel/data"
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
	d1, err := mediation.Point(sw.stages[0].Names(), t.Demand)
	if err != nil {
		return nil, fmt.Errorf("validate: the truth's demand parameters: %w", err)
	}
	d2, err := mediation.Point(sw.stages[1].Names(), t.Outcome)
	if err != nil {
		return nil, fmt.Errorf("validate: the truth's outcome parameters: %w", err)
	}
	v1, v2 := d1.Rows[0], d2.Rows[0]
	return &generator{name: "given true parameters (" + truthID(sw, v1, v2) + ")",
		draw: func(int, *rand.Rand, *mediation.Inputs) ([]float64, []float64, error) { return v1, v2, nil }}, nil
}

func truthID(sw *Sweep, v1, v2 []float64) string {
	var f fingerprint
	for k, v := range [][]float64{v1, v2} {
		for i, n := range sw.stages[k].Names() {
			f.str(n)
			f.num(v[i])
		}
	}
	return f.sum()[:16]
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
	T := base.T
	m := st[0].Predict(nil, v1)
	for c, r := range g.ramp {
		if r == nil {
			continue
		}
		h, alpha := st[0].Response(nil, c, v1, base.Upper[c])
		for t := range m {
			m[t] += (r[t] - 1) * alpha * h[t]
		}
	}
	sigmaQ, sigmaY := v1[len(v1)-1], v2[len(v2)-1]
	gi := indexOf(st[1].Names(), "gamma")
	gamma := v2[gi]
	n := st[1].Predict(nil, v2)
	q, y := make([]float64, T), make([]float64, T)
	for t := range q {
		q[t] = m[t] + sigmaQ*rng.NormFloat64()
	}
	for t := range y {
		y[t] = n[t] + gamma*(q[t]-base.Queries[t]) + sigmaY*rng.NormFloat64()
	}
	s := sw.in.Series
	rep := &replicate{series: data.Series{Weeks: s.Weeks, Upper: s.Upper, Search: s.Search, Controls: s.Controls,
		Queries: make([]float64, T), Outcome: make([]float64, T)}}
	for t := range q {
		rep.series.Queries[t] = q[t] * base.QueriesScale
		rep.series.Outcome[t] = y[t] * base.OutcomeScale
	}
	rep.sc = model.Scale(rep.series, sw.in.Spec)
	if !(rep.sc.QueriesScale > 0 && rep.sc.OutcomeScale > 0) {
		return nil, fmt.Errorf("validate: a simulated data set has mean queries %g and mean outcome %g; the parameters give no positive series", rep.sc.QueriesScale, rep.sc.OutcomeScale)
	}
	var err error
	if rep.st[0], err = model.Demand(rep.sc, sw.in.Options); err != nil {
		return nil, err
	}
	if rep.st[1], err = model.Outcome(rep.sc, sw.in.Options); err != nil {
		return nil, err
	}
	// q~' = kq q~ and y~' = ky y~ in the replicate's own scaling.
	kq := base.QueriesScale / rep.sc.QueriesScale
	ky := base.OutcomeScale / rep.sc.OutcomeScale
	rep.u1 = rescale(rep.st[0], v1, kq, 0)
	rep.u2 = rescale(rep.st[1], v2, ky, ky/kq)
	in := &mediation.Inputs{Data: rep.sc, Demand: rep.st[0], Outcome: rep.st[1],
		DemandDraws:  mediation.Draws{Names: rep.st[0].Names(), Rows: [][]float64{rep.u1}},
		OutcomeDraws: mediation.Draws{Names: rep.st[1].Names(), Rows: [][]float64{rep.u2}}}
	if rep.effects, err = mediation.Split(in, sw.windows); err != nil {
		return nil, err
	}
	if g.ramp != nil {
		sw.rampEffects(rep, g.ramp)
	}
	return rep, nil
}

// rescale returns the parameter values v of stage st multiplied by k where
// they scale with the stage's response (intercept, regressors, channel
// coefficients, sigma), by kGamma for the query coefficient gamma, and
// unchanged where they do not (retention, half-saturation, shape).
func rescale(st *model.Stage, v []float64, k, kGamma float64) []float64 {
	out := append([]float64(nil), v...)
	i := 0
	out[i] *= k
	i++
	for _, r := range st.Regressors {
		if r.Name == "gamma" {
			out[i] *= kGamma
		} else {
			out[i] *= k
		}
		i++
	}
	for _, c := range st.Channels {
		out[i] *= k
		if c.Linear {
			i++
		} else {
			i += 4
		}
	}
	out[i] *= k
	return out
}

// rampEffects replaces the via-search (and so the total and mediated
// share) effects of ramped channels with their drifting truth: week t's
// response counts ramp[c][t] times.
func (sw *Sweep) rampEffects(rep *replicate, ramp [][]float64) {
	sc, st := rep.sc, rep.st
	gamma := rep.u2[indexOf(st[1].Names(), "gamma")]
	T := sc.T
	cf := make([]float64, T)
	for c, col := range sc.UpperNames {
		if c >= len(ramp) || ramp[c] == nil {
			continue
		}
		r := ramp[c]
		h, alpha := st[0].Response(nil, c, rep.u1, sc.Upper[c])
		for _, win := range sw.windows {
			copy(cf, sc.Upper[c])
			for t := win.From; t <= win.To; t++ {
				cf[t] = 0
			}
			hcf, _ := st[0].Response(nil, c, rep.u1, cf)
			s := 0.0
			for t := win.From; t < T; t++ {
				s += r[t] * (h[t] - hcf[t])
			}
			via := sc.OutcomeScale * gamma * alpha * s
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
}

func indexOf(names []string, n string) int {
	for i, v := range names {
		if v == n {
			return i
		}
	}
	return -1
}
