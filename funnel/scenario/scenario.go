package scenario

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"time"

	"spillway/funnel/data"
	"spillway/funnel/model"
	"spillway/funnel/stat"
)

// Channel holds the true transform of one channel in one stage.
type Channel struct {
	Coef, Lam, K, S float64
}

// Params are the true parameters of one scenario in generating units: the
// stages are written for q and y relative to their baselines QueryBase and
// OutcomeBase; Simulate rescales them to the fitted model's units.
type Params struct {
	MuQ, BQ, MuY, BY float64
	SeasonQ, SeasonY [4]float64 // c[1], c[2], d[1], d[2]
	PhiQ, PhiY       float64    // price effect (per sd of price)
	Demand           []Channel  // per upper channel (alpha, lam, K, S)
	Direct           []Channel  // per upper channel (delta, lam2, K2, S2)
	Search           Channel    // paid search (beta, lam_s, K_s, S_s)
	Gamma            float64
	SigmaQ, SigmaY   float64
	// Drift, if not nil, multiplies coefficients by week (effects that
	// change over time); nil: fixed effects.
	Drift *Drift
}

// Drift holds weekly multipliers of the true coefficients, each series as
// long as the data (a nil series: no drift): Demand[c] of upper channel c's
// lift of queries, Direct[c] of its direct effect, Search of paid search's
// effect. The multiplier of week t scales the response observed in week t.
type Drift struct {
	Demand, Direct [][]float64
	Search         []float64
}

// at returns the multiplier of series c of m in week t (1 when none).
func at(m [][]float64, c, t int) float64 {
	if c >= len(m) || m[c] == nil {
		return 1
	}
	return m[c][t]
}

// Scenario describes a simulated data set.
type Scenario struct {
	Name  string
	Weeks int
	// Regions is 0 for national data; otherwise the number of regions.
	Regions int
	Seed    uint64
	Start   time.Time
	P       Params
	// SearchFollowsQueries is the share of paid-search spend that tracks
	// query volume (auction spend rises with searches).
	SearchFollowsQueries float64
	// Spend levels: mean weekly spend when on, raw currency units.
	VideoLevel, AudioLevel, SearchLevel float64
	QueryBase, OutcomeBase              float64
	// Exposure, if not nil, makes video's impressions its media input
	// (exposure.go); nil: every channel runs on its spend.
	Exposure *Exposure
	// unitMeans makes each stage's series average exactly 1 before the
	// query and outcome bases multiply it, by choosing the intercept: P's
	// other parameters are then already in the fitted model's units, so
	// trend, seasons, control and sigma are the same in every region of a
	// panel, as the region model says (SimulatePanel).
	unitMeans bool
}

// Spec is the role declaration of every simulated data set.
var Spec = data.Spec{Date: "week", Upper: []string{"video_spend", "audio_spend"}, Search: []string{"search_spend"},
	Queries: "branded_queries", Outcome: "conversions", Controls: []string{"price"}}

// RegionSpec is Spec with the region and population columns.
var RegionSpec = func() data.Spec {
	s := Spec
	s.Region, s.Population = "region", "population"
	return s
}()

var demoParams = Params{
	MuQ: 0.6, BQ: 0.08, SeasonQ: [4]float64{0.06, 0.02, -0.04, 0.015}, PhiQ: -0.02,
	Demand: []Channel{{0.45, 0.55, 0.7, 1.5}, {0.2, 0.35, 0.5, 1.1}},
	MuY:    0.3, BY: 0.05, SeasonY: [4]float64{0.05, 0.01, 0.03, -0.01}, PhiY: -0.06,
	Gamma: 0.35, Search: Channel{0.12, 0.15, 0.9, 1.3},
	Direct: []Channel{{0.18, 0.45, 0.8, 1.4}, {0.12, 0.3, 0.6, 1.2}},
	SigmaQ: 0.035, SigmaY: 0.03,
}

// Named returns a built-in scenario: "demo" (156 weeks, national),
// "demo-regions" (the demo across 24 regions), and recovery-test variants
// "slow-burn" (long carryover, strong saturation, mostly mediated video) and
// "direct-audio" (audio works with no mediation at all, video about 7% mediated).
// weeks and regions of 0 keep the scenario's own.
func Named(name string, seed uint64, weeks, regions int) (*Scenario, error) {
	s := &Scenario{Name: name, Weeks: 156, Seed: seed, Start: time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC),
		P: demoParams, SearchFollowsQueries: 0.6,
		VideoLevel: 120000, AudioLevel: 40000, SearchLevel: 55000, QueryBase: 40000, OutcomeBase: 2500}
	s.P.Demand = append([]Channel(nil), demoParams.Demand...)
	s.P.Direct = append([]Channel(nil), demoParams.Direct...)
	switch name {
	case "demo":
	case "demo-regions":
		s.Regions = 24
	case "slow-burn":
		s.P.Demand = []Channel{{0.7, 0.8, 0.5, 2.2}, {0.15, 0.6, 0.9, 1.0}}
		s.P.Direct = []Channel{{0.06, 0.75, 0.6, 2.0}, {0.2, 0.5, 1.1, 0.9}}
		s.P.Gamma = 0.5
	case "exposure-rising":
		s.Exposure = &Exposure{CostRise: 0.3, CostNoise: 0.03}
	case "exposure-break":
		s.Exposure = &Exposure{CostRise: 0.3, CostNoise: 0.03, Break: 78, BreakScale: 1.6}
	case "exposure-error":
		s.Exposure = &Exposure{CostRise: 0.3, CostNoise: 0.03, ErrorSD: 0.25}
	case "reach-frequency":
		s.Exposure = &Exposure{CostNoise: 0.03, RF: true, Kf: 2, Sf: 2.5}
	case "direct-audio":
		s.P.Demand = []Channel{{0.08, 0.3, 0.9, 1.2}, {0, 0.5, 1, 2}}
		s.P.Direct = []Channel{{0.3, 0.25, 0.7, 1.6}, {0.2, 0.2, 0.5, 1.3}}
		s.P.Gamma = 0.3
		s.P.Search = Channel{0.2, 0.1, 0.8, 1.5}
	default:
		return nil, fmt.Errorf("scenario: unknown scenario %q; expected demo, demo-regions, slow-burn, direct-audio, exposure-rising, exposure-break, exposure-error or reach-frequency", name)
	}
	if weeks > 0 {
		s.Weeks = weeks
	}
	if regions > 0 {
		s.Regions = regions
	}
	if s.Weeks < 52 {
		return nil, fmt.Errorf("scenario: %d weeks is too few; the model needs at least 52", s.Weeks)
	}
	if e := s.Exposure; e != nil && (s.Regions > 0 || e.Break >= s.Weeks) {
		return nil, fmt.Errorf("scenario: %s is national, with its break inside its weeks", name)
	}
	return s, nil
}

// Region is one region's true parameters in fitted model units.
type Region struct {
	Name       string
	Population float64
	Demand     map[string]float64
	Outcome    map[string]float64
}

// Result is a simulated data set and the truth behind it.
type Result struct {
	Data *data.Dataset
	// Demand and Outcome are the true parameters in the fitted model's units
	// (national data), named as the model names them.
	Demand, Outcome map[string]float64
	// Regions holds the per-region truth of a regional scenario.
	Regions []Region
}

// Simulate draws the data. The same scenario and seed give the same data.
func (s *Scenario) Simulate() (*Result, error) {
	rng := rand.New(rand.NewPCG(s.Seed, 0x5ca1ab1e))
	weeks := make([]time.Time, s.Weeks)
	for i := range weeks {
		weeks[i] = s.Start.AddDate(0, 0, 7*i)
	}
	video, audio := s.videoSpend(rng), s.audioSpend(rng)
	price := s.price(rng)
	ds := &data.Dataset{Spec: s.Roles(), Weeks: weeks}
	res := &Result{Data: ds}
	if s.Regions == 0 {
		reg, dem, out, err := s.region(rng, "", 0, weeks, video, audio, price, s.P)
		if err != nil {
			return nil, err
		}
		ds.Regions = []data.Region{reg}
		res.Demand, res.Outcome = dem, out
		return res, nil
	}
	pops := make([]float64, s.Regions)
	total := 0.0
	for g := range pops {
		pops[g] = math.Round(3e5 * math.Exp(1.1*rng.NormFloat64()+0.8))
		total += pops[g]
	}
	for g := 0; g < s.Regions; g++ {
		share := pops[g] / total
		// region-specific spend around the national plan, intercept and
		// media effectiveness (DESIGN.md's region panel)
		rv, ra := make([]float64, s.Weeks), make([]float64, s.Weeks)
		for i := range rv {
			rv[i] = round2(video[i] * share * math.Exp(0.15*rng.NormFloat64()))
			ra[i] = round2(audio[i] * share * math.Exp(0.15*rng.NormFloat64()))
		}
		p := s.P
		p.MuQ += 0.08 * rng.NormFloat64()
		p.MuY += 0.08 * rng.NormFloat64()
		p.Demand = scaleCoefs(p.Demand, rng, 0.2)
		p.Direct = scaleCoefs(p.Direct, rng, 0.2)
		p.Gamma *= math.Exp(0.15 * rng.NormFloat64())
		p.Search.Coef *= math.Exp(0.2 * rng.NormFloat64())
		r2 := *s
		r2.QueryBase, r2.OutcomeBase, r2.SearchLevel = s.QueryBase*share, s.OutcomeBase*share, s.SearchLevel*share
		name := fmt.Sprintf("R%02d", g+1)
		reg, dem, out, err := r2.region(rng, name, pops[g], weeks, rv, ra, price, p)
		if err != nil {
			return nil, err
		}
		ds.Regions = append(ds.Regions, reg)
		res.Regions = append(res.Regions, Region{Name: name, Population: pops[g], Demand: dem, Outcome: out})
	}
	return res, nil
}

func scaleCoefs(cs []Channel, rng *rand.Rand, sd float64) []Channel {
	out := append([]Channel(nil), cs...)
	for i := range out {
		out[i].Coef *= math.Exp(sd * rng.NormFloat64())
	}
	return out
}

// shiftToMeanOne adds to x what makes its mean 1 and returns that shift.
func shiftToMeanOne(x []float64) float64 {
	d := 1 - stat.Mean(x)
	for i := range x {
		x[i] += d
	}
	return d
}

// region simulates one series from p and returns it with the true
// parameters rescaled to the units the model fits in.
func (s *Scenario) region(rng *rand.Rand, name string, pop float64, weeks []time.Time, video, audio, price []float64, p Params) (data.Region, map[string]float64, map[string]float64, error) {
	T := len(weeks)
	upperRaw := [][]float64{video, audio}
	upper := make([][]float64, 2)
	for c, x := range upperRaw {
		if d := model.SpendScale(x); d > 0 {
			upper[c] = divide(x, d)
		} else {
			upper[c] = make([]float64, T) // a region that never runs the channel
		}
	}
	var exposure, frequency [][]float64
	if s.Exposure != nil {
		var shown []float64
		shown, upper[0] = s.Exposure.impressions(rng, video)
		if s.Exposure.RF {
			var freq []float64
			shown, freq, upper[0] = s.Exposure.reachFrequency(rng, video, shown)
			frequency = [][]float64{freq, nil}
		}
		exposure = [][]float64{shown, nil}
	}
	z := standardise(price)
	tau := make([]float64, T)
	var season [4][]float64
	for k := range season {
		season[k] = make([]float64, T)
	}
	for i := 0; i < T; i++ {
		tau[i] = float64(i) / float64(T-1)
		for k, v := range model.SeasonAt(i) {
			season[k][i] = v
		}
	}
	// stage 1 in generating units
	q := make([]float64, T)
	for i := 0; i < T; i++ {
		q[i] = p.MuQ + p.BQ*tau[i] + p.PhiQ*z[i] + p.SigmaQ*rng.NormFloat64()
		for k := 0; k < 4; k++ {
			q[i] += p.SeasonQ[k] * season[k][i]
		}
	}
	var drift Drift
	if p.Drift != nil {
		drift = *p.Drift
	}
	for c, ch := range p.Demand {
		h := hillSeries(upper[c], ch)
		for i := range q {
			q[i] += ch.Coef * at(drift.Demand, c, i) * h[i]
		}
	}
	if s.unitMeans {
		p.MuQ += shiftToMeanOne(q)
	}
	// paid search spend partly follows query volume
	mq := stat.Mean(q)
	search := make([]float64, T)
	for i := range search {
		f := s.SearchFollowsQueries*q[i]/mq + (1 - s.SearchFollowsQueries)
		search[i] = round2(s.SearchLevel * f * math.Exp(0.08*rng.NormFloat64()))
	}
	xs := divide(search, model.SpendScale(search))
	y := make([]float64, T)
	for i := 0; i < T; i++ {
		y[i] = p.MuY + p.BY*tau[i] + p.PhiY*z[i] + p.Gamma*q[i] + p.SigmaY*rng.NormFloat64()
		for k := 0; k < 4; k++ {
			y[i] += p.SeasonY[k] * season[k][i]
		}
	}
	hs := hillSeries(xs, p.Search)
	for i := range y {
		y[i] += p.Search.Coef * at([][]float64{drift.Search}, 0, i) * hs[i]
	}
	for c, ch := range p.Direct {
		h := hillSeries(upper[c], ch)
		for i := range y {
			y[i] += ch.Coef * at(drift.Direct, c, i) * h[i]
		}
	}
	if s.unitMeans {
		p.MuY += shiftToMeanOne(y)
	}
	// raw units; the model divides by the means, so the truth is rescaled by them
	mqs, mys := stat.Mean(q), stat.Mean(y)
	queries, outcome := make([]float64, T), make([]float64, T)
	for i := range q {
		queries[i] = math.Round(q[i] * s.QueryBase)
		outcome[i] = math.Round(y[i] * s.OutcomeBase)
	}
	// rounding changes the means slightly; use the means the model will see
	mqs = stat.Mean(queries) / s.QueryBase
	mys = stat.Mean(outcome) / s.OutcomeBase
	reg := data.Region{Name: name, Population: pop, Series: data.Series{
		Weeks: weeks, Upper: upperRaw, Search: [][]float64{search}, Queries: queries, Outcome: outcome,
		Controls: [][]float64{price}, Exposure: exposure, Frequency: frequency}}
	dem, out, err := p.inModelUnits(reg.Series, s.Roles(), mqs, mys, s.Exposure)
	if err != nil {
		return data.Region{}, nil, nil, err
	}
	return reg, dem, out, nil
}

// inModelUnits returns p as the true parameters of the model's demand and
// outcome stages on series s, named as the model names them: the
// generating units divided by mqs and mys, the means of q and y that the
// model's scaling divides by (gamma by mys/mqs).
func (p Params) inModelUnits(s data.Series, spec data.Spec, mqs, mys float64, e *Exposure) (dem, out map[string]float64, err error) {
	sc := model.Scale(s, spec)
	st1, err := model.Demand(sc, model.Options{})
	if err != nil {
		return nil, nil, err
	}
	st2, err := model.Outcome(sc, model.Options{})
	if err != nil {
		return nil, nil, err
	}
	upper := map[string]Channel{}
	direct := map[string]Channel{Spec.Search[0]: p.Search}
	for c, col := range Spec.Upper {
		upper[col], direct[col] = p.Demand[c], p.Direct[c]
	}
	stage := stageTruth{mu: p.MuQ, trend: p.BQ, season: p.SeasonQ, control: p.PhiQ, sigma: p.SigmaQ, channels: upper, logBreak: e.logBreak(), exposure: e}
	if dem, err = stage.named(sc, st1, mqs, 0); err != nil {
		return nil, nil, err
	}
	stage = stageTruth{mu: p.MuY, trend: p.BY, season: p.SeasonY, control: p.PhiY, sigma: p.SigmaY, channels: direct, logBreak: e.logBreak(), exposure: e}
	if out, err = stage.named(sc, st2, mys, p.Gamma*mqs/mys); err != nil {
		return nil, nil, err
	}
	return dem, out, nil
}

// stageTruth is one stage's true parameters in generating units.
type stageTruth struct {
	mu, trend, control, sigma float64
	season                    [4]float64
	channels                  map[string]Channel // by data column
	logBreak                  float64            // a measurement break's log factor
	exposure                  *Exposure          // its latent errors, if any
}

// named writes t as a draw of st (built on sc) through its layout, the
// coefficients divided by m and gamma given in model units, and returns
// it by parameter name.
func (t stageTruth) named(sc *model.Scaled, st *model.Stage, m, gamma float64) (map[string]float64, error) {
	roles, err := sc.Roles(st)
	if err != nil {
		return nil, err
	}
	l := st.Layout()
	v := make([]float64, l.Len())
	v[l.InterceptSlot()] = t.mu / m
	v[l.SigmaSlot()] = t.sigma / m
	for i, r := range roles {
		switch r.Kind {
		case model.RoleTrend:
			v[l.RegressorSlot(i)] = t.trend / m
		case model.RoleSeason:
			v[l.RegressorSlot(i)] = t.season[r.Index] / m
		case model.RoleControl:
			v[l.RegressorSlot(i)] = t.control / m
		case model.RoleQueries:
			v[l.RegressorSlot(i)] = gamma
		}
	}
	for _, cs := range l.Channels() {
		ch, ok := t.channels[cs.Column]
		if !ok {
			return nil, fmt.Errorf("scenario: no true parameters for channel %s", cs.Column)
		}
		v[cs.Coef] = ch.Coef / m
		if !cs.Linear() {
			v[cs.Lam], v[cs.K], v[cs.S] = ch.Lam, ch.K, ch.S
		}
		if cs.Break >= 0 {
			v[cs.Break] = t.logBreak
		}
		for i, w := range cs.ErrWeeks {
			v[cs.ErrZ+i] = t.exposure.latent(w)
		}
		if cs.FreqK >= 0 {
			v[cs.FreqK], v[cs.FreqK+1] = t.exposure.Kf, t.exposure.Sf
		}
	}
	named := map[string]float64{}
	for i, n := range l.Names() {
		named[n] = v[i]
	}
	return named, nil
}

// videoSpend draws flighted video spend: bursts of 3 to 8 weeks on, gaps of
// 2 to 6 weeks off, heavier in spring and autumn.
func (s *Scenario) videoSpend(rng *rand.Rand) []float64 {
	x := make([]float64, s.Weeks)
	for i := 0; i < s.Weeks; {
		on := 3 + rng.IntN(6)
		level := s.VideoLevel * math.Exp(0.35*rng.NormFloat64())
		for j := 0; j < on && i < s.Weeks; j++ {
			season := 1 + 0.25*math.Cos(4*math.Pi*float64(i)/model.SeasonPeriod)
			x[i] = round2(level * season * math.Exp(0.1*rng.NormFloat64()))
			i++
		}
		i += 2 + rng.IntN(5)
	}
	return x
}

// audioSpend draws always-on audio with a summer lift and off weeks.
func (s *Scenario) audioSpend(rng *rand.Rand) []float64 {
	x := make([]float64, s.Weeks)
	for i := range x {
		if rng.Float64() < 0.15 {
			continue
		}
		summer := 1 + 0.4*math.Sin(2*math.Pi*float64(i)/model.SeasonPeriod)
		x[i] = round2(s.AudioLevel * summer * math.Exp(0.3*rng.NormFloat64()))
	}
	return x
}

// price draws a list price near 49 with promotion weeks.
func (s *Scenario) price(rng *rand.Rand) []float64 {
	x := make([]float64, s.Weeks)
	for i := range x {
		x[i] = 49 + 0.4*rng.NormFloat64()
		if rng.Float64() < 0.12 {
			x[i] -= 5
		}
		x[i] = round2(x[i])
	}
	return x
}

// hillSeries is channel c's coefficient-free response to spend x.
func hillSeries(x []float64, c Channel) []float64 {
	return model.Media{Lam: c.Lam, K: c.K, S: c.S}.Response(nil, x)
}

func divide(x []float64, d float64) []float64 {
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = v / d
	}
	return out
}

func standardise(x []float64) []float64 {
	m, sd := stat.MeanSD(x)
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = (v - m) / sd
	}
	return out
}

func round2(v float64) float64 { return math.Round(v*100) / 100 }

// ParamNames returns the sorted names of a truth map (for stable output).
func ParamNames(m map[string]float64) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}
