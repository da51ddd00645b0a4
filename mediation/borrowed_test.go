package mediation

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"

	"spillway/funnel/fitfolder"
	"spillway/funnel/model"
	"spillway/funnel/window"
	"spillway/mediation/ols"
)

// TestBorrowedByQuarter: with paid search linear (no carryover, no
// saturation) its controlled and apparent effects are linear in its spend,
// so the quarters' effects add up to the whole period's; the borrowed share
// is a ratio of coefficients, the same in every window.
func TestBorrowedByQuarter(t *testing.T) {
	sc, st1, st2, v1, v2 := synth(t, 120, 3, model.Options{Linear: map[string]bool{"search": true}})
	in := &Inputs{Data: sc, Demand: st1, Outcome: st2,
		DemandDraws: Draws{Names: st1.Names(), Rows: [][]float64{v1}}, OutcomeDraws: Draws{Names: st2.Names(), Rows: [][]float64{v2}}}
	wins := window.Quarters(sc.Weeks)
	res, err := Split(in, wins)
	if err != nil {
		t.Fatal(err)
	}
	val := map[string]float64{}
	for _, e := range res.Borrowed {
		val[e.Path+"/"+e.Window] = e.Draws[0]
	}
	for _, m := range []string{"controlled", "apparent"} {
		sum := 0.0
		for _, w := range wins[1:] {
			sum += val[m+"/"+w.Name]
		}
		if whole := val[m+"/all"]; !scalar.EqualWithinAbsOrRel(sum, whole, 1e-9, 1e-9) || whole == 0 {
			t.Errorf("%s: quarters add up to %v, whole period %v", m, sum, whole)
		}
	}
	for _, w := range wins {
		if got, want := val["borrowed_share/"+w.Name], val["borrowed_share/all"]; got != want {
			t.Errorf("borrowed share in %s: %v, whole period %v", w.Name, got, want)
		}
	}
}

// TestNaiveCheck: agreement means each mean inside the other's 90%
// interval; a disagreement yields one note naming the channel and which
// figure to use.
func TestNaiveCheck(t *testing.T) {
	row := func(m string, mean, lo, hi float64) fitfolder.Borrowed {
		return fitfolder.Borrowed{Channel: "search", Measure: m, Window: "all", Mean: mean, Q05: lo, Q95: hi}
	}
	agree := []fitfolder.Borrowed{row("apparent", 77487, 21276, 166595), row("naive", 65749, 17679, 150623)}
	if n := NaiveCheck(agree); len(n) != 0 {
		t.Errorf("agreeing figures gave notes %q", n)
	}
	// the bare least-squares identity on a user's data set against its refit
	apart := []fitfolder.Borrowed{row("apparent", 510187, 400000, 600000), row("naive", 87956, 22991, 189779)}
	n := NaiveCheck(apart)
	if len(n) != 1 || !strings.Contains(n[0], "for search the apparent return (510187 [400000, 600000]) and the refit without queries (87956 [22991, 189779]) disagree") ||
		!strings.Contains(n[0], "Use the apparent return") {
		t.Errorf("disagreeing figures gave %q", n)
	}
}

// TestProjectionBounded: a draw whose own expected outcome without paid
// search dips below zero (a small intercept, the control's swings) makes
// the unconstrained projection of the stage without queries do the same.
// The constrained projection must (1) keep every channel coefficient
// non-negative and the outcome it expects without paid search non-negative
// in every week, (2) so credit paid search with no more than the outcome
// it expects, and (3) be optimal: at the solution the objective's gradient
// is a non-negative combination of the binding constraints' normals (the
// KKT conditions), found here by non-negative least squares.
func TestProjectionBounded(t *testing.T) {
	sc, _, st2, _, v2 := synth(t, 120, 2, model.Options{})
	n := st2.Predict(nil, v2)
	T := sc.T
	hs, _ := st2.Response(nil, st2.ChannelIndex("search"), v2, sc.Search[0])
	hv, _ := st2.Response(nil, st2.ChannelIndex("video"), v2, sc.Upper[0])
	ha, _ := st2.Response(nil, st2.ChannelIndex("audio"), v2, sc.Upper[1])
	const p = 10
	x := mat.NewDense(T+p, p, nil)
	for i := 0; i < T; i++ {
		x.SetRow(i, []float64{1, sc.Tau[i], sc.Season[0][i], sc.Season[1][i], sc.Season[2][i], sc.Season[3][i], sc.Controls[0][i], hs[i], hv[i], ha[i]})
	}
	names := []string{"mu_y", "b_y", "cy[1]", "cy[2]", "dy[1]", "dy[2]", "phi_y[price]", "beta[search]", "delta[video]", "delta[audio]"}
	theta := make([]float64, p)
	for k, nm := range names {
		theta[k] = param(st2, v2, nm)
	}
	g := param(st2, v2, "gamma")
	// n holds gamma times the queries; the projection wants Xθ + γq + o
	minRest := math.Inf(1)
	for i := 0; i < T; i++ {
		minRest = math.Min(minRest, n[i]-theta[7]*hs[i]-g*sc.Queries[i])
	}
	if minRest >= 0 {
		t.Fatalf("the draw's outcome without paid search and queries stays at %g or above; the test needs one that dips below zero", minRest)
	}
	pr := projection{T: T, search: 7, ns: 1}
	pr.add(st2.MuPrior, model.Real)
	for _, r := range st2.Regressors {
		if r.Name != "gamma" {
			pr.add(r.Prior, r.Default)
		}
	}
	for _, col := range []string{"search", "video", "audio"} {
		prm := st2.Channels[st2.ChannelIndex(col)].Params[0]
		pr.add(prm.Prior, prm.Default)
	}
	ws := pr.workspace()
	s2 := 0.01
	b := make([]float64, p)
	bound, err := pr.solve(b, ws, x, theta, sc.Queries, n, g, s2)
	if err != nil {
		t.Fatal(err)
	}
	if !bound {
		t.Fatal("no constraint bound")
	}
	// (1) and (2)
	expect, app := 0.0, 0.0
	for i := 0; i < T; i++ {
		rest := 0.0
		for k := 0; k < p; k++ {
			if k != 7 {
				rest += x.At(i, k) * b[k]
			}
		}
		if rest < -1e-12 {
			t.Errorf("week %d: the stage without queries expects %g without paid search", i+1, rest)
		}
		expect += rest + b[7]*hs[i]
		app += b[7] * hs[i]
	}
	for k := 7; k < p; k++ {
		if b[k] < 0 {
			t.Errorf("%s: %g < 0", names[k], b[k])
		}
	}
	if app > expect {
		t.Errorf("paid search credited with %g of an expected outcome of %g", app, expect)
	}
	// (3) the gradient of ½‖A b − z‖² is Aᵀ(A b − z); with G b ≥ h the
	// conditions are Aᵀ(A b − z) = Gᵀλ, λ ≥ 0 on the binding rows.
	grad := make([]float64, p)
	for i := 0; i < T+p; i++ {
		r := -ws.yaug[i]
		for k := 0; k < p; k++ {
			r += x.At(i, k) * b[k]
		}
		for k := 0; k < p; k++ {
			grad[k] += x.At(i, k) * r
		}
	}
	var act [][]float64
	for i := 0; i < T; i++ {
		row := make([]float64, p)
		v := 0.0
		for k := 0; k < p; k++ {
			if k != 7 {
				row[k] = x.At(i, k)
				v += row[k] * b[k]
			}
		}
		if v < 1e-9 {
			act = append(act, row)
		}
	}
	for k := 7; k < p; k++ {
		if b[k] < 1e-12 {
			row := make([]float64, p)
			row[k] = 1
			act = append(act, row)
		}
	}
	if len(act) == 0 {
		t.Fatal("bound, yet no constraint is active at the solution")
	}
	gt := mat.NewDense(p, len(act), nil)
	for c, row := range act {
		for k := range row {
			gt.Set(k, c, row[k])
		}
	}
	// λ ≥ 0 with Gᵀλ = −grad... sign: minimising f subject to Gb ≥ h gives
	// ∇f = Gᵀλ
	lam, err := ols.NNLS(gt, grad)
	if err != nil {
		t.Fatal(err)
	}
	res, norm := 0.0, 0.0
	for k := 0; k < p; k++ {
		s := -grad[k]
		for c := range act {
			s += gt.At(k, c) * lam[c]
		}
		res += s * s
		norm += grad[k] * grad[k]
	}
	if math.Sqrt(res) > 1e-8*math.Sqrt(norm) {
		t.Errorf("KKT: the gradient (norm %g) is not a non-negative combination of the %d active constraints (residual %g)", math.Sqrt(norm), len(act), math.Sqrt(res))
	}
	t.Logf("apparent coefficient %.4g (draw's %.4g), %d active constraints, outcome credited %.1f of %.1f", b[7], theta[7], len(act), app, expect)
}
