package pipeline

import (
	"bufio"
	"context"
	"encoding/csv"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/stat"
	"spillway/funnel/window"
	"spillway/mediation"
)

// linearPriors reduces a stage to Bayesian linear regression with the flat
// prior p(beta, sigma) ∝ 1/sigma (BDA3 §14.2): flat intercept and
// coefficients, Jeffreys sigma, and no trend or seasonality (held at 0).
func linearPriors(suffix string, coefs ...string) map[string]model.Prior {
	p := map[string]model.Prior{
		"mu_" + suffix: {Family: model.Flat}, "b_" + suffix: {Family: model.Fixed},
		"sigma_" + suffix: {Family: model.Jeffreys},
	}
	for _, k := range []string{"c%s[1]", "c%s[2]", "d%s[1]", "d%s[2]"} {
		p[strings.Replace(k, "%s", suffix, 1)] = model.Prior{Family: model.Fixed}
	}
	for _, c := range coefs {
		p[c] = model.Prior{Family: model.Flat}
	}
	return p
}

// plainScaled builds a Scaled series from cross-sectional columns (weeks
// are only labels here) the way model.Scale does.
func plainScaled(upper map[string][]float64, order []string, q, y []float64) *model.Scaled {
	T := len(q)
	sc := &model.Scaled{T: T, UpperNames: order}
	sc.Tau = make([]float64, T)
	for k := range sc.Season {
		sc.Season[k] = make([]float64, T)
	}
	start := time.Date(2020, 1, 6, 0, 0, 0, 0, time.UTC)
	for i := 0; i < T; i++ {
		sc.Weeks = append(sc.Weeks, start.AddDate(0, 0, 7*i))
		sc.Tau[i] = float64(i) / float64(T-1)
	}
	for _, n := range order {
		x := upper[n]
		d := model.SpendScale(x)
		xs := make([]float64, T)
		for i := range x {
			xs[i] = x[i] / d
		}
		sc.Upper, sc.UpperScale, sc.RawUpper = append(sc.Upper, xs), append(sc.UpperScale, d), append(sc.RawUpper, x)
	}
	norm := func(v []float64) ([]float64, float64) {
		m := 0.0
		for _, x := range v {
			m += x
		}
		m /= float64(len(v))
		out := make([]float64, len(v))
		for i, x := range v {
			out[i] = x / m
		}
		return out, m
	}
	sc.Queries, sc.QueriesScale = norm(q)
	if y != nil {
		sc.Outcome, sc.OutcomeScale = norm(y)
	}
	return sc
}

func readColumns(t *testing.T, path string, sep rune) map[string][]float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(bufio.NewReader(f))
	r.Comma = sep
	rows, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]float64{}
	for _, row := range rows[1:] {
		for j, h := range rows[0] {
			v, err := strconv.ParseFloat(row[j], 64)
			if err != nil {
				t.Fatal(err)
			}
			out[h] = append(out[h], v)
		}
	}
	return out
}

// draws returns a parameter's draws per chain, transformed by f.
func draws(fit *mcmc.Fit, name string, f func(float64) float64) [][]float64 {
	col := fit.Column(name)
	out := make([][]float64, len(col))
	for c, x := range col {
		out[c] = make([]float64, len(x))
		for i, v := range x {
			out[c][i] = f(v)
		}
	}
	return out
}

// checkMoments requires a posterior mean within 4 MCSE of want and, when
// wantSD > 0, the posterior sd within 10% of wantSD.
func checkMoments(t *testing.T, name string, x [][]float64, want, wantSD float64) {
	t.Helper()
	m, sd := stat.MeanSD(slices.Concat(x...))
	mcse := mcmc.MCSEMean(x)
	t.Logf("%s: mean %.10g (want %.10g, %.2f MCSE), sd %.6g (want %.6g)", name, m, want, (m-want)/mcse, sd, wantSD)
	if math.Abs(m-want) > 4*mcse {
		t.Errorf("%s: posterior mean %.10g, want %.10g within 4 MCSE (%.3g)", name, m, want, mcse)
	}
	if wantSD > 0 && math.Abs(sd/wantSD-1) > 0.1 {
		t.Errorf("%s: posterior sd %.6g, want %.6g within 10%%", name, sd, wantSD)
	}
}

// TestLinearNorris switches the channel transform off (--linear) and the
// trend and seasons off, so the demand stage is Bayesian linear regression
// with the flat prior. Its posterior must match the exact one for NIST StRD
// Norris: mean = certified B, sd = certified SE * sqrt(34/32) (Student t with
// n-k = 34 d.f.; BDA3 §14.2; values in shared REFERENCES.md section 7).
func TestLinearNorris(t *testing.T) {
	cols := readColumns(t, "../../testdata/nist/norris.txt", ' ')
	sc := plainScaled(map[string][]float64{"x": cols["x"]}, []string{"x"}, cols["y"], nil)
	o := model.Options{Linear: map[string]bool{"x": true}, Priors: linearPriors("q", "alpha[x]")}
	st, err := model.Demand(sc, o)
	if err != nil {
		t.Fatal(err)
	}
	tg, err := st.Target()
	if err != nil {
		t.Fatal(err)
	}
	fit, err := mcmc.Run(context.Background(), tg, &mcmc.Settings{Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	my, mx := sc.QueriesScale, sc.UpperScale[0]
	b0 := draws(fit, "mu_q", func(v float64) float64 { return v * my })
	b1 := draws(fit, "alpha[x]", func(v float64) float64 { return v * my / mx })
	s2 := draws(fit, "sigma_q", func(v float64) float64 { return v * v * my * my })
	// NIST StRD Norris certified values
	checkMoments(t, "B0", b0, -0.262323073774029, 0.232818234301152*math.Sqrt(34.0/32))
	checkMoments(t, "B1", b1, 1.00211681802045, 0.429796848199937e-3*math.Sqrt(34.0/32))
	// E[sigma^2|y] = s^2 (n-k)/(n-k-2) (scaled inverse chi-square; derived in REFERENCES.md section 7)
	checkMoments(t, "sigma^2", s2, 0.8317937040444483, 0)
}

// TestLinearTalOr fits the demand and outcome stages with both transforms
// off and flat priors on the Tal_Or data (R package psych; Tal-Or, Cohen,
// Tsfati and Gunther 2010; Hayes' mediation text, model 4): a, b, c' and the
// indirect effect ab must match the published OLS values within 4 MCSE, and
// the sensitivity curve must cross zero at rho = 0.4301 (Imai, Keele and
// Yamamoto 2010: rho-tilde, the residual correlation; R value in
// testdata/talor/reference.out).
func TestLinearTalOr(t *testing.T) {
	cols := readColumns(t, "../../testdata/talor/tal_or.csv", ',')
	sc := plainScaled(map[string][]float64{"cond": cols["cond"]}, []string{"cond"}, cols["pmi"], cols["reaction"])
	pr := linearPriors("q", "alpha[cond]")
	for k, v := range linearPriors("y", "delta[cond]", "gamma") {
		pr[k] = v
	}
	o := model.Options{Linear: map[string]bool{"cond": true}, Priors: pr}
	st, err := Stages(sc, o)
	if err != nil {
		t.Fatal(err)
	}
	var fits [3]*mcmc.Fit
	for k, s := range st[:2] {
		tg, err := s.Target()
		if err != nil {
			t.Fatal(err)
		}
		if fits[k], err = mcmc.Run(context.Background(), tg, &mcmc.Settings{Seed: uint64(20 + k)}); err != nil {
			t.Fatal(err)
		}
	}
	mp, my := sc.QueriesScale, sc.OutcomeScale
	a := draws(fits[0], "alpha[cond]", func(v float64) float64 { return v * mp })
	b := draws(fits[1], "gamma", func(v float64) float64 { return v * my / mp })
	cp := draws(fits[1], "delta[cond]", func(v float64) float64 { return v * my })
	ab := make([][]float64, len(a))
	for c := range a {
		ab[c] = make([]float64, len(a[c]))
		for i := range a[c] {
			ab[c][i] = a[c][i] * b[c][i]
		}
	}
	// OLS values from R lm() on the committed data (testdata/talor/reference.out)
	checkMoments(t, "a", a, 0.4765251989389897, 0.23569130733644023*math.Sqrt(121.0/119))
	checkMoments(t, "b", b, 0.50644848342832338, 0.097048297672380004*math.Sqrt(120.0/118))
	checkMoments(t, "c'", cp, 0.25435419085438055, 0.25582258452692597*math.Sqrt(120.0/118))
	checkMoments(t, "ab", ab, 0.24133546431803143, 0)
	in := Pair(sc, st, fits)
	sens, err := mediation.Sensitivities(in, mediation.RhoGrid())
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("rho at which the via-search effect is zero: %.4f", sens[0].Zero)
	if math.Abs(sens[0].Zero-0.4300756403187635) > 0.01 {
		t.Errorf("sensitivity crosses zero at rho = %.4f, want 0.4301", sens[0].Zero)
	}
	// at rho = 0 the sensitivity reproduces the main via-search effect
	res, err := mediation.Split(in, window.Quarters(sc.Weeks)[:1])
	if err != nil {
		t.Fatal(err)
	}
	main := mediation.Summarise(res.Effects[1].Draws).Mean
	at0 := mediation.Summarise(sens[0].Draws[9]).Mean
	if res.Effects[1].Path != "via_search" || math.Abs(main-at0) > 1e-9*math.Abs(main) {
		t.Errorf("via-search effect at rho = 0: %v, main result %v", at0, main)
	}
	n1 := 0.0
	for _, v := range cols["cond"] {
		n1 += v
	}
	checkMoments(t, "via_search per treated unit", [][]float64{scaleAll(res.Effects[1].Draws, 1/n1)}, 0.24133546431803143, 0)
}

func scaleAll(x []float64, k float64) []float64 {
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = v * k
	}
	return out
}
