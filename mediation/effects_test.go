package mediation

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"

	"spillway/funnel/model"
	"spillway/funnel/transform"
	"spillway/funnel/window"
	"spillway/mediation/ols"
)

// synth builds a scaled national series with two upper channels, one search
// channel and a control, and random parameter vectors for both stages.
func synth(t *testing.T, T int, seed uint64, o model.Options) (*model.Scaled, *model.Stage, *model.Stage, []float64, []float64) {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 2))
	sc := &model.Scaled{T: T, UpperNames: []string{"video", "audio"}, SearchNames: []string{"search"}, ControlNames: []string{"price"},
		OutcomeScale: 2500, QueriesScale: 40000}
	start := time.Date(2024, 1, 1, 0, 0, 0, 0, time.UTC)
	sc.Tau = make([]float64, T)
	for k := range sc.Season {
		sc.Season[k] = make([]float64, T)
	}
	for i := 0; i < T; i++ {
		sc.Weeks = append(sc.Weeks, start.AddDate(0, 0, 7*i))
		sc.Tau[i] = float64(i) / float64(T-1)
		w := 2 * math.Pi * float64(i+1) / model.SeasonPeriod
		sc.Season[0][i], sc.Season[1][i], sc.Season[2][i], sc.Season[3][i] = math.Cos(w), math.Cos(2*w), math.Sin(w), math.Sin(2*w)
	}
	spend := func() ([]float64, []float64) {
		raw := make([]float64, T)
		for i := range raw {
			if rng.Float64() < 0.7 {
				raw[i] = 1000 * rng.ExpFloat64()
			}
		}
		d := model.SpendScale(raw)
		x := make([]float64, T)
		for i := range x {
			x[i] = raw[i] / d
		}
		return raw, x
	}
	for c := 0; c < 2; c++ {
		raw, x := spend()
		sc.RawUpper, sc.Upper = append(sc.RawUpper, raw), append(sc.Upper, x)
	}
	raw, x := spend()
	sc.RawSearch, sc.Search = [][]float64{raw}, [][]float64{x}
	z := make([]float64, T)
	sc.Queries, sc.Outcome = make([]float64, T), make([]float64, T)
	for i := range z {
		z[i] = rng.NormFloat64()
		sc.Queries[i] = 1 + 0.1*rng.NormFloat64()
		sc.Outcome[i] = 1 + 0.1*rng.NormFloat64()
	}
	sc.Controls = [][]float64{z}
	d1, _ := model.Demand(sc, o)
	d2, _ := model.Outcome(sc, o)
	draw := func(st *model.Stage) []float64 {
		v := make([]float64, len(st.Names()))
		for i, n := range st.Names() {
			switch n[0] {
			case 'l':
				v[i] = 0.2 + 0.6*rng.Float64()
			case 'K', 'S':
				v[i] = 0.5 + rng.Float64()
			default:
				v[i] = 0.05 + 0.4*rng.Float64()
			}
		}
		return v
	}
	return sc, d1, d2, draw(d1), draw(d2)
}

func param(st *model.Stage, v []float64, name string) float64 {
	for i, n := range st.Names() {
		if n == name {
			return v[i]
		}
	}
	panic("no parameter " + name)
}

// TestSplitClosedForm checks the whole-period effects against DESIGN.md's
// closed forms: NIE = mean(y) gamma alpha sum_t H(a(x)), NDE = mean(y) delta
// sum_t H(a(x); lam2, K2, S2), computed here directly from the transforms.
// For a quarter, the counterfactual zeroes spend inside the quarter only, so
// carryover into the following weeks counts and earlier weeks do not.
func TestSplitClosedForm(t *testing.T) {
	sc, st1, st2, v1, v2 := synth(t, 104, 1, model.Options{})
	in := &Inputs{Data: sc, Demand: st1, Outcome: st2,
		DemandDraws: Draws{Names: st1.Names(), Rows: [][]float64{v1}}, OutcomeDraws: Draws{Names: st2.Names(), Rows: [][]float64{v2}}}
	wins := window.Quarters(sc.Weeks)
	res, err := Split(in, wins)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]float64{}
	for _, e := range res.Effects {
		got[e.Channel+"/"+e.Path+"/"+e.Window] = e.Draws[0]
	}
	hsum := func(x []float64, lam, k, s float64) []float64 {
		a := transform.Adstock(nil, x, lam)
		for i := range a {
			a[i] = transform.Hill(a[i], k, s)
		}
		return a
	}
	gamma := param(st2, v2, "gamma")
	for c, col := range sc.UpperNames {
		h1 := hsum(sc.Upper[c], param(st1, v1, "lam["+col+"]"), param(st1, v1, "K["+col+"]"), param(st1, v1, "S["+col+"]"))
		h2 := hsum(sc.Upper[c], param(st2, v2, "lam2["+col+"]"), param(st2, v2, "K2["+col+"]"), param(st2, v2, "S2["+col+"]"))
		var s1, s2 float64
		for i := range h1 {
			s1 += h1[i]
			s2 += h2[i]
		}
		wantVia := sc.OutcomeScale * gamma * param(st1, v1, "alpha["+col+"]") * s1
		wantDir := sc.OutcomeScale * param(st2, v2, "delta["+col+"]") * s2
		for _, c := range []struct {
			key  string
			want float64
		}{{col + "/via_search/all", wantVia}, {col + "/direct/all", wantDir}, {col + "/total/all", wantVia + wantDir}, {col + "/mediated_share/all", wantVia / (wantVia + wantDir)}} {
			if !scalar.EqualWithinAbsOrRel(got[c.key], c.want, 1e-12, 1e-12) {
				t.Errorf("%s: got %v, want %v (closed form)", c.key, got[c.key], c.want)
			}
		}
		// a quarter: zero the spend inside it; weeks before it are untouched
		q := wins[3]
		cf := append([]float64(nil), sc.Upper[c]...)
		for i := q.From; i <= q.To; i++ {
			cf[i] = 0
		}
		h1cf := hsum(cf, param(st1, v1, "lam["+col+"]"), param(st1, v1, "K["+col+"]"), param(st1, v1, "S["+col+"]"))
		d := 0.0
		for i := range h1 {
			d += h1[i] - h1cf[i]
		}
		want := sc.OutcomeScale * gamma * param(st1, v1, "alpha["+col+"]") * d
		if k := col + "/via_search/" + q.Name; !scalar.EqualWithinAbsOrRel(got[k], want, 1e-12, 1e-12) {
			t.Errorf("%s: got %v, want %v", k, got[k], want)
		}
	}
}

// TestBorrowedIdentity checks the omitted-variable identity (Wooldridge,
// Introductory Econometrics, ch. 3): if the outcome were exactly the stage-2
// predictor, least squares of y~ on stage 2's regressors without q~ would
// give paid search the coefficient beta + gamma d. The split's apparent
// effect must equal mean(y) times that refitted coefficient times sum H.
// TestBorrowedIdentity checks the apparent return of paid search. With
// flat priors on the outcome stage's coefficients it is the omitted-variable
// identity: exactly what a least-squares refit without the query term
// finds (Wooldridge, Introductory Econometrics, ch. 3). With the default
// priors it is the closed-form posterior mean of that refit under their
// normal approximations, b = (XᵀX + s2 P)⁻¹(Xᵀŷ + s2 P m), s2 = σ_y² + γ²σ_q²
// (normal equations here, QR in the code).
func TestBorrowedIdentity(t *testing.T) {
	flat := model.Options{Priors: map[string]model.Prior{}}
	for _, n := range []string{"mu_y", "b_y", "cy[1]", "cy[2]", "dy[1]", "dy[2]", "phi_y[price]", "beta[search]", "delta[video]", "delta[audio]"} {
		flat.Priors[n] = model.Prior{Family: model.Flat}
	}
	for _, o := range []model.Options{flat, {}} {
		sc, st1, st2, v1, v2 := synth(t, 120, 2, o)
		// an intercept that keeps the outcome without paid search positive
		// in every week, so that no constraint of the projection binds
		v2[0] = 2
		// make the outcome exactly the stage-2 predictor at v2
		sc.Outcome = st2.Predict(nil, v2)
		in := &Inputs{Data: sc, Demand: st1, Outcome: st2,
			DemandDraws: Draws{Names: st1.Names(), Rows: [][]float64{v1}}, OutcomeDraws: Draws{Names: st2.Names(), Rows: [][]float64{v2}}}
		res, err := Split(in, window.Quarters(sc.Weeks)[:1])
		if err != nil {
			t.Fatal(err)
		}
		T := sc.T
		X := mat.NewDense(T, 10, nil)
		hs, _ := st2.Response(nil, st2.ChannelIndex("search"), v2, sc.Search[0])
		hv, _ := st2.Response(nil, st2.ChannelIndex("video"), v2, sc.Upper[0])
		ha, _ := st2.Response(nil, st2.ChannelIndex("audio"), v2, sc.Upper[1])
		y := make([]float64, T)
		for i := 0; i < T; i++ {
			X.SetRow(i, []float64{1, sc.Tau[i], sc.Season[0][i], sc.Season[1][i], sc.Season[2][i], sc.Season[3][i], sc.Controls[0][i], hs[i], hv[i], ha[i]})
			y[i] = sc.Outcome[i] // y~ itself, q~ omitted from X
		}
		var bs float64
		if o.Priors != nil {
			fit, err := ols.Solve(X, y)
			if err != nil {
				t.Fatal(err)
			}
			bs = fit.Coef[7]
		} else {
			// default priors: N(0.5, 0.5) intercept, N(0, 0.5) trend,
			// N(0, 0.25) seasons, N(0, 0.5) control, HalfNormal(0.5) -> N(0, 0.5)
			// on the channel coefficients
			m := []float64{0.5, 0, 0, 0, 0, 0, 0, 0, 0, 0}
			sd := []float64{0.5, 0.5, 0.25, 0.25, 0.25, 0.25, 0.5, 0.5, 0.5, 0.5}
			sy, sq, g := param(st2, v2, "sigma_y"), param(st1, v1, "sigma_q"), param(st2, v2, "gamma")
			s2 := sy*sy + g*g*sq*sq
			var a mat.Dense
			a.Mul(X.T(), X)
			rhs := mat.NewVecDense(10, nil)
			rhs.MulVec(X.T(), mat.NewVecDense(T, y))
			for k := range m {
				a.Set(k, k, a.At(k, k)+s2/(sd[k]*sd[k]))
				rhs.SetVec(k, rhs.AtVec(k)+s2/(sd[k]*sd[k])*m[k])
			}
			var b mat.VecDense
			if err := b.SolveVec(&a, rhs); err != nil {
				t.Fatal(err)
			}
			bs = b.AtVec(7)
		}
		sum := 0.0
		for _, v := range hs {
			sum += v
		}
		want := sc.OutcomeScale * bs * sum
		var app, ctl, share float64
		for _, e := range res.Borrowed {
			switch e.Path {
			case "apparent":
				app = e.Draws[0]
			case "controlled":
				ctl = e.Draws[0]
			case "borrowed_share":
				share = e.Draws[0]
			}
		}
		if !scalar.EqualWithinAbsOrRel(app, want, 1e-9, 1e-9) {
			t.Errorf("flat priors %v: apparent: got %v, want %v (refit without the query term)", o.Priors != nil, app, want)
		}
		if wantCtl := sc.OutcomeScale * param(st2, v2, "beta[search]") * sum; !scalar.EqualWithinAbsOrRel(ctl, wantCtl, 1e-12, 1e-12) {
			t.Errorf("controlled: got %v, want %v", ctl, wantCtl)
		}
		if !scalar.EqualWithinAbsOrRel(share, (app-ctl)/app, 1e-9, 1e-9) {
			t.Errorf("borrowed share: got %v, want %v", share, (app-ctl)/app)
		}
	}
}
