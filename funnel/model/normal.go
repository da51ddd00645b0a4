package model

import "math"

// normalLik is the weekly likelihood y[t] ~ Normal(n[t], sigma) over the
// weeks not masked (held out).
type normalLik struct {
	y     []float64
	mask  []bool // nil: every week
	nObs  int    // weeks in the likelihood
	sigma int    // position of sigma
}

func newNormalLik(y []float64, mask []bool, sigma int) *normalLik {
	o := &normalLik{y: y, mask: mask, nObs: len(y), sigma: sigma}
	for _, m := range mask {
		if m {
			o.nObs--
		}
	}
	return o
}

// logLik returns the log likelihood at the linear predictor n and sum_t w[t];
// it writes w[t] = d lp/d n[t] (0 in masked weeks) and, with grad, adds
// d lp/d sigma to g.
func (o *normalLik) logLik(w, n, nat, g []float64, grad bool) (lp, sw float64) {
	sigma := nat[o.sigma]
	inv2 := 1 / (sigma * sigma)
	ss := 0.0
	for i, y := range o.y {
		if o.mask != nil && o.mask[i] {
			w[i] = 0
			continue
		}
		e := y - n[i]
		ss += e * e
		w[i] = e * inv2
		sw += w[i]
	}
	lp = -float64(o.nObs)*math.Log(sigma) - 0.5*ss*inv2
	if grad {
		g[o.sigma] += -float64(o.nObs)/sigma + ss*inv2/sigma
	}
	return lp, sw
}
