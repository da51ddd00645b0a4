package forward_test

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"gonum.org/v1/gonum/floats/scalar"

	"spillway/funnel/forward"
	"spillway/funnel/model"
)

// tiny is a hand-sized model: 10 weeks, video (saturating) and audio
// (linear) upper-funnel channels, one paid-search channel and one control.
type tiny struct {
	sc                 *model.Scaled
	demand, outcome    *model.Stage
	v1, v2             []float64
	p1, p2             map[string]float64
	video, audio, paid []float64
	mq, my             float64
	weeks              int
	tau                []float64
	season             [4][]float64
	price              []float64
	queries            []float64
}

func newTiny(t *testing.T) *tiny {
	t.Helper()
	T := 10
	k := &tiny{weeks: T, mq: 40000, my: 2500,
		video: []float64{0, 1.5, 2, 0, 0, 1, 0.5, 0, 0, 1.2},
		audio: []float64{1, 1, 0, 1, 1, 0, 1, 1, 1, 0.8},
		paid:  []float64{0.9, 1.1, 1, 0, 1.3, 0.7, 1, 1, 0.6, 1.4},
		price: []float64{0.5, -1, 0.2, 0.3, -0.4, 1.1, -0.6, 0, 0.2, -0.3},
	}
	rng := rand.New(rand.NewPCG(3, 4))
	sc := &model.Scaled{T: T, UpperNames: []string{"video", "audio"}, SearchNames: []string{"paid"}, ControlNames: []string{"price"},
		Upper: [][]float64{k.video, k.audio}, Search: [][]float64{k.paid}, Controls: [][]float64{k.price},
		QueriesScale: k.mq, OutcomeScale: k.my, Tau: make([]float64, T)}
	for i := range sc.Season {
		sc.Season[i] = make([]float64, T)
	}
	start := time.Date(2024, 1, 1, 0, 0, 0, 0, time.UTC)
	for i := 0; i < T; i++ {
		sc.Weeks = append(sc.Weeks, start.AddDate(0, 0, 7*i))
		sc.Tau[i] = float64(i) / float64(T-1)
		w := 2 * math.Pi * float64(i+1) / 52.18 // DESIGN.md: 2 pi k t / 52.18, t = 1..T
		sc.Season[0][i], sc.Season[1][i], sc.Season[2][i], sc.Season[3][i] = math.Cos(w), math.Cos(2*w), math.Sin(w), math.Sin(2*w)
		sc.Queries = append(sc.Queries, 1+0.1*rng.NormFloat64())
		sc.Outcome = append(sc.Outcome, 1+0.1*rng.NormFloat64())
	}
	k.sc, k.tau, k.season, k.queries = sc, sc.Tau, sc.Season, sc.Queries
	o := model.Options{Linear: map[string]bool{"audio": true}}
	var err error
	if k.demand, err = model.Demand(sc, o); err != nil {
		t.Fatal(err)
	}
	if k.outcome, err = model.Outcome(sc, o); err != nil {
		t.Fatal(err)
	}
	k.p1 = map[string]float64{"mu_q": 0.6, "b_q": 0.08, "cq[1]": 0.06, "cq[2]": 0.02, "dq[1]": -0.04, "dq[2]": 0.015,
		"phi_q[price]": -0.02, "alpha[video]": 0.45, "lam[video]": 0.55, "K[video]": 0.7, "S[video]": 1.5,
		"alpha[audio]": 0.2, "sigma_q": 0.04}
	k.p2 = map[string]float64{"mu_y": 0.3, "b_y": 0.05, "cy[1]": 0.05, "cy[2]": 0.01, "dy[1]": 0.03, "dy[2]": -0.01,
		"phi_y[price]": -0.06, "gamma": 0.35, "beta[paid]": 0.12, "lam_s[paid]": 0.15, "K_s[paid]": 0.9, "S_s[paid]": 1.3,
		"delta[video]": 0.18, "lam2[video]": 0.45, "K2[video]": 0.8, "S2[video]": 1.4, "delta[audio]": 0.12, "sigma_y": 0.03}
	k.v1, k.v2 = values(t, k.demand, k.p1), values(t, k.outcome, k.p2)
	return k
}

func values(t *testing.T, st *model.Stage, p map[string]float64) []float64 {
	t.Helper()
	v := make([]float64, len(st.Names()))
	for i, n := range st.Names() {
		x, ok := p[n]
		if !ok {
			t.Fatalf("no value for %s", n)
		}
		v[i] = x
	}
	if len(p) != len(v) {
		t.Fatalf("%d values for %d parameters", len(p), len(v))
	}
	return v
}

// adstock and hill are DESIGN.md's formulas written out again:
// a[1] = (1-lam) x[1], a[t] = (1-lam) x[t] + lam a[t-1]; H = a^S/(a^S+K^S).
func adstock(x []float64, lam float64) []float64 {
	a := make([]float64, len(x))
	for t := range x {
		a[t] = (1 - lam) * x[t]
		if t > 0 {
			a[t] += lam * a[t-1]
		}
	}
	return a
}

func hill(a, k, s float64) float64 {
	if a == 0 {
		return 0
	}
	return math.Pow(a, s) / (math.Pow(a, s) + math.Pow(k, s))
}

func response(x []float64, lam, k, s float64) []float64 {
	h := adstock(x, lam)
	for t := range h {
		h[t] = hill(h[t], k, s)
	}
	return h
}

// extend returns x followed by n weeks of zero spend.
func extend(x []float64, n int) []float64 {
	return append(append([]float64(nil), x...), make([]float64, n)...)
}

func near(t *testing.T, what string, got, want float64) {
	t.Helper()
	if !scalar.EqualWithinAbsOrRel(got, want, 1e-12, 1e-12) {
		t.Errorf("%s: got %.17g, want %.17g", what, got, want)
	}
}

// TestRunByHand checks every path and both stages' expected values on the
// data and on a plan that runs 6 weeks past the data's end with no spend
// there, against DESIGN.md's formulas computed here from scratch. Past the
// end the carryover of the last data week must decay geometrically:
// a[T-1+k] = lam^k a[T-1], so the via-search response is H(lam^k a[T-1]).
func TestRunByHand(t *testing.T) {
	k := newTiny(t)
	T, N := k.weeks, 6
	sim, err := forward.New(k.sc, k.demand, k.outcome)
	if err != nil {
		t.Fatal(err)
	}
	sim, err = sim.Extend(T + N)
	if err != nil {
		t.Fatal(err)
	}
	p1, p2 := k.p1, k.p2
	plan := forward.Plan{Upper: [][]float64{extend(k.video, N), extend(k.audio, N)}, Search: [][]float64{extend(k.paid, N)}}
	var run forward.Run
	sim.Run(&run, sim.Draw(k.v1, k.v2), plan, nil)

	h1 := response(plan.Upper[0], p1["lam[video]"], p1["K[video]"], p1["S[video]"])
	h2 := response(plan.Upper[0], p2["lam2[video]"], p2["K2[video]"], p2["S2[video]"])
	hs := response(plan.Search[0], p2["lam_s[paid]"], p2["K_s[paid]"], p2["S_s[paid]"])
	aLast := adstock(k.video, p1["lam[video]"])[T-1]
	for i := 0; i < T+N; i++ {
		if i >= T {
			// the closed form of the carryover past the data's end
			want := hill(math.Pow(p1["lam[video]"], float64(i-T+1))*aLast, p1["K[video]"], p1["S[video]"])
			near(t, "video response past the end (closed form)", run.Upper[0].Lift.Response[i], want)
		}
		near(t, "video lift", run.Upper[0].Lift.At(i), p1["alpha[video]"]*h1[i])
		near(t, "video via search", run.Upper[0].Via.At(i), k.my*p2["gamma"]*p1["alpha[video]"]*h1[i])
		near(t, "video direct", run.Upper[0].Direct.At(i), k.my*p2["delta[video]"]*h2[i])
		near(t, "audio (linear) via search", run.Upper[1].Via.At(i), k.my*p2["gamma"]*p1["alpha[audio]"]*plan.Upper[1][i])
		near(t, "audio (linear) direct", run.Upper[1].Direct.At(i), k.my*p2["delta[audio]"]*plan.Upper[1][i])
		near(t, "paid search controlled", run.Search[0].At(i), k.my*p2["beta[paid]"]*hs[i])

		// the baseline: trend on its line, seasons on, the control at its mean
		tau, price := float64(i)/float64(T-1), 0.0
		if i < T {
			price = k.price[i]
		}
		w := 2 * math.Pi * float64(i+1) / 52.18
		q := p1["mu_q"] + p1["b_q"]*tau + p1["cq[1]"]*math.Cos(w) + p1["cq[2]"]*math.Cos(2*w) + p1["dq[1]"]*math.Sin(w) + p1["dq[2]"]*math.Sin(2*w) +
			p1["phi_q[price]"]*price + p1["alpha[video]"]*h1[i] + p1["alpha[audio]"]*plan.Upper[1][i]
		near(t, "expected queries", run.Queries[i], q)
		y := p2["mu_y"] + p2["b_y"]*tau + p2["cy[1]"]*math.Cos(w) + p2["cy[2]"]*math.Cos(2*w) + p2["dy[1]"]*math.Sin(w) + p2["dy[2]"]*math.Sin(2*w) +
			p2["phi_y[price]"]*price + p2["gamma"]*q + p2["beta[paid]"]*hs[i] + p2["delta[video]"]*h2[i] + p2["delta[audio]"]*plan.Upper[1][i]
		near(t, "expected outcome (expected queries)", run.Outcome[i], y)
	}

	// with the observed queries, on the data as it was
	sim.Fit(&run, sim.Draw(k.v1, k.v2))
	if len(run.Outcome) != T {
		t.Fatalf("fit over %d weeks, want %d", len(run.Outcome), T)
	}
	for i := 0; i < T; i++ {
		want := p2["mu_y"] + p2["b_y"]*k.tau[i] + p2["cy[1]"]*k.season[0][i] + p2["cy[2]"]*k.season[1][i] +
			p2["dy[1]"]*k.season[2][i] + p2["dy[2]"]*k.season[3][i] + p2["phi_y[price]"]*k.price[i] + p2["gamma"]*k.queries[i] +
			p2["beta[paid]"]*hs[i] + p2["delta[video]"]*h2[i] + p2["delta[audio]"]*k.audio[i]
		near(t, "fitted outcome (observed queries)", run.Outcome[i], want)
	}
}

// TestEffectByHand checks a window's effect: zero the video spend in weeks
// 2..4; the effect through each path is its gain times the summed change of
// the response from week 2 to the end (carryover after the window counted).
func TestEffectByHand(t *testing.T) {
	k := newTiny(t)
	sim, err := forward.New(k.sc, k.demand, k.outcome)
	if err != nil {
		t.Fatal(err)
	}
	d := sim.Draw(k.v1, k.v2)
	var up, cf forward.Upper
	sim.Upper(&up, d, 0, k.video)
	x := forward.Without(nil, k.video, 2, 4)
	sim.Upper(&cf, d, 0, x)
	for i, v := range x {
		if want := k.video[i]; (i >= 2 && i <= 4 && v != 0) || ((i < 2 || i > 4) && v != want) {
			t.Fatalf("counterfactual week %d: %v", i, v)
		}
	}
	h, hcf := response(k.video, k.p1["lam[video]"], k.p1["K[video]"], k.p1["S[video]"]), response(x, k.p1["lam[video]"], k.p1["K[video]"], k.p1["S[video]"])
	h2, h2cf := response(k.video, k.p2["lam2[video]"], k.p2["K2[video]"], k.p2["S2[video]"]), response(x, k.p2["lam2[video]"], k.p2["K2[video]"], k.p2["S2[video]"])
	var via, dir float64
	for i := 2; i < k.weeks; i++ {
		via += k.my * k.p2["gamma"] * k.p1["alpha[video]"] * (h[i] - hcf[i])
		dir += k.my * k.p2["delta[video]"] * (h2[i] - h2cf[i])
	}
	near(t, "via search", forward.Effect(up.Via, cf.Via, 2), via)
	near(t, "direct", forward.Effect(up.Direct, cf.Direct, 2), dir)
	w := []float64{1, 1, 1, 1, 1, 2, 2, 2, 2, 2}
	var wvia float64
	for i := 2; i < k.weeks; i++ {
		wvia += w[i] * k.my * k.p2["gamma"] * k.p1["alpha[video]"] * (h[i] - hcf[i])
	}
	near(t, "via search, drifting", forward.EffectWeighted(up.Via, cf.Via, 2, w), wvia)

	v, dr := sim.Steady(d, 0, 1.3)
	near(t, "steady via", v, k.my*k.p2["gamma"]*k.p1["alpha[video]"]*hill(1.3, k.p1["K[video]"], k.p1["S[video]"]))
	near(t, "steady direct", dr, k.my*k.p2["delta[video]"]*hill(1.3, k.p2["K2[video]"], k.p2["S2[video]"]))
	v, dr = sim.Steady(d, 1, 1.3)
	near(t, "steady via (linear)", v, k.my*k.p2["gamma"]*k.p1["alpha[audio]"]*1.3)
	near(t, "steady direct (linear)", dr, k.my*k.p2["delta[audio]"]*1.3)
}

// TestFitIsPredict holds the fitted values to the stage's own linear
// predictor bit for bit: the tables written from them must not move.
func TestFitIsPredict(t *testing.T) {
	k := newTiny(t)
	sim, err := forward.New(k.sc, k.demand, k.outcome)
	if err != nil {
		t.Fatal(err)
	}
	var run forward.Run
	sim.Fit(&run, sim.Draw(k.v1, k.v2))
	m, n := k.demand.Predict(nil, k.v1), k.outcome.Predict(nil, k.v2)
	for i := range m {
		if run.Queries[i] != m[i] || run.Outcome[i] != n[i] {
			t.Errorf("week %d: fit %v %v, Predict %v %v", i, run.Queries[i], run.Outcome[i], m[i], n[i])
		}
	}
}

// TestRunAllocates checks that a run into a grown buffer allocates nothing.
func TestRunAllocates(t *testing.T) {
	k := newTiny(t)
	sim, err := forward.New(k.sc, k.demand, k.outcome)
	if err != nil {
		t.Fatal(err)
	}
	d := sim.Draw(k.v1, k.v2)
	var run forward.Run
	sim.Fit(&run, d)
	if a := testing.AllocsPerRun(20, func() { sim.Fit(&run, d) }); a != 0 {
		t.Errorf("%v allocations per run", a)
	}
}

// TestPlanTooLong checks that a plan past the weeks a simulator covers is
// refused rather than run on made-up regressors.
func TestPlanTooLong(t *testing.T) {
	k := newTiny(t)
	sim, _ := forward.New(k.sc, k.demand, k.outcome)
	defer func() {
		if recover() == nil {
			t.Error("a plan past the covered weeks must panic")
		}
	}()
	var run forward.Run
	plan := forward.Plan{Upper: [][]float64{extend(k.video, 1), extend(k.audio, 1)}, Search: [][]float64{extend(k.paid, 1)}}
	sim.Run(&run, sim.Draw(k.v1, k.v2), plan, nil)
}

// TestDrift checks the simulator on stages whose coefficients drift and
// whose baseline moves: the fitted values equal each stage's own Predict,
// and a path's effect counts week t's response difference exp(f(t)) times,
// by the stage's multiplier (model Params.Multiplier).
func TestDrift(t *testing.T) {
	k := newTiny(t)
	o := model.Options{Linear: map[string]bool{"audio": true}, Drift: map[string]bool{"video": true, "paid": true}, Baseline: model.BaselineSmooth}
	dem, err := model.Demand(k.sc, o)
	if err != nil {
		t.Fatal(err)
	}
	out, err := model.Outcome(k.sc, o)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(5, 6))
	draw := func(st *model.Stage) []float64 {
		tg, err := st.Target()
		if err != nil {
			t.Fatal(err)
		}
		x := make([]float64, tg.Dim())
		for i := range x {
			x[i] = rng.Float64() - 0.5
		}
		return tg.Constrain(nil, x)
	}
	v1, v2 := draw(dem), draw(out)
	sim, err := forward.New(k.sc, dem, out)
	if err != nil {
		t.Fatal(err)
	}
	d := sim.Draw(v1, v2)
	var run forward.Run
	sim.Fit(&run, d)
	want1, want2 := dem.Predict(nil, v1), out.Predict(nil, v2)
	for i := range want1 {
		near(t, "fitted queries", run.Queries[i], want1[i])
		near(t, "fitted outcome", run.Outcome[i], want2[i])
	}
	const from = 3
	var up, cf forward.Upper
	sim.Upper(&up, d, 0, k.video)
	cfx := forward.Without(nil, k.video, from, 5)
	sim.Upper(&cf, d, 0, cfx)
	j1, j2 := dem.ChannelIndex("video"), out.ChannelIndex("video")
	h1, alpha := dem.Response(nil, j1, v1, k.video)
	c1, _ := dem.Response(nil, j1, v1, cfx)
	h2, delta := out.Response(nil, j2, v2, k.video)
	c2, _ := out.Response(nil, j2, v2, cfx)
	m1 := d.Demand.Multiplier(make([]float64, k.weeks), j1)
	m2 := d.Outcome.Multiplier(make([]float64, k.weeks), j2)
	var via, dir float64
	for w := from; w < k.weeks; w++ {
		via += m1[w] * (h1[w] - c1[w])
		dir += m2[w] * (h2[w] - c2[w])
	}
	near(t, "via search, drifting", forward.Effect(up.Via, cf.Via, from), k.sc.OutcomeScale*d.Outcome.Gamma()*alpha*via)
	near(t, "direct, drifting", forward.Effect(up.Direct, cf.Direct, from), k.sc.OutcomeScale*delta*dir)
	if m1[0] == m1[1] || m2[0] == m2[1] {
		t.Errorf("the multipliers do not move: %v %v", m1, m2)
	}
}
