package model

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"spillway/funnel/mcmc"
	"spillway/funnel/stat"
)

// Normal-normal conjugate update (Gelman et al., Bayesian Data Analysis,
// 3rd ed., ch. 2.5; shared REFERENCES.md section 9): a quantity whose
// posterior from the data alone is N(m0, s0^2), observed through an
// unbiased estimate d with standard error s, has the posterior
// N((m0/s0^2 + d/s^2)/(1/s0^2 + 1/s^2), 1/(1/s0^2 + 1/s^2)). Check value
// computed in R: m0 = 1, s0 = 0.5, d = 1.8, s = 0.3 give mean 1.588235 and
// sd 0.2572479.
const (
	conjM0, conjS0 = 1.0, 0.5
	conjD, conjS   = 1.8, 0.3
	conjMean       = 1.588235
	conjSD         = 0.2572479
)

// conjugateData builds one linear upper channel and, for each stage, a
// response whose least-squares estimate of the channel's coefficient is
// exactly coef[k] (noise orthogonal to the intercept and the spend) with a
// known noise sd sigma[k] chosen so that the coefficient's posterior sd
// under flat priors is sd[k]. The outcome adds gamma0 times the queries.
func conjugateData(T int, coef, sd [2]float64, gamma0 float64) (*Scaled, [2]float64) {
	rng := rand.New(rand.NewPCG(21, 21))
	sc := &Scaled{T: T, UpperNames: []string{"video"}, Tau: make([]float64, T), Weeks: make([]time.Time, T)}
	for k := range sc.Season {
		sc.Season[k] = make([]float64, T)
	}
	x := make([]float64, T)
	for i := range x {
		sc.Weeks[i] = time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC).AddDate(0, 0, 7*i)
		sc.Tau[i] = float64(i) / float64(T-1)
		if rng.Float64() < 0.7 {
			x[i] = rng.ExpFloat64()
		}
	}
	sc.Upper = [][]float64{x}
	xbar := stat.Mean(x)
	sxx := 0.0
	for _, v := range x {
		sxx += (v - xbar) * (v - xbar)
	}
	var sigma [2]float64
	resp := func(k int, base float64) []float64 {
		sigma[k] = sd[k] * math.Sqrt(sxx)
		e := make([]float64, T)
		for i := range e {
			e[i] = rng.NormFloat64()
		}
		// project the noise off the intercept and the spend
		em := stat.Mean(e)
		exy := 0.0
		for i := range e {
			exy += (e[i] - em) * (x[i] - xbar)
		}
		b := exy / sxx
		ss := 0.0
		for i := range e {
			e[i] -= em + b*(x[i]-xbar)
			ss += e[i] * e[i]
		}
		r := make([]float64, T)
		for i := range r {
			r[i] = base + coef[k]*x[i] + sigma[k]*e[i]/math.Sqrt(ss/float64(T-2))
		}
		return r
	}
	sc.Queries = resp(0, 0.8)
	y := resp(1, 0.4)
	for i := range y {
		y[i] += gamma0 * sc.Queries[i]
	}
	sc.Outcome = y
	return sc, sigma
}

// conjugateOptions: a linear channel, flat priors on the intercepts and
// coefficients, the noise sd known, trend and seasons held at zero and
// gamma held at gamma0.
func conjugateOptions(sigma [2]float64, gamma0 float64) Options {
	p := map[string]Prior{"mu_q": {Flat, 0, 0}, "mu_y": {Flat, 0, 0}, "alpha[video]": {Flat, 0, 0}, "delta[video]": {Flat, 0, 0},
		"sigma_q": {Fixed, sigma[0], 0}, "sigma_y": {Fixed, sigma[1], 0}, "gamma": {Fixed, gamma0, 0}}
	for _, s := range []string{"q", "y"} {
		p["b_"+s] = Prior{Fixed, 0, 0}
		for _, n := range []string{"c%s[1]", "c%s[2]", "d%s[1]", "d%s[2]"} {
			p[fmt.Sprintf(n, s)] = Prior{Fixed, 0, 0}
		}
	}
	return Options{Linear: map[string]bool{"video": true}, Priors: p}
}

// TestLiftConjugate checks a lift test against the closed form: with a
// linear channel, known noise and flat priors, the data's own posterior of
// the lift over the test's window is normal, N(m0, s0^2) by construction,
// and the test N(d | L, s) updates it to the precision-weighted mean. The
// queries test involves the demand stage alone; the outcome test ties the
// two stages (via search with gamma held at 0.5, plus direct; the data's
// m0 = 0.6 + 0.4 and s0^2 = 0.15 + 0.10 split between the two paths).
// The sampler's posterior mean of the lift must be within 4 MCSE of the
// closed form, its sd within 4 of its Monte Carlo standard errors.
func TestLiftConjugate(t *testing.T) {
	const T, from, to, gamma0 = 80, 30, 41, 0.5
	for _, metric := range []LiftMetric{LiftQueries, LiftOutcome} {
		// the window's spend X; coefficients so that the lift's parts are
		// as stated
		sc0, _ := conjugateData(T, [2]float64{1, 1}, [2]float64{1, 1}, gamma0)
		X := 0.0
		for w := from; w <= to; w++ {
			X += sc0.Upper[0][w]
		}
		coef := [2]float64{conjM0 / X, 1}
		sd := [2]float64{conjS0 / X, 1}
		if metric == LiftOutcome {
			coef = [2]float64{0.6 / (gamma0 * X), 0.4 / X}
			sd = [2]float64{math.Sqrt(0.15) / (gamma0 * X), math.Sqrt(0.10) / X}
		}
		sc, sigma := conjugateData(T, coef, sd, gamma0)
		o := conjugateOptions(sigma, gamma0)
		d, _ := Demand(sc, o)
		y, _ := Outcome(sc, o)
		stages := []*Stage{d}
		if metric == LiftOutcome {
			stages = append(stages, y)
		}
		lift := &LiftTest{Column: "video", Metric: metric, Start: from, End: to, Estimate: conjD, SE: conjS, Demand: 0, Outcome: 1}
		j, err := NewJoint(stages, lift)
		if err != nil {
			t.Fatal(err)
		}
		fit, err := mcmc.Run(context.Background(), j, &mcmc.Settings{Seed: 5, Draws: 4000})
		if err != nil {
			t.Fatal(err)
		}
		n0 := len(d.Names())
		L := make([][]float64, len(fit.Chains))
		for c, ch := range fit.Chains {
			rows, _ := ch.Draws.Dims()
			for i := 0; i < rows; i++ {
				v := ch.Draws.RawRowView(i)
				var vy []float64
				if metric == LiftOutcome {
					vy = v[n0:]
				}
				L[c] = append(L[c], lift.Lift(v[:n0], vy))
			}
		}
		s := mcmc.SummarizeDraws("lift", L)
		mcseSD := s.SD / math.Sqrt(2*(s.ESSBulk-1)) // normal theory, n_eff draws
		t.Logf("%v test: lift posterior mean %.6f (MCSE %.2g), sd %.6f (MCSE %.2g); closed form %.6f, %.7f; ESS %.0f, R-hat %.4f",
			metric, s.Mean, s.MCSEMean, s.SD, mcseSD, conjMean, conjSD, s.ESSBulk, s.Rhat)
		if math.Abs(s.Mean-conjMean) > 4*s.MCSEMean+1e-6 {
			t.Errorf("%v test: posterior mean %.6f, closed form %.6f (MCSE %.2g)", metric, s.Mean, conjMean, s.MCSEMean)
		}
		if math.Abs(s.SD-conjSD) > 4*mcseSD+1e-6 {
			t.Errorf("%v test: posterior sd %.6f, closed form %.7f (MCSE %.2g)", metric, s.SD, conjSD, mcseSD)
		}
		// without the test the data alone give N(m0, s0^2)
		plain, _ := NewJoint(stages)
		fit0, err := mcmc.Run(context.Background(), plain, &mcmc.Settings{Seed: 6, Draws: 2000})
		if err != nil {
			t.Fatal(err)
		}
		for c, ch := range fit0.Chains {
			L[c] = L[c][:0]
			rows, _ := ch.Draws.Dims()
			for i := 0; i < rows; i++ {
				v := ch.Draws.RawRowView(i)
				var vy []float64
				if metric == LiftOutcome {
					vy = v[n0:]
				}
				L[c] = append(L[c], lift.Lift(v[:n0], vy))
			}
		}
		s0 := mcmc.SummarizeDraws("lift", L)
		t.Logf("%v, data alone: mean %.4f sd %.4f (want %v, %v)", metric, s0.Mean, s0.SD, conjM0, conjS0)
		if math.Abs(s0.Mean-conjM0) > 4*s0.MCSEMean || math.Abs(s0.SD-conjS0) > 0.05*conjS0 {
			t.Errorf("%v, data alone: lift mean %.4f sd %.4f, want %v and %v by construction", metric, s0.Mean, s0.SD, conjM0, conjS0)
		}
	}
}
