package mediation

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"spillway/funnel/model"
	"spillway/funnel/window"
)

// TestReturns checks returns.csv on one draw: return on spend is the total
// effect over the window's spend, the cost its inverse, and the marginal
// return the derivative of the steady weekly outcome at the mean weekly
// spend, in closed form: mean(y) (gamma alpha H'(x; K, S) + delta H'(x; K2,
// S2)) / scale, with H'(x) = S K^S x^(S-1) / (x^S + K^S)^2 (calculus).
func TestReturns(t *testing.T) {
	sc, st1, st2, v1, v2 := synth(t, 104, 1, model.Options{})
	sc.UpperScale = nil
	for _, raw := range sc.RawUpper {
		sc.UpperScale = append(sc.UpperScale, model.SpendScale(raw))
	}
	in := &Inputs{Data: sc, Demand: st1, Outcome: st2,
		DemandDraws: Draws{Names: st1.Names(), Rows: [][]float64{v1}}, OutcomeDraws: Draws{Names: st2.Names(), Rows: [][]float64{v2}}}
	res, err := Split(in, window.Quarters(sc.Weeks))
	if err != nil {
		t.Fatal(err)
	}
	rows, err := Returns(in, res)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]float64{}
	for _, r := range rows {
		got[r.Channel+"/"+r.Window+"/"+r.Measure] = r.Mean
	}
	for _, e := range res.Effects {
		if e.Path != "total" || !(e.Spend > 0) {
			continue
		}
		k := e.Channel + "/" + e.Window + "/"
		if want := e.Draws[0] / e.Spend; !scalar.EqualWithinAbsOrRel(got[k+ReturnOnSpend], want, 1e-12, 1e-12) {
			t.Errorf("%s return on spend: got %v, want %v", k, got[k+ReturnOnSpend], want)
		}
		if want := e.Spend / e.Draws[0]; !scalar.EqualWithinAbsOrRel(got[k+CostPerIncremental], want, 1e-12, 1e-12) {
			t.Errorf("%s cost per incremental: got %v, want %v", k, got[k+CostPerIncremental], want)
		}
	}
	dh := func(x, k, s float64) float64 {
		return s * math.Pow(k, s) * math.Pow(x, s-1) / math.Pow(math.Pow(x, s)+math.Pow(k, s), 2)
	}
	gamma := param(st2, v2, "gamma")
	for c, col := range sc.UpperNames {
		mean := 0.0
		for _, v := range sc.RawUpper[c] {
			mean += v
		}
		mean /= float64(sc.T)
		x := mean / sc.UpperScale[c]
		want := sc.OutcomeScale * (gamma*param(st1, v1, "alpha["+col+"]")*dh(x, param(st1, v1, "K["+col+"]"), param(st1, v1, "S["+col+"]")) +
			param(st2, v2, "delta["+col+"]")*dh(x, param(st2, v2, "K2["+col+"]"), param(st2, v2, "S2["+col+"]"))) / sc.UpperScale[c]
		// a central difference with a 1% step: error of order 1e-4 relative
		if g := got[col+"/all/"+MarginalReturn]; !scalar.EqualWithinRel(g, want, 1e-3) {
			t.Errorf("%s marginal return: got %v, want %v (closed form)", col, g, want)
		}
	}
}
