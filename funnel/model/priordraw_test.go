package model

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"spillway/funnel/stat"
)

// TestPriorDraw checks each family's draws against its mean and sd in
// closed form (textbook moments, from memory: half-normal mean s sqrt(2/pi),
// variance s^2 (1 - 2/pi); gamma a/b, a/b^2; beta a/(a+b),
// ab/((a+b)^2 (a+b+1))).
func TestPriorDraw(t *testing.T) {
	st := &Stage{Intercept: "mu", MuPrior: PriorMu, Sigma: "sigma", SigmaPrior: PriorSigma,
		Channels: []Channel{{Column: "x", Params: mediaParams("x", "a", "l", "K", "S", false)}}}
	st.Regressors = []Regressor{{Name: "held", Prior: Prior{Fixed, 0.3, 0}}}
	want := []struct{ mean, sd float64 }{
		{0.5, 0.5},
		{0.3, 0},
		{0.5 * math.Sqrt(2/math.Pi), 0.5 * math.Sqrt(1-2/math.Pi)},
		{0.5, math.Sqrt(9.0 / (36 * 7))},
		{1, math.Sqrt(3.0) / 3},
		{2, 1},
		{0.5 * math.Sqrt(2/math.Pi), 0.5 * math.Sqrt(1-2/math.Pi)},
	}
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 40000
	cols := make([][]float64, len(want))
	var v []float64
	var err error
	for range n {
		if v, err = st.PriorDraw(v, rng); err != nil {
			t.Fatal(err)
		}
		for i, x := range v {
			cols[i] = append(cols[i], x)
		}
	}
	names := st.Names()
	for i, w := range want {
		m, sd := stat.MeanSD(cols[i])
		// 5 standard errors of the mean; the sd within 3%
		if math.Abs(m-w.mean) > 5*w.sd/math.Sqrt(n)+1e-12 || math.Abs(sd-w.sd) > 0.03*w.sd+1e-12 {
			t.Errorf("%s: mean %.4f sd %.4f, want %.4f, %.4f", names[i], m, sd, w.mean, w.sd)
		}
	}
	st.SigmaPrior = Prior{Family: Jeffreys}
	if _, err := st.PriorDraw(nil, rng); !errors.Is(err, ErrImproper) {
		t.Errorf("Jeffreys prior: error %v, want ErrImproper", err)
	}
}
