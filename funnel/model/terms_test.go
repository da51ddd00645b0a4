package model

import (
	"math"
	"math/rand/v2"
	"spillway/funnel/stat"
	"testing"

	"spillway/funnel/mcmc/mcmctest"
)

// Each term of a stage's log density is checked on its own here: its
// gradient against gonum's central finite differences of its forward pass
// (mcmctest.CheckGradient), with no allocation per evaluation.

var termGrad = &mcmctest.GradSettings{Seed: 11, Points: 8, Radius: 1}

func randomWeights(T int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 2))
	c := make([]float64, T)
	for i := range c {
		c[i] = rng.NormFloat64()
	}
	return c
}

// predictorFunc returns, as a function of x, L = sum_t c[t] n[t] + cmu mu
// for the predictor term p alone, with n its contribution to the linear
// predictor and mu = -p.forward(...) its part of the intercept, and the
// natural values nat[k[i]] = base[i] + scale[i] x[i] (within the support
// for |x| < 1). The gradient comes from p.backward.
func predictorFunc(t *testing.T, p predictor, np int, k []int, base, scale, c []float64, cmu float64) mcmctest.Func {
	nat, g, n := make([]float64, np), make([]float64, np), make([]float64, len(c))
	sw := 0.0
	for _, v := range c {
		sw += v
	}
	return mcmctest.Func{N: len(k), F: func(grad, x []float64) float64 {
		for i, j := range k {
			nat[j] = base[i] + scale[i]*x[i]
		}
		if !p.prepare(nat, true) {
			return math.Inf(-1)
		}
		clear(n)
		clear(g)
		shift := p.forward(n, nat)
		if s := p.shift(nat); s != shift {
			t.Errorf("shift %v, forward returned %v", s, shift)
		}
		L := -cmu * shift
		for i, v := range n {
			L += c[i] * v
		}
		p.backward(g, nat, c, sw, cmu)
		for i, j := range k {
			grad[i] = g[j] * scale[i]
		}
		return L
	}}
}

// TestRegressorTerm checks coef * (x[t] - bar), centred and not.
func TestRegressorTerm(t *testing.T) {
	sc := testScaled(40, 1)
	c := randomWeights(40, 1)
	for _, bar := range []float64{0, stat.Mean(sc.Controls[0])} {
		r := &regressorTerm{k: 1, x: sc.Controls[0], bar: bar}
		f := predictorFunc(t, r, 2, []int{1}, []float64{0.2}, []float64{2}, c, 0.7)
		mcmctest.CheckGradient(t, f, 1e-7, termGrad)
		mcmctest.CheckNoAlloc(t, f, []float64{0.3})
	}
}

// TestChannelTerm checks a saturating and a linear channel in natural
// coordinates (coefficient not rescaled), centred and not.
func TestChannelTerm(t *testing.T) {
	sc := testScaled(60, 2)
	c := randomWeights(60, 2)
	for _, linear := range []bool{false, true} {
		for _, centred := range []bool{false, true} {
			ch := Channel{Column: "video", X: sc.Upper[0], Linear: linear, Params: mediaParams("video", "alpha", "lam", "K", "S", linear)}
			// slot 0 is the intercept; the coefficient is fixed so that prepare
			// does not rescale it
			par := []param{{name: "mu", free: 0}, {name: "alpha", sup: PositiveReal, free: -1},
				{name: "lam", sup: UnitInterval, free: 1}, {name: "K", sup: PositiveReal, free: 2}, {name: "S", sup: PositiveReal, free: 3}}
			k := []int{1, 2, 3, 4}
			base, scale := []float64{0.3, 0.5, 1, 2}, []float64{0.2, 0.4, 0.5, 1}
			if linear {
				par, k, base, scale = par[:2], k[:1], base[:1], scale[:1]
			}
			term := newChannelTerm(&ch, k, par, false, centred)
			f := predictorFunc(t, term, len(par), k, base, scale, c, -0.4)
			mcmctest.CheckGradient(t, f, 1e-6, termGrad)
			mcmctest.CheckNoAlloc(t, f, make([]float64, len(k)))
		}
	}
}

// linearObs is the observation sum_t c[t] n[t], so that a target built
// around one predictor term checks that term (with its priors and
// transforms) apart from the normal likelihood.
type linearObs struct{ c []float64 }

func (o *linearObs) logLik(w, n, nat, g []float64, grad bool) (lp, sw float64) {
	for i, c := range o.c {
		lp += c * n[i]
		w[i] = c
		sw += c
	}
	return lp, sw
}

// TestChannelRescaled checks a channel in the sampling coordinates: the
// coefficient moved as its response at mean spend, which prepare divides
// out and pullback differentiates through K and S, for a positive and a
// real coefficient, in a target with the channel as its only term.
func TestChannelRescaled(t *testing.T) {
	sc := testScaled(60, 3)
	for _, o := range []Options{{}, {Linear: map[string]bool{"video": true}}, {Priors: map[string]Prior{"alpha[video]": {Normal, 0, 1}}}, {Plain: true}} {
		st, _ := Demand(sc, o)
		st.Regressors, st.Channels = nil, st.Channels[:1]
		st.SetPrior(st.Sigma, Prior{Fixed, 1, 0})
		tg, err := st.Target()
		if err != nil {
			t.Fatal(err)
		}
		tg.lik = &linearObs{c: randomWeights(60, 3)}
		mcmctest.CheckGradient(t, tg, 1e-6, termGrad)
		mcmctest.CheckNoAlloc(t, tg, make([]float64, tg.Dim()))
	}
}

// TestNormalLik checks the weekly likelihood in n[t] and sigma, with masked
// weeks out of it, and that it returns the sum of its w.
func TestNormalLik(t *testing.T) {
	const T = 30
	y := randomWeights(T, 4)
	mask := make([]bool, T)
	mask[3], mask[17] = true, true
	for _, m := range [][]bool{nil, mask} {
		o := newNormalLik(y, m, 0)
		nat, g, w, n := make([]float64, 1), make([]float64, 1), make([]float64, T), make([]float64, T)
		f := mcmctest.Func{N: T + 1, F: func(grad, x []float64) float64 {
			copy(n, x[:T])
			nat[0] = 1 + 0.5*x[T]
			g[0] = 0
			lp, sw := o.logLik(w, n, nat, g, true)
			s := 0.0
			for i := range w {
				s += w[i]
			}
			if s != sw {
				t.Errorf("sum of w %v, logLik says %v", s, sw)
			}
			copy(grad, w)
			grad[T] = g[0] * 0.5
			return lp
		}}
		mcmctest.CheckGradient(t, f, 1e-7, termGrad)
		mcmctest.CheckNoAlloc(t, f, make([]float64, T+1))
	}
}

// TestPriorTerms checks each prior family on each support it takes, with
// the sampler's transform: log p(v(u)) + log |dv/du| and its derivative in
// u.
func TestPriorTerms(t *testing.T) {
	for _, c := range []struct {
		p   Prior
		sup Support
	}{
		{PriorMu, Real}, {PriorCoef, PositiveReal}, {PriorRetain, UnitInterval},
		{PriorHalfSat, PositiveReal}, {PriorShape, PositiveReal},
		{Prior{Jeffreys, 0, 0}, PositiveReal}, {Prior{Flat, 0, 0}, Real},
		{Prior{Flat, 0, 0}, PositiveReal}, {Prior{Flat, 0, 0}, UnitInterval}, {Prior{Beta, 0.5, 2}, UnitInterval},
	} {
		p := param{name: "v", prior: c.p, sup: c.sup}
		f := mcmctest.Func{N: 1, F: func(grad, x []float64) float64 {
			v := p.value(x)
			l, d := p.prior.LogPdf(v)
			grad[0] = p.chainGrad(d, v)
			return l + p.logJac(v)
		}}
		t.Logf("%v on %s", c.p, supportName(c.sup))
		mcmctest.CheckGradient(t, f, 1e-7, &mcmctest.GradSettings{Seed: 5, Points: 10, Radius: 3})
		mcmctest.CheckNoAlloc(t, f, []float64{0.4})
		if u := p.unconstrain(p.value([]float64{0.4})); math.Abs(u-0.4) > 1e-12 {
			t.Errorf("%v: unconstrain(value(0.4)) = %v", c.p, u)
		}
	}
}
