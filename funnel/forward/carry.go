package forward

import "spillway/funnel/model"

// Carryover is where one draw's media transforms stand at the end of a run:
// each path's adstock in the run's last week. A run of later weeks that
// starts from it (UpperAfter, SearchAfter) gives the responses of running
// the whole plan again, bit for bit, at the cost of the later weeks alone:
// a budget plan evaluated many times runs the data's weeks once.
type Carryover struct {
	// Lift and Direct hold upper-funnel channel c's adstock in the demand
	// stage (the via-search path shares it) and in the outcome stage.
	Lift, Direct []float64
	// Search holds paid-search channel k's adstock.
	Search []float64
}

// Carryover writes into dst the state of draw d's transforms at the end of
// plan (such as the data's own spend, Data()), reusing dst's buffers.
func (s *Simulator) Carryover(dst *Carryover, d Draw, plan Plan) {
	if len(plan.Upper) != len(s.dem) || len(plan.Search) != len(s.srch) {
		panic("forward: the plan's channels do not match the data's")
	}
	dst.Lift = resize(dst.Lift, len(s.dem))
	dst.Direct = resize(dst.Direct, len(s.dem))
	dst.Search = resize(dst.Search, len(s.srch))
	for c, x := range plan.Upper {
		dst.Lift[c] = d.Demand.ChannelAt(s.dem[c]).Carry(x, 0)
		dst.Direct[c] = d.Outcome.ChannelAt(s.dir[c]).Carry(x, 0)
	}
	for k, x := range plan.Search {
		dst.Search[k] = d.Outcome.ChannelAt(s.srch[k]).Carry(x, 0)
	}
}

// UpperAfter is Upper for the weeks that follow a run ending in state from:
// x[0] is the spend in the first week after that run, and the paths'
// responses start there. The run is the data's (Data()): a drifting
// coefficient's multiplier in the weeks after is its last week's.
func (s *Simulator) UpperAfter(dst *Upper, d Draw, c int, x []float64, from *Carryover) {
	m1 := d.Demand.ChannelAt(s.dem[c])
	h1 := m1.ResponseFrom(dst.Lift.Response, x, from.Lift[c])
	afterData(h1, d.Demand, s.dem[c])
	dst.Lift = Path{Gain: m1.Coef, Response: h1}
	dst.Via = Path{Gain: s.sc.OutcomeScale * d.Outcome.Gamma() * m1.Coef, Response: h1}
	m2 := d.Outcome.ChannelAt(s.dir[c])
	h2 := m2.ResponseFrom(dst.Direct.Response, x, from.Direct[c])
	afterData(h2, d.Outcome, s.dir[c])
	dst.Direct = Path{Gain: s.sc.OutcomeScale * m2.Coef, Response: h2}
}

// afterData multiplies the responses of weeks past the data by channel j's
// drift multiplier there, its last week's (model Params.ApplyDrift), as a
// run over the data and those weeks does; nothing when it does not drift.
func afterData(h []float64, p model.Params, j int) {
	if !p.Drifts(j) {
		return
	}
	m := p.Last(j)
	for t := range h {
		h[t] *= m
	}
}

// SearchAfter is Search for the weeks that follow a run ending in state
// from: paid-search channel k's controlled path over x.
func (s *Simulator) SearchAfter(dst *Path, d Draw, k int, x []float64, from *Carryover) {
	m := d.Outcome.ChannelAt(s.srch[k])
	dst.Gain = s.sc.OutcomeScale * m.Coef
	dst.Response = m.ResponseFrom(dst.Response, x, from.Search[k])
	afterData(dst.Response, d.Outcome, s.srch[k])
}
