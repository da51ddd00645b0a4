package model

import "math"

// baseCoord samples a moving baseline's weights on a panel against the
// data's precision for them. Weight j's coefficient c_j = s_j z_j (smooth.go:
// s_j the square root of the kernel's spectral density, set by sd and the
// length-scale) has prior precision 1/s_j^2 and, from the regions' weeks,
// data precision a_j = sum_g sum_t phi~_j(t)^2 / sigma^2 (sigma the
// least-squares residual sd, Coords.SigmaEst, fixed before sampling). The
// sampling coordinate is xi_j with
//
//	z_j = xi_j / sqrt(q_j),  q_j = 1 + a_j s_j^2,
//
// that is c_j = xi_j / sqrt(1/s_j^2 + a_j): non-centred (c_j = s_j xi_j)
// where the prior dominates (a_j s_j^2 small: the high frequencies a long
// length-scale switches off) and with the data's own scale (c_j = xi_j /
// sqrt(a_j), whatever sd and the length-scale) where the data dominate.
// It is condCoef's interpolation with the data's centre left at zero: the
// location the data give c_j is a shift the sampler's metric absorbs; its
// scale is what tied it to sd and the length-scale.
//
// Why: the national baseline's non-centred weights suit one series, which
// says little about each weight; a panel's regions share one baseline, and
// forty regions pin its low frequencies tightly, so that z_j = c_j / s_j
// must follow sd and the length-scale along a narrow ridge.
//
// The map is triangular (q_j depends on sd and the length-scale only), with
// log-Jacobian -1/2 sum_j log q_j; finish adds it and pulls the
// gradient in z_j, complete after finish, back to xi_j, sd and the
// length-scale. With one region the baseline keeps the national
// coordinates, so that a one-region panel is the national model.
type baseCoord struct {
	a       []float64 // a_j
	s, q, k []float64 // per evaluation: s_j, q_j and a_j s_j^2 / q_j
	sd, ell int       // parameters of sd and the length-scale
	z       int       // parameter of the first weight
	zFree   int       // sampling coordinate of the first weight
	elv     float64   // per evaluation: the length-scale
}

// newBaseCoord returns the coordinates of t's baseline, or nil where there
// is none, one region, no residual sd, or sd, the length-scale or a weight
// is not sampled on its usual scale.
func newBaseCoord(t *PanelTarget, sigma float64) *baseCoord {
	if t.base == nil || t.G < 2 || !(sigma > 0) || math.IsInf(sigma, 1) {
		return nil
	}
	s := t.lay.base.Baseline()
	b := s.Basis
	if t.par[s.SD].free < 0 || t.par[s.Len].free < 0 || t.par[s.SD].sup != PositiveReal || t.par[s.Len].sup != PositiveReal {
		return nil
	}
	for j := 0; j < b.M; j++ {
		if p := t.par[s.Z+j]; p.free != t.par[s.Z].free+j || p.sup != Real {
			return nil
		}
	}
	c := &baseCoord{a: make([]float64, b.M), sd: s.SD, ell: s.Len, z: s.Z, zFree: t.par[s.Z].free}
	for g := 0; g < t.G; g++ {
		for w := 0; w < b.T; w++ {
			if t.mask[g] != nil && t.mask[g][w] {
				continue
			}
			row := b.phi[w*b.M : (w+1)*b.M]
			for j, p := range row {
				c.a[j] += p * p
			}
		}
	}
	for j := range c.a {
		c.a[j] /= sigma * sigma
	}
	c.alloc()
	return c
}

func (c *baseCoord) alloc() {
	M := len(c.a)
	c.s, c.q, c.k = make([]float64, M), make([]float64, M), make([]float64, M)
}

func (c *baseCoord) clone() *baseCoord {
	if c == nil {
		return nil
	}
	d := *c
	d.alloc()
	return &d
}

// at sets s_j, q_j and k_j at sd and the length-scale ell.
func (c *baseCoord) at(t *PanelTarget, sd, ell float64) {
	c.elv = ell
	t.base.sm.b.scales(c.s, nil, sd, ell)
	for j, s := range c.s {
		q := 1 + c.a[j]*s*s
		c.q[j], c.k[j] = q, c.a[j]*s*s/q
	}
}

// decode turns the weights' sampling coordinates in nat (xi_j, decoded as
// they are) into z_j, given sd and the length-scale already decoded.
func (c *baseCoord) decode(t *PanelTarget, nat []float64) {
	c.at(t, nat[t.natSlot(c.sd)], nat[t.natSlot(c.ell)])
	for j, q := range c.q {
		nat[t.natSlot(c.z+j)] /= math.Sqrt(q)
	}
}

// encode turns dst's z_j into xi_j at dst's sd and length-scale, in place
// (the start point).
func (c *baseCoord) encode(t *PanelTarget, dst []float64) {
	c.at(t, t.par[c.sd].value(dst), t.par[c.ell].value(dst))
	for j, q := range c.q {
		dst[c.zFree+j] *= math.Sqrt(q)
	}
}

// finish adds the log-Jacobian and, unless grad is nil, turns the gradient
// in (z_j, log sd, log ell), complete after PanelTarget.finish, into the
// gradient in (xi_j, log sd, log ell): d z_j / d xi_j = q_j^(-1/2), and
// d log q_j / d log s_j = 2 k_j with d log s_j / d log sd = 1 and
// d log s_j / d log ell = 1/2 - ell^2 lambda_j / 2 (in closed form, not
// ell ds_j / s_j from Basis.scales: s_j underflows to 0 for high
// frequencies at long length-scales, where that ratio is 0/0).
func (c *baseCoord) finish(t *PanelTarget, grad []float64, lp float64) float64 {
	sdFree, ellFree := t.par[c.sd].free, t.par[c.ell].free
	b := t.base.sm.b
	var gsd, gell float64
	for j, q := range c.q {
		lp -= 0.5 * math.Log(q)
		if grad == nil {
			continue
		}
		gz := grad[c.zFree+j]
		z := t.nat[t.natSlot(c.z+j)]
		grad[c.zFree+j] = gz / math.Sqrt(q)
		d := -(gz*z + 1) * c.k[j] // d lp / d log s_j, the Jacobian's part included
		lam := b.sqrtLam[j] * b.sqrtLam[j]
		gsd += d
		gell += d * (0.5 - c.elv*c.elv*lam/2)
	}
	if grad != nil {
		grad[sdFree] += gsd
		grad[ellFree] += gell
	}
	return lp
}
