package scenario

import (
	"bytes"
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"spillway/funnel/data"
	"spillway/funnel/model"
	"spillway/funnel/transform"
)

func render(t *testing.T, name string, seed uint64) ([]byte, []byte) {
	t.Helper()
	s, err := Named(name, seed, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	r, err := s.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	tr, err := s.Truth(r)
	if err != nil {
		t.Fatal(err)
	}
	var a, b bytes.Buffer
	if err := data.WriteCSV(&a, r.Data); err != nil {
		t.Fatal(err)
	}
	if err := tr.WriteJSON(&b); err != nil {
		t.Fatal(err)
	}
	return a.Bytes(), b.Bytes()
}

// TestReproducible: the same scenario and seed give the same bytes, another
// seed other data.
func TestReproducible(t *testing.T) {
	for _, name := range []string{"demo", "demo-regions", "slow-burn", "direct-audio"} {
		a1, t1 := render(t, name, 4)
		a2, t2 := render(t, name, 4)
		a3, _ := render(t, name, 5)
		if !bytes.Equal(a1, a2) || !bytes.Equal(t1, t2) {
			t.Errorf("%s: same seed, different output", name)
		}
		if bytes.Equal(a1, a3) {
			t.Errorf("%s: seeds 4 and 5 gave the same data", name)
		}
		// the simulated data pass the loader's checks
		spec := Spec
		if name == "demo-regions" {
			spec = RegionSpec
		}
		if _, err := data.Read(bytes.NewReader(a1), name+".csv", spec); err != nil {
			t.Errorf("%s: simulated data rejected by the loader: %v", name, err)
		}
	}
}

// TestTruthIndependently recomputes the demo's true whole-period effects
// straight from DESIGN.md's formulas and the true parameters, without the
// mediation package: NIE = mean(y) gamma alpha sum_t H(a(x~)), NDE =
// mean(y) delta sum_t H(a(x~); lam2, K2, S2), controlled paid search =
// mean(y) beta sum_t H(a(s~)).
func TestTruthIndependently(t *testing.T) {
	s, _ := Named("demo", 3, 0, 0)
	r, err := s.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	tr, err := s.Truth(r)
	if err != nil {
		t.Fatal(err)
	}
	ser := r.Data.Regions[0].Series
	my := 0.0
	for _, v := range ser.Outcome {
		my += v
	}
	my /= float64(len(ser.Outcome))
	sumH := func(x []float64, lam, k, sh float64) float64 {
		d := model.SpendScale(x)
		xs := make([]float64, len(x))
		for i := range x {
			xs[i] = x[i] / d
		}
		a := transform.Adstock(nil, xs, lam)
		tot := 0.0
		for _, v := range a {
			tot += transform.Hill(v, k, sh)
		}
		return tot
	}
	got := map[string]float64{}
	for _, e := range append(tr.Effects, tr.Borrowed...) {
		if e.Window == "all" {
			got[e.Channel+"/"+e.Path] = e.Value
		}
	}
	D, O := tr.Demand, tr.Outcome
	for c, col := range Spec.Upper {
		x := ser.Upper[c]
		via := my * O["gamma"] * D["alpha["+col+"]"] * sumH(x, D["lam["+col+"]"], D["K["+col+"]"], D["S["+col+"]"])
		dir := my * O["delta["+col+"]"] * sumH(x, O["lam2["+col+"]"], O["K2["+col+"]"], O["S2["+col+"]"])
		for path, want := range map[string]float64{"via_search": via, "direct": dir, "total": via + dir, "mediated_share": via / (via + dir)} {
			if g := got[col+"/"+path]; !scalar.EqualWithinAbsOrRel(g, want, 1e-9, 1e-9) {
				t.Errorf("%s %s: truth.json %v, recomputed %v", col, path, g, want)
			}
		}
	}
	sc := Spec.Search[0]
	ctl := my * O["beta["+sc+"]"] * sumH(ser.Search[0], O["lam_s["+sc+"]"], O["K_s["+sc+"]"], O["S_s["+sc+"]"])
	if g := got[sc+"/controlled"]; !scalar.EqualWithinAbsOrRel(g, ctl, 1e-9, 1e-9) {
		t.Errorf("controlled paid search: truth.json %v, recomputed %v", g, ctl)
	}
	// the scenario was built so that a naive model over-credits search
	if b := got[sc+"/borrowed_share"]; !(b > 0.2 && b < 0.9) || math.IsNaN(b) {
		t.Errorf("borrowed share %v: the demo should have paid search borrowing a clear share of demand", b)
	}
}

// TestQuarterWithoutSpend: a short scenario can have a quarter in which a
// flighted channel spends nothing; its truth then has effects of zero and no
// mediated share, not an error.
func TestQuarterWithoutSpend(t *testing.T) {
	s, err := Named("demo", 3, 68, 0)
	if err != nil {
		t.Fatal(err)
	}
	r, err := s.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.Truth(r); err != nil {
		t.Fatal(err)
	}
}
