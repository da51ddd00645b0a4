package model

import "spillway/funnel/transform"

// Carry returns the channel's adstock in the last week of x when x follows
// weeks whose adstock ended at a0 (0 for a linear channel, which carries
// nothing over): the state from which ResponseFrom continues. With a
// measurement break or error x starts at the data's first week (a0 = 0)
// and goes through the measurement first, as in Response.
func (m Media) Carry(x []float64, a0 float64) float64 {
	if m.Linear {
		return 0
	}
	if m.Before > 0 || m.ErrSD > 0 || m.Freq != nil {
		x = m.measured(nil, x)
	}
	return transform.AdstockEnd(x, m.Lam, a0)
}

// ResponseFrom writes into dst the coefficient-free response of the spend x
// (scaled units) when x follows weeks whose adstock ended at a0, and
// returns it; a dst too short is replaced. For any split of a series into
// past and x, ResponseFrom(dst, x, Carry(past, 0)) equals the tail of
// Response(past then x) bit for bit, at the cost of x's weeks alone. x
// follows the data (weeks after a measurement break, taken as reported).
func (m Media) ResponseFrom(dst, x []float64, a0 float64) []float64 {
	if m.Freq != nil { // weeks after the data, at the frequency after it
		g, _, _ := freqGain(m.FreqAfter, m.FreqK, m.FreqS)
		dst = resizeTo(dst, len(x))
		for i, v := range x {
			dst[i] = v * g
		}
		x = dst
	}
	dst = resizeTo(dst, len(x))
	if m.Linear {
		copy(dst, x)
		return dst
	}
	transform.AdstockFrom(dst, x, m.Lam, a0)
	for i, a := range dst {
		dst[i] = transform.Hill(a, m.K, m.S)
	}
	return dst
}
