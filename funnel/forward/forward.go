package forward

import (
	"fmt"
	"math"
	"math/rand/v2"

	"spillway/funnel/model"
)

// Simulator runs one model, a demand and an outcome stage built on the same
// scaled data, forward. It does not change after New (or Extend), so one
// Simulator serves many goroutines, each with its own buffers.
type Simulator struct {
	sc              *model.Scaled
	demand, outcome *model.Stage
	l1, l2          *model.Layout
	dem, dir        []int // demand- and outcome-stage channel of upper channel c
	srch            []int // outcome-stage channel of paid-search channel s
	demFrom         []int // upper channel feeding demand channel j
	outFrom         []int // feeds outcome channel j: upper c as c, paid search s as -1-s
	weeks           int   // weeks the regressors cover
	regs            [2][][]float64
}

// New returns a simulator of the demand and outcome stages, both built on sc
// (the outcome stage may be the naive one, without the query term: its
// via-search paths are then zero). It covers the data's weeks; Extend
// covers more.
func New(sc *model.Scaled, demand, outcome *model.Stage) (*Simulator, error) {
	s := &Simulator{sc: sc, demand: demand, outcome: outcome, l1: demand.Layout(), l2: outcome.Layout(), weeks: sc.T}
	s.regs[0], s.regs[1] = series(demand), series(outcome)
	find := func(l *model.Layout, col string) int {
		for j, c := range l.Channels() {
			if c.Column == col {
				return j
			}
		}
		return -1
	}
	const unset = math.MinInt
	s.demFrom = make([]int, len(s.l1.Channels()))
	s.outFrom = make([]int, len(s.l2.Channels()))
	for j := range s.demFrom {
		s.demFrom[j] = unset
	}
	for j := range s.outFrom {
		s.outFrom[j] = unset
	}
	for c, col := range sc.UpperNames {
		j1, j2 := find(s.l1, col), find(s.l2, col)
		if j1 < 0 || j2 < 0 {
			return nil, fmt.Errorf("forward: upper-funnel channel %s is missing from the %s or the %s stage", col, demand.Name, outcome.Name)
		}
		s.dem, s.dir = append(s.dem, j1), append(s.dir, j2)
		s.demFrom[j1], s.outFrom[j2] = c, c
	}
	for k, col := range sc.SearchNames {
		j := find(s.l2, col)
		if j < 0 {
			return nil, fmt.Errorf("forward: paid-search channel %s is missing from the %s stage", col, outcome.Name)
		}
		s.srch = append(s.srch, j)
		s.outFrom[j] = -1 - k
	}
	for j, c := range s.demFrom {
		if c == unset {
			return nil, fmt.Errorf("forward: the %s stage's channel %s is not an upper-funnel channel of the data", demand.Name, s.l1.Channels()[j].Column)
		}
	}
	for j, c := range s.outFrom {
		if c == unset {
			return nil, fmt.Errorf("forward: the %s stage's channel %s is not a channel of the data", outcome.Name, s.l2.Channels()[j].Column)
		}
	}
	return s, nil
}

func series(st *model.Stage) [][]float64 {
	out := make([][]float64, len(st.Regressors))
	for i, r := range st.Regressors {
		out[i] = r.X
	}
	return out
}

// Extend returns a simulator that also covers plans of up to weeks weeks
// (weeks >= the data's), the regressors continued as model.Scaled.Continue
// says.
func (s *Simulator) Extend(weeks int) (*Simulator, error) {
	e := *s
	var err error
	for k, st := range []*model.Stage{s.demand, s.outcome} {
		if e.regs[k], err = s.sc.Continue(st, weeks); err != nil {
			return nil, fmt.Errorf("forward: %w", err)
		}
	}
	e.weeks = weeks
	return &e, nil
}

// Weeks returns the longest plan the simulator covers.
func (s *Simulator) Weeks() int { return s.weeks }

// Data returns the data's own spend as a plan (shared: do not modify).
func (s *Simulator) Data() Plan { return Plan{Upper: s.sc.Upper, Search: s.sc.Search} }

// Draw is one paired posterior draw, read by meaning.
type Draw struct {
	Demand, Outcome model.Params
}

// Draw returns the named views of the demand draw v1 and the outcome draw
// v2 (constrained values in the stages' Names order; not copied).
func (s *Simulator) Draw(v1, v2 []float64) Draw {
	return Draw{Demand: s.l1.View(v1), Outcome: s.l2.View(v2)}
}

// Plan is weekly spend per channel in the channels' scaled units, from the
// data's first week: Upper[c][t] for the data's upper-funnel channels,
// Search[s][t] for its paid-search channels, every series as long as the
// plan.
type Plan struct {
	Upper, Search [][]float64
}

// Weeks returns the plan's length in weeks; it panics if its series differ
// in length.
func (p Plan) Weeks() int {
	n := -1
	for _, group := range [2][][]float64{p.Upper, p.Search} {
		for _, x := range group {
			if n >= 0 && len(x) != n {
				panic("forward: the plan's series differ in length")
			}
			n = len(x)
		}
	}
	return max(n, 0)
}

// Without writes x with weeks from..to (inclusive) set to zero into dst and
// returns it: the counterfactual of a channel's spend in a window, the
// carryover from earlier weeks kept. A dst too short is replaced.
func Without(dst, x []float64, from, to int) []float64 {
	dst = resize(dst, len(x))
	copy(dst, x)
	for t := from; t <= to; t++ {
		dst[t] = 0
	}
	return dst
}

// Path is one channel's contribution along one path: Gain * Response[t] in
// week t.
type Path struct {
	// Gain is the path's coefficients times the units of its result, e.g.
	// mean(y) gamma alpha for via search.
	Gain float64
	// Response is the coefficient-free response H(a(x; lam); K, S) per week
	// (the scaled spend itself for a linear channel).
	Response []float64
}

// At returns the contribution in week t.
func (p Path) At(t int) float64 { return p.Gain * p.Response[t] }

// Sum returns the response summed over the weeks (without the gain).
func (p Path) Sum() float64 {
	s := 0.0
	for _, v := range p.Response {
		s += v
	}
	return s
}

// Effect returns what path p adds over its counterfactual cf from week from
// to the plan's end: Gain * sum_t (p.Response[t] - cf.Response[t]), summed
// in week order and scaled once (the effect tables depend on that order).
// p and cf must be the same channel and path under two plans of one draw.
func Effect(p, cf Path, from int) float64 {
	s := 0.0
	for t := from; t < len(p.Response); t++ {
		s += p.Response[t] - cf.Response[t]
	}
	return p.Gain * s
}

// EffectWeighted is Effect with week t's difference counted w[t] times: a
// coefficient that drifts over the weeks.
func EffectWeighted(p, cf Path, from int, w []float64) float64 {
	s := 0.0
	for t := from; t < len(p.Response); t++ {
		s += w[t] * (p.Response[t] - cf.Response[t])
	}
	return p.Gain * s
}

// Upper holds an upper-funnel channel's paths. Lift and Via share one
// response (the demand stage's transform).
type Upper struct {
	Lift   Path // expected queries, scaled units: gain alpha
	Via    Path // outcome units: gain mean(y) gamma alpha
	Direct Path // outcome units: gain mean(y) delta
}

// Upper writes upper channel c's paths under its spend x (scaled units, any
// number of weeks) into dst, reusing dst's buffers.
func (s *Simulator) Upper(dst *Upper, d Draw, c int, x []float64) {
	m1 := d.Demand.ChannelAt(s.dem[c])
	h1 := m1.Response(dst.Lift.Response, x)
	dst.Lift = Path{Gain: m1.Coef, Response: h1}
	dst.Via = Path{Gain: s.sc.OutcomeScale * d.Outcome.Gamma() * m1.Coef, Response: h1}
	m2 := d.Outcome.ChannelAt(s.dir[c])
	dst.Direct = Path{Gain: s.sc.OutcomeScale * m2.Coef, Response: m2.Response(dst.Direct.Response, x)}
}

// Search writes paid-search channel k's controlled path (outcome units: gain
// mean(y) beta) under its spend x into dst, reusing dst's buffer.
func (s *Simulator) Search(dst *Path, d Draw, k int, x []float64) {
	m := d.Outcome.ChannelAt(s.srch[k])
	dst.Gain = s.sc.OutcomeScale * m.Coef
	dst.Response = m.Response(dst.Response, x)
}

// Steady returns upper channel c's weekly via-search and direct outcome
// when it spends x (scaled units) every week for ever: normalised adstock
// then equals x, so each response is H(x; K, S).
func (s *Simulator) Steady(d Draw, c int, x float64) (via, direct float64) {
	m1 := d.Demand.ChannelAt(s.dem[c])
	m2 := d.Outcome.ChannelAt(s.dir[c])
	via = s.sc.OutcomeScale * d.Outcome.Gamma() * m1.Coef * m1.Steady(x)
	direct = s.sc.OutcomeScale * m2.Coef * m2.Steady(x)
	return via, direct
}

// SteadySearch returns paid-search channel k's weekly controlled outcome
// when it spends x (scaled units) every week for ever.
func (s *Simulator) SteadySearch(d Draw, k int, x float64) float64 {
	m := d.Outcome.ChannelAt(s.srch[k])
	return s.sc.OutcomeScale * m.Coef * m.Steady(x)
}

// Run is the model run forward over a plan, week by week. Its slices are
// reused by the next run into it.
type Run struct {
	Upper  []Upper // per upper-funnel channel
	Search []Path  // per paid-search channel, controlled
	// Queries are the demand stage's expected queries m[t] (scaled units).
	Queries []float64
	// Outcome is the outcome stage's expected outcome n[t] (scaled units)
	// with the queries the run was given, or else with Queries.
	Outcome []float64

	demand, outcome [][]float64 // each stage's channel responses, in its order
}

// Run runs draw d forward over plan into dst. queries, if not nil, are the
// queries (scaled units, at least as long as the plan) the outcome stage
// sees, such as the observed ones; nil means the expected queries under the
// plan. The plan may be at most s.Weeks() long.
func (s *Simulator) Run(dst *Run, d Draw, plan Plan, queries []float64) {
	w := plan.Weeks()
	if w > s.weeks {
		panic(fmt.Sprintf("forward: a plan of %d weeks; the simulator covers %d (Extend it)", w, s.weeks))
	}
	if len(plan.Upper) != len(s.dem) || len(plan.Search) != len(s.srch) {
		panic("forward: the plan's channels do not match the data's")
	}
	dst.Upper = resizeUpper(dst.Upper, len(s.dem))
	dst.Search = resizePaths(dst.Search, len(s.srch))
	for c, x := range plan.Upper {
		s.Upper(&dst.Upper[c], d, c, x)
	}
	for k, x := range plan.Search {
		s.Search(&dst.Search[k], d, k, x)
	}
	// each stage's channel responses in the stage's order
	dst.demand = resizeSeries(dst.demand, len(s.demFrom))
	for j, c := range s.demFrom {
		dst.demand[j] = dst.Upper[c].Lift.Response
	}
	dst.outcome = resizeSeries(dst.outcome, len(s.outFrom))
	for j, c := range s.outFrom {
		if c >= 0 {
			dst.outcome[j] = dst.Upper[c].Direct.Response
		} else {
			dst.outcome[j] = dst.Search[-1-c].Response
		}
	}
	dst.Queries = resize(dst.Queries, w)
	predict(dst.Queries, d.Demand, s.regs[0], -1, nil, dst.demand)
	if queries == nil {
		queries = dst.Queries
	}
	dst.Outcome = resize(dst.Outcome, w)
	predict(dst.Outcome, d.Outcome, s.regs[1], s.l2.QueryRegressor(), queries, dst.outcome)
}

// Fit runs draw d on the data as it was (its spend, its observed queries):
// the fitted values.
func (s *Simulator) Fit(dst *Run, d Draw) {
	s.Run(dst, d, s.Data(), s.sc.Queries)
}

// predict writes a stage's linear predictor over len(dst) weeks into dst:
// the intercept, then each regressor (regressor q, if >= 0, reading
// queries), then each channel's coefficient times its response h[j], in the
// stage's order (the order in which fitted values were always summed).
func predict(dst []float64, p model.Params, regs [][]float64, q int, queries []float64, h [][]float64) {
	mu := p.Intercept()
	for t := range dst {
		dst[t] = mu
	}
	for i, x := range regs {
		if i == q {
			x = queries
		}
		b := p.Regressor(i)
		for t := range dst {
			dst[t] += b * x[t]
		}
	}
	for j, hj := range h {
		b := p.ChannelAt(j).Coef
		for t := range dst {
			dst[t] += b * hj[t]
		}
	}
}

// Predictive returns one draw of a stage's posterior predictive around its
// expected value mean: mean + sigma e, e standard normal from rng.
func Predictive(mean, sigma float64, rng *rand.Rand) float64 {
	return mean + sigma*rng.NormFloat64()
}

func resize(x []float64, n int) []float64 {
	if cap(x) >= n {
		return x[:n]
	}
	return make([]float64, n)
}

func resizeSeries(x [][]float64, n int) [][]float64 {
	if cap(x) >= n {
		return x[:n]
	}
	return make([][]float64, n)
}

func resizeUpper(x []Upper, n int) []Upper {
	if cap(x) >= n {
		return x[:n]
	}
	return append(x[:cap(x)], make([]Upper, n-cap(x))...)
}

func resizePaths(x []Path, n int) []Path {
	if cap(x) >= n {
		return x[:n]
	}
	return append(x[:cap(x)], make([]Path, n-cap(x))...)
}
