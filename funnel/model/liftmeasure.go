package model

import "math"

// measuredInput is the input of a channel whose exposure is measured with
// doubt (a break, latent errors, a frequency curve) as a lift test sees
// it: x~ from the observed x and the draw's measurement parameters, by
// measuredTerm's rule, and the pull-back of a gradient in x~ to those
// parameters. A lift test removes the channel's spend in its weeks, so it
// removes the exposure that spend bought: x~ is zero there, whatever the
// measurement, and earlier weeks keep their measured x~ in the carryover.
type measuredInput struct {
	s      ChannelSlots
	x0     []float64 // the observed scaled exposure (or reach)
	xs, gx []float64 // x~, and d/d log x~ per week
}

// newMeasuredInput returns the measured input of channel s on x, nil when
// the channel's exposure has no break, error or frequency curve.
func newMeasuredInput(s ChannelSlots, x []float64) *measuredInput {
	if s.Break < 0 && s.ErrZ < 0 && s.FreqK < 0 {
		return nil
	}
	return &measuredInput{s: s, x0: x, xs: make([]float64, len(x)), gx: make([]float64, len(x))}
}

func (m *measuredInput) clone() *measuredInput {
	if m == nil {
		return nil
	}
	c := *m
	c.xs, c.gx = make([]float64, len(m.x0)), make([]float64, len(m.x0))
	return &c
}

// input writes x~ at the natural values v for weeks 0..to and returns it.
func (m *measuredInput) input(v []float64, to int) []float64 {
	s := m.s
	copy(m.xs[:to+1], m.x0[:to+1])
	if s.Break >= 0 {
		kappa := math.Exp(v[s.Break])
		for t := range min(s.BreakAt, to+1) {
			m.xs[t] *= kappa
		}
	}
	if s.ErrZ >= 0 {
		for i, t := range s.ErrWeeks {
			if t <= to {
				m.xs[t] *= math.Exp(-s.ErrSD * v[s.ErrZ+i])
			}
		}
	}
	if s.FreqK >= 0 {
		k, sh := v[s.FreqK], v[s.FreqK+1]
		for t := 0; t <= to; t++ {
			g, _, _ := freqGain(s.Freq[t], k, sh)
			m.xs[t] *= g
		}
	}
	return m.xs
}

// backward adds to g the gradient in the measurement parameters given
// dx[t] = d L/d x~[t] for weeks 0..to, scaled by r, after input.
func (m *measuredInput) backward(g, v, dx []float64, r float64, to int) {
	s := m.s
	for t := 0; t <= to; t++ {
		m.gx[t] = r * dx[t] * m.xs[t] // d/d log x~[t]
	}
	if s.Break >= 0 {
		sum := 0.0
		for t := range min(s.BreakAt, to+1) {
			sum += m.gx[t]
		}
		g[s.Break] += sum
	}
	if s.ErrZ >= 0 {
		for i, t := range s.ErrWeeks {
			if t <= to {
				g[s.ErrZ+i] -= s.ErrSD * m.gx[t]
			}
		}
	}
	if s.FreqK >= 0 {
		k, sh := v[s.FreqK], v[s.FreqK+1]
		var sk, ss float64
		for t := 0; t <= to; t++ {
			_, dk, ds := freqGain(s.Freq[t], k, sh)
			sk += m.gx[t] * dk
			ss += m.gx[t] * ds
		}
		g[s.FreqK] += sk
		g[s.FreqK+1] += ss
	}
}
