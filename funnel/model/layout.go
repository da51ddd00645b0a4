package model

import (
	"fmt"
	"math"
	"strings"

	"spillway/funnel/transform"
)

// Layout is where each parameter of a stage sits in one of its constrained
// draws (the order of Stage.Names). Every package outside this one reads a
// draw through a Layout, by meaning (a channel's coefficient, gamma, sigma),
// never by position or by a parameter name typed again.
type Layout struct {
	names     []string
	intercept int
	sigma     int
	gamma     int   // -1 when the stage has no query term
	regs      []int // position of Stage.Regressors[i]
	queryReg  int   // index in Stage.Regressors of the query term, -1
	scaling   []int // regressors whose coefficient scales with the response (all but gamma)
	channels  []ChannelSlots
	blocks    []Block
	baseline  SmoothSlots
}

// ChannelSlots are the positions of one media channel's parameters. Lam, K
// and S are -1 for a linear channel.
type ChannelSlots struct {
	Column          string // the data column, e.g. "video_spend"
	Coef, Lam, K, S int
	// Drift holds the positions of the smooth function the coefficient
	// drifts by (Drift.Basis is nil when it does not drift).
	Drift SmoothSlots
	// Break is the position of the log factor of a measurement break in
	// the channel's exposure (exposure.go), -1 when it has none; BreakAt
	// is the break's week.
	Break, BreakAt int
	// ErrZ is the position of the first latent error of the channel's
	// exposure, -1 when it has none; ErrSD is the error's sd and ErrWeeks
	// the weeks with a latent error, one each from ErrZ on.
	ErrZ     int
	ErrSD    float64
	ErrWeeks []int
	// FreqK is the position of the frequency curve's Kf (Sf follows), -1
	// unless the channel is given as reach and frequency (reach.go); Freq
	// and FreqAfter are its weekly frequency and the frequency after the
	// data.
	FreqK     int
	Freq      []float64
	FreqAfter float64
}

// SmoothSlots are the positions of a smooth function's parameters (model
// smooth.go): its sd, its length-scale and its Basis.M weights from Z;
// with jumps (jump.go), their scale at Jump and Basis.J() weights after it
// (Jump -1 without).
type SmoothSlots struct {
	Basis            *Basis // nil: no such function
	SD, Len, Z, Jump int
}

// at returns f(t) given the smooth part's weights c (Basis.coefs) at the
// constrained draw v.
func (s SmoothSlots) at(v []float64, t int, c []float64) float64 {
	f := s.Basis.at(t, c)
	if s.Jump >= 0 {
		f += s.Basis.jumpAt(t, v[s.Jump], v[s.Jump+1:s.Jump+1+s.Basis.J()])
	}
	return f
}

// Has reports whether the function exists.
func (s SmoothSlots) Has() bool { return s.Basis != nil }

// Linear reports whether the channel has no carryover and no saturation.
func (c ChannelSlots) Linear() bool { return c.Lam < 0 }

// Block is a run of parameters that belong together: today every parameter
// is a block of length 1; a coefficient per region or a multiplier per week
// will be one block of many.
type Block struct {
	Name  string
	Start int
	Len   int
}

// Layout returns the stage's parameter layout.
func (s *Stage) Layout() *Layout {
	l := &Layout{names: s.Names(), gamma: -1, queryReg: -1}
	k := 0
	add := func() int {
		l.blocks = append(l.blocks, Block{Name: l.names[k], Start: k, Len: 1})
		k++
		return k - 1
	}
	l.intercept = add()
	for _, r := range s.Regressors {
		i := add()
		l.regs = append(l.regs, i)
		if r.Name == QueryCoef {
			l.gamma = i
			l.queryReg = len(l.regs) - 1
		} else {
			l.scaling = append(l.scaling, i)
		}
	}
	for _, c := range s.Channels {
		cs := ChannelSlots{Column: c.Column, Coef: add(), Lam: -1, K: -1, S: -1, Drift: SmoothSlots{SD: -1, Len: -1, Z: -1, Jump: -1}, Break: -1, ErrZ: -1, FreqK: -1}
		if !c.Linear {
			cs.Lam, cs.K, cs.S = add(), add(), add()
		}
		l.channels = append(l.channels, cs)
	}
	l.sigma = add()
	smooth := func(sm *Smooth) SmoothSlots {
		ss := SmoothSlots{Basis: sm.Basis, SD: add(), Len: add(), Z: k, Jump: -1}
		block := func(n int) {
			name, _, _ := strings.Cut(l.names[k], "[")
			if i := strings.LastIndexByte(l.names[k], ','); i > 0 {
				name = l.names[k][:i] + "]" // "drift_z_alpha[video_spend,1]" gives "drift_z_alpha[video_spend]"
			}
			l.blocks = append(l.blocks, Block{Name: name, Start: k, Len: n})
			k += n
		}
		block(sm.Basis.M)
		if J := sm.Basis.J(); J > 0 {
			ss.Jump = add()
			block(J)
		}
		return ss
	}
	l.baseline = SmoothSlots{SD: -1, Len: -1, Z: -1, Jump: -1}
	if s.Baseline != nil {
		l.baseline = smooth(s.Baseline)
	}
	for j, c := range s.Channels {
		if c.Drift != nil {
			l.channels[j].Drift = smooth(c.Drift)
		}
	}
	for j, c := range s.Channels {
		cs := &l.channels[j]
		if c.Break != nil {
			cs.Break, cs.BreakAt = add(), c.Break.At
		}
		if e := c.Error; e != nil {
			cs.ErrZ, cs.ErrSD, cs.ErrWeeks = k, e.SD, e.Weeks
			name, _, _ := strings.Cut(l.names[k], ",")
			l.blocks = append(l.blocks, Block{Name: name + "]", Start: k, Len: len(e.Weeks)})
			k += len(e.Weeks)
		}
		if f := c.Freq; f != nil {
			cs.FreqK, cs.Freq, cs.FreqAfter = k, f.F, f.After
			add()
			add()
		}
	}
	return l
}

// Baseline returns the slots of the moving baseline (Has false when the
// stage has a trend line instead).
func (l *Layout) Baseline() SmoothSlots { return l.baseline }

// QueryCoef is the name of the outcome stage's coefficient on branded
// queries (gamma in DESIGN.md); only this package spells it.
const QueryCoef = "gamma"

// Len returns the number of constrained parameters in a draw.
func (l *Layout) Len() int { return len(l.names) }

// Names returns the parameter names in draw order (do not modify).
func (l *Layout) Names() []string { return l.names }

// Blocks returns the parameter blocks in draw order (do not modify).
func (l *Layout) Blocks() []Block { return l.blocks }

// HasGamma reports whether the stage has the query term.
func (l *Layout) HasGamma() bool { return l.gamma >= 0 }

// GammaSlot returns the position of gamma, or -1.
func (l *Layout) GammaSlot() int { return l.gamma }

// QueryRegressor returns the index in Stage.Regressors of the query term
// (gamma q~), or -1.
func (l *Layout) QueryRegressor() int { return l.queryReg }

// RegressorSlot returns the position of Stage.Regressors[i]'s coefficient.
func (l *Layout) RegressorSlot(i int) int { return l.regs[i] }

// SigmaSlot returns the position of the noise scale.
func (l *Layout) SigmaSlot() int { return l.sigma }

// InterceptSlot returns the position of the intercept.
func (l *Layout) InterceptSlot() int { return l.intercept }

// Channels returns the slots of every channel in the stage's order (do not
// modify).
func (l *Layout) Channels() []ChannelSlots { return l.channels }

// Channel returns the slots of the channel of data column col.
func (l *Layout) Channel(col string) (ChannelSlots, bool) {
	for _, c := range l.channels {
		if c.Column == col {
			return c, true
		}
	}
	return ChannelSlots{}, false
}

// IsCoefficient reports whether position i holds gamma or a channel's
// coefficient (alpha, delta or beta): the parameters whose calibration the
// validation checks.
func (l *Layout) IsCoefficient(i int) bool {
	if i == l.gamma {
		return true
	}
	for _, c := range l.channels {
		if c.Coef == i {
			return true
		}
	}
	return false
}

// SplitName splits a parameter name into its family and the data column it
// belongs to: "alpha[video_spend]" gives "alpha" and "video_spend", "gamma"
// gives "gamma" and "".
func SplitName(name string) (family, column string) {
	if i := strings.IndexByte(name, '['); i > 0 && strings.HasSuffix(name, "]") {
		return name[:i], name[i+1 : len(name)-1]
	}
	return name, ""
}

// Check returns an error unless v has the layout's length.
func (l *Layout) Check(v []float64) error {
	if len(v) != len(l.names) {
		return fmt.Errorf("model: a draw has %d values, the stage has %d parameters", len(v), len(l.names))
	}
	return nil
}

// View returns the named view of the draw v (not copied).
func (l *Layout) View(v []float64) Params {
	if len(v) != len(l.names) {
		panic("model: draw length does not match the layout")
	}
	return Params{l: l, v: v}
}

// Params is a named view of one constrained draw of a stage.
type Params struct {
	l *Layout
	v []float64
}

// Values returns the draw itself.
func (p Params) Values() []float64 { return p.v }

// Intercept returns the stage's intercept (mu in DESIGN.md).
func (p Params) Intercept() float64 { return p.v[p.l.intercept] }

// Sigma returns the stage's noise scale.
func (p Params) Sigma() float64 { return p.v[p.l.sigma] }

// Gamma returns the outcome stage's query coefficient, 0 when the stage has
// none.
func (p Params) Gamma() float64 {
	if p.l.gamma < 0 {
		return 0
	}
	return p.v[p.l.gamma]
}

// Drifts reports whether the coefficient of the stage's j-th channel
// drifts by week.
func (p Params) Drifts(j int) bool { return p.l.channels[j].Drift.Has() }

// Multiplier writes the drift multiplier exp(f(t)) of the stage's j-th
// channel in weeks 0..len(dst)-1 into dst and returns it: 1 in every week
// when the channel does not drift. Past the data's last week it holds the
// last week's value (ApplyDrift).
func (p Params) Multiplier(dst []float64, j int) []float64 {
	for i := range dst {
		dst[i] = 1
	}
	p.ApplyDrift(dst, j)
	return dst
}

// ApplyDrift multiplies h[t], weeks from the data's first, by the drift
// multiplier exp(f(t)) of the stage's j-th channel, and leaves h alone
// when the channel does not drift. Past the data's last week the
// multiplier holds the last week's value: the latest effectiveness (the
// approximation means nothing far beyond the data, and a plan should not
// assume that a drift goes on).
func (p Params) ApplyDrift(h []float64, j int) {
	d := p.l.channels[j].Drift
	if !d.Has() {
		return
	}
	var buf [64]float64
	c := d.Basis.coefs(buf[:0], p.v[d.SD], p.v[d.Len], p.v[d.Z:d.Z+d.Basis.M])
	T := d.Basis.T
	for t := range h {
		if t >= T {
			last := math.Exp(d.at(p.v, T-1, c))
			for u := t; u < len(h); u++ {
				h[u] *= last
			}
			return
		}
		h[t] *= math.Exp(d.at(p.v, t, c))
	}
}

// Last returns the drift multiplier of the stage's j-th channel in the
// data's last week, the value ApplyDrift holds past the data (1 when the
// channel does not drift).
func (p Params) Last(j int) float64 {
	d := p.l.channels[j].Drift
	if !d.Has() {
		return 1
	}
	var buf [64]float64
	c := d.Basis.coefs(buf[:0], p.v[d.SD], p.v[d.Len], p.v[d.Z:d.Z+d.Basis.M])
	return math.Exp(d.at(p.v, d.Basis.T-1, c))
}

// Baseline writes the moving baseline's f(t) (scaled units, averaging zero
// over the fitted weeks) into dst, weeks from the data's first (held at the
// last week's value past it), and returns it; nil when the stage has a
// trend line instead.
func (p Params) Baseline(dst []float64) []float64 {
	if !p.l.baseline.Has() {
		return nil
	}
	clear(dst)
	p.AddBaseline(dst)
	return dst
}

// AddBaseline adds the moving baseline's f(t) to n[t], weeks from the
// data's first (held at the last week's value past it), and leaves n alone
// when the stage has a trend line instead.
func (p Params) AddBaseline(n []float64) {
	b := p.l.baseline
	if !b.Has() {
		return
	}
	var buf [64]float64
	c := b.Basis.coefs(buf[:0], p.v[b.SD], p.v[b.Len], p.v[b.Z:b.Z+b.Basis.M])
	T := b.Basis.T
	for t := range n {
		n[t] += b.at(p.v, min(t, T-1), c)
	}
}

// Regressor returns the coefficient of Stage.Regressors[i].
func (p Params) Regressor(i int) float64 { return p.v[p.l.regs[i]] }

// ChannelAt returns the parameters of the stage's j-th channel.
func (p Params) ChannelAt(j int) Media {
	c := p.l.channels[j]
	m := Media{Coef: p.v[c.Coef], Linear: c.Linear()}
	if !m.Linear {
		m.Lam, m.K, m.S = p.v[c.Lam], p.v[c.K], p.v[c.S]
	}
	if c.Break >= 0 {
		m.Before, m.Factor = c.BreakAt, math.Exp(p.v[c.Break])
	}
	if c.ErrZ >= 0 {
		m.ErrSD, m.ErrWeeks, m.ErrZ = c.ErrSD, c.ErrWeeks, p.v[c.ErrZ:c.ErrZ+len(c.ErrWeeks)]
	}
	if c.FreqK >= 0 {
		m.Freq, m.FreqAfter, m.FreqK, m.FreqS = c.Freq, c.FreqAfter, p.v[c.FreqK], p.v[c.FreqK+1]
	}
	return m
}

// Channel returns the parameters of the channel of data column col.
func (p Params) Channel(col string) (Media, bool) {
	for j, c := range p.l.channels {
		if c.Column == col {
			return p.ChannelAt(j), true
		}
	}
	return Media{}, false
}

// Rescaled returns a copy of the draw with every parameter that scales with
// the stage's response (intercept, regressors, channel coefficients, sigma)
// multiplied by k, gamma multiplied by kGamma, and the transform parameters
// (retention, half-saturation, shape) and drifts unchanged, and a moving
// baseline's sd multiplied by k: the same model in a
// response scaled by k (and, for gamma, queries scaled by k/kGamma).
func (p Params) Rescaled(k, kGamma float64) []float64 {
	out := append([]float64(nil), p.v...)
	out[p.l.intercept] *= k
	for _, i := range p.l.scaling {
		out[i] *= k
	}
	if p.l.gamma >= 0 {
		out[p.l.gamma] *= kGamma
	}
	for _, c := range p.l.channels {
		out[c.Coef] *= k
	}
	out[p.l.sigma] *= k
	if b := p.l.baseline; b.Has() {
		out[b.SD] *= k // the weights and the length-scale are unitless
	}
	return out
}

// Media is one channel's parameters: the term Coef * H(adstock(x; Lam); K, S),
// or Coef * x when Linear.
type Media struct {
	Coef, Lam, K, S float64
	Linear          bool
	// Before and Factor are a measurement break in the channel's exposure
	// (exposure.go): the input of weeks 0..Before-1, counted from the
	// data's first week, is multiplied by Factor before the adstock.
	// Before is 0 when the channel has no break.
	Before int
	Factor float64
	// ErrSD, ErrWeeks and ErrZ are exposure observed with error
	// (exposure.go): the input of week ErrWeeks[i] is multiplied by
	// exp(-ErrSD ErrZ[i]), the latent true exposure. ErrSD is 0 when the
	// exposure is taken as measured.
	ErrSD    float64
	ErrWeeks []int
	ErrZ     []float64
	// Freq, FreqAfter, FreqK and FreqS are a channel given as reach and
	// frequency (reach.go): the input of week t is multiplied by the
	// frequency curve g(f) at Freq[t], FreqAfter past the data. Freq is
	// nil otherwise.
	Freq         []float64
	FreqAfter    float64
	FreqK, FreqS float64
}

// Response writes the coefficient-free response H(adstock(x; Lam); K, S) of
// the spend series x (scaled units) into dst and returns it (x itself for a
// linear channel); a dst too short is replaced. With a measurement break or
// error, x starts at the data's first week and goes through the
// measurement first (weeks before the break times Factor, the latent true
// exposure of weeks with an error).
func (m Media) Response(dst, x []float64) []float64 {
	if m.Before > 0 || m.ErrSD > 0 || m.Freq != nil {
		return m.responseMeasured(dst, x)
	}
	dst = resizeTo(dst, len(x))
	if m.Linear {
		copy(dst, x)
		return dst
	}
	transform.Adstock(dst, x, m.Lam)
	for i, a := range dst {
		dst[i] = transform.Hill(a, m.K, m.S)
	}
	return dst
}

// Steady returns the response to a constant weekly spend x held for ever:
// normalised adstock then equals x, so it is H(x; K, S) (x when linear). A
// measurement break's factor does not enter: spend from now on is measured
// the newest way, the reference.
func (m Media) Steady(x float64) float64 {
	if m.Freq != nil {
		g, _, _ := freqGain(m.FreqAfter, m.FreqK, m.FreqS)
		x *= g
	}
	if m.Linear {
		return x
	}
	return transform.Hill(x, m.K, m.S)
}
