package model

import (
	"math"

	"spillway/funnel/transform"
)

// trendShear moves the trend's slope b in the sampling coordinates of a
// stage with drifting coefficients: the sampler moves the total slope
//
//	u = b + sum_c coef_c beta_c,  beta_c = sum_t w_t (exp(f_c(t)) - 1) h_c(t),
//
// w_t = (tau_t - mean tau) / sum_t (tau_t - mean tau)^2, that is b plus
// the least-squares slope on the trend line of what each channel's drift
// adds to its response. A slow drift (a long length-scale, nearly a
// straight line once its mean is removed) of an always-on channel is
// nearly collinear with the trend line, and the trend then trades off
// with the drift's weights along a curved ridge whose width changes with
// the drift's sd: on the demo with every channel drifting, the divergent
// transitions of the joint fit sat in the tails of the outcome stage's
// slope. With u the data's slope, the ridge is straightened. The map from
// (u, the rest) to (b, the rest) is a shear, b = u - G(the rest), whose
// Jacobian is 1: the posterior on DESIGN.md's parameters is unchanged.
type trendShear struct {
	k     int       // the trend coefficient's slot in the natural values
	w     []float64 // w_t
	drift []*driftTerm
	beta  []float64 // beta_c at the last apply
	r     []float64 // scratch: d G / d f(t) pulled back
}

func newTrendShear(k int, tau []float64, terms []predictor) *trendShear {
	s := &trendShear{k: k, w: make([]float64, len(tau))}
	m := 0.0
	for _, v := range tau {
		m += v
	}
	m /= float64(len(tau))
	ss := 0.0
	for _, v := range tau {
		ss += (v - m) * (v - m)
	}
	for t, v := range tau {
		s.w[t] = (v - m) / ss
	}
	s.bind(terms)
	return s
}

// bind points the shear at the drifting channels among terms (a clone's).
func (s *trendShear) bind(terms []predictor) {
	s.drift = s.drift[:0]
	for _, term := range terms {
		if d, ok := term.(*driftTerm); ok {
			s.drift = append(s.drift, d)
		}
	}
	s.beta = make([]float64, len(s.drift))
	s.r = make([]float64, len(s.w))
}

func (s *trendShear) clone(terms []predictor) *trendShear {
	c := &trendShear{k: s.k, w: s.w}
	c.bind(terms)
	return c
}

// apply turns the total slope in nat[k] into the trend's slope b, after
// the terms' prepare (the drifts' multipliers and responses, the natural
// coefficients).
func (s *trendShear) apply(nat []float64) {
	for i, d := range s.drift {
		b := 0.0
		for t, h := range d.response() {
			b += s.w[t] * (d.mult[t] - 1) * h
		}
		s.beta[i] = b
		nat[s.k] -= nat[d.k[0]] * b
	}
}

// backward adds to g the gradient through b = u - G: d lp/d theta gains
// -g[k] d G/d theta for every other natural value theta G depends on
// (each drifting coefficient, its transform and its smooth function).
func (s *trendShear) backward(g, nat []float64) {
	gb := g[s.k]
	if gb == 0 {
		return
	}
	for i, d := range s.drift {
		coef := nat[d.k[0]]
		g[d.k[0]] -= gb * s.beta[i]
		h := d.response()
		for t := range s.r {
			s.r[t] = -gb * coef * s.w[t] * d.mult[t] * h[t]
		}
		d.sm.backward(g, nat, s.r, 0, len(s.r))
		if d.linear {
			continue
		}
		var sl, sk, ss float64
		for t, w := range s.w {
			m := w * (d.mult[t] - 1)
			sl += m * d.hl[t]
			sk += m * d.hk[t]
			ss += m * d.hs[t]
		}
		g[d.k[1]] -= gb * coef * sl
		g[d.k[2]] -= gb * coef * sk
		g[d.k[3]] -= gb * coef * ss
	}
}

// at returns G at the natural values v, for Unconstrain.
func (s *trendShear) at(v []float64) float64 {
	G := 0.0
	for _, d := range s.drift {
		h := d.x
		if !d.linear {
			h = transform.Adstock(nil, d.x, v[d.k[1]])
			for t, a := range h {
				h[t] = transform.Hill(a, v[d.k[2]], v[d.k[3]])
			}
		}
		f := d.sm.full(v)
		b := 0.0
		for t, ht := range h {
			b += s.w[t] * (math.Exp(f[t]) - 1) * ht
		}
		G += v[d.k[0]] * b
	}
	return G
}
