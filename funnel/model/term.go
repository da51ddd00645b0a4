package model

// predictor is a term of a stage's linear predictor n[t]: a regressor
// (regressorTerm), a media channel (channelTerm), a channel whose
// coefficient drifts by week, coef exp(f[t]) (driftTerm), or a baseline that
// moves (baselineTerm). A coefficient per region,
// theta[c,g] = theta[c] exp(tau[c] eta[c,g]), will be a predictor too: each
// owns its parameters (a block of the Layout for eta or f's weights), adds
// its part to n (over region-weeks for a panel) and returns the gradient of
// its own parameters, and the target around them does not change.
//
// A term enters n as f(t) - fbar, where fbar is its mean over the weeks when
// the stage samples a centred intercept (doc.go) and 0 otherwise; fbar comes
// off the intercept, mu = m0 - sum fbar. One evaluation calls prepare,
// forward, backward and pullback in that order; none may allocate.
type predictor interface {
	// prepare computes what the other passes need from the natural values
	// nat (a channel's transformed series; with grad, their derivatives
	// too) and turns a rescaled coefficient in nat into its natural value.
	// It returns false where the density is not defined.
	prepare(nat []float64, grad bool) bool
	// forward adds f(t) - fbar to n and returns fbar times the coefficient:
	// what the term takes off the intercept.
	forward(n, nat []float64) float64
	// shift returns what forward returns, without touching n.
	shift(nat []float64) float64
	// backward adds to g, the gradient with respect to the natural values,
	// the term's part given w = d lp/d n[t], sw = sum_t w[t] and
	// gmu = d lp/d mu (the intercept's prior acts on mu).
	backward(g, nat, w []float64, sw, gmu float64)
	// pullback finishes the chain rule for what the per-parameter
	// transforms do not cover (a coefficient rescaled by its response at
	// mean spend), adding to grad (the sampling coordinates) unless grad is
	// nil, and returns lp plus that reparameterisation's log-Jacobian.
	pullback(grad, g, nat []float64, lp float64) float64
	// unconstrain writes the sampling coordinate of a rescaled coefficient
	// at the natural values v into dst and returns what shift would.
	unconstrain(dst, v []float64, par []param) float64
	// clone returns a copy with its own scratch buffers.
	clone() predictor
}

// observation is a likelihood term of the linear predictor: the weekly
// normal likelihood (normalLik). A lift test is not one: it observes a
// channel's summed effect, a function of parameters of both stages, so it is
// a CrossTerm of a Joint target.
type observation interface {
	// logLik returns the log likelihood at the linear predictor n, writes
	// w[t] = d lp/d n[t] and returns sum_t w[t]; with grad it adds its
	// gradient with respect to its own parameters (sigma) to g.
	logLik(w, n, nat, g []float64, grad bool) (lp, sw float64)
}

var (
	_ predictor   = (*regressorTerm)(nil)
	_ predictor   = (*channelTerm)(nil)
	_ observation = (*normalLik)(nil)
)
