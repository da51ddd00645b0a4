package model

import (
	"math"
	"testing"
	"time"

	"spillway/funnel/data"

	"spillway/funnel/mcmc/mcmctest"
	"spillway/funnel/transform"
)

// TestMeasuredTerm checks a channel whose exposure has a measurement break,
// latent errors, both, a frequency curve (reach and frequency), or all, in
// natural coordinates: the gradient in lam, K, S, the log factor, the
// latent errors and the frequency curve's Kf and Sf against central finite
// differences of the forward pass, centred and not, with no allocation per
// evaluation.
func TestMeasuredTerm(t *testing.T) {
	sc := testScaled(60, 2)
	c := randomWeights(60, 5)
	var weeks []int
	for w, x := range sc.Upper[0] {
		if x > 0 && len(weeks) < 12 {
			weeks = append(weeks, w)
		}
	}
	freq := make([]float64, 60)
	for w := range freq {
		freq[w] = 1 + 3*math.Abs(math.Sin(float64(w)/5))
	}
	for _, kind := range []string{"break", "error", "both", "frequency", "all"} {
		for _, centred := range []bool{false, true} {
			ch := Channel{Column: "video", X: sc.Upper[0], Params: mediaParams("video", "alpha", "lam", "K", "S", false)}
			par := []param{{name: "mu", free: 0}, {name: "alpha", sup: PositiveReal, free: -1},
				{name: "lam", sup: UnitInterval, free: 1}, {name: "K", sup: PositiveReal, free: 2}, {name: "S", sup: PositiveReal, free: 3}}
			k := []int{1, 2, 3, 4}
			base, scale := []float64{0.3, 0.5, 1, 2}, []float64{0.2, 0.4, 0.5, 1}
			kb, sd, zk, ws := -1, 0.0, -1, []int(nil)
			if kind == "break" || kind == "both" || kind == "all" {
				kb = len(par)
				par = append(par, param{name: "log_break", sup: Real, free: len(k)})
				k, base, scale = append(k, kb), append(base, 0.1), append(scale, 0.6)
			}
			if kind == "error" || kind == "both" || kind == "all" {
				sd, zk, ws = 0.2, len(par), weeks
				for i := range ws {
					par = append(par, param{name: "z", sup: Real, free: len(k)})
					k, base, scale = append(k, zk+i), append(base, 0.1*float64(i%3)), append(scale, 1)
				}
			}
			fk, fr := -1, []float64(nil)
			if kind == "frequency" || kind == "all" {
				fk, fr = len(par), freq
				par = append(par, param{name: "Kf", sup: PositiveReal, free: len(k)}, param{name: "Sf", sup: PositiveReal, free: len(k) + 1})
				k, base, scale = append(k, fk, fk+1), append(base, 2, 1.5), append(scale, 0.8, 0.7)
			}
			term := newMeasuredTerm(newChannelTerm(&ch, k[:4], par, false, centred), 25, kb, sd, zk, ws, fk, fr)
			f := predictorFunc(t, term, len(par), k, base, scale, c, -0.4)
			mcmctest.CheckGradient(t, f, 1e-6, termGrad)
			mcmctest.CheckNoAlloc(t, f, make([]float64, len(k)))
		}
	}
}

// TestBreakTarget checks a stage whose channel has a break and latent
// errors in the sampling coordinates (rescaled coefficient, centred
// intercept, the priors of the log factor and the errors), and that
// Constrain and Unconstrain invert each other.
func TestBreakTarget(t *testing.T) {
	sc := testScaled(60, 3)
	sc.RawExposure = [][]float64{sc.Upper[0], nil}
	sc.Breaks = []int{30, 0}
	sc.Errors = []float64{0.15, 0}
	st, err := Demand(sc, Options{})
	if err != nil {
		t.Fatal(err)
	}
	names := st.Names()
	l := st.Layout()
	cs, _ := l.Channel("video")
	if names[cs.Break] != "log_break_alpha[video]" || cs.ErrZ != cs.Break+1 || len(names) != cs.ErrZ+len(cs.ErrWeeks) {
		t.Fatalf("the break's factor at %d (%s), the errors from %d: want them last", cs.Break, names[cs.Break], cs.ErrZ)
	}
	if want := errorName("alpha", "video", cs.ErrWeeks[0]); names[cs.ErrZ] != want {
		t.Fatalf("first latent error %s, want %s", names[cs.ErrZ], want)
	}
	tg, err := st.Target()
	if err != nil {
		t.Fatal(err)
	}
	mcmctest.CheckGradient(t, tg, 1e-6, termGrad)
	mcmctest.CheckNoAlloc(t, tg, make([]float64, tg.Dim()))
	x := randomWeights(tg.Dim(), 9)
	for i := range x {
		x[i] *= 0.3
	}
	v := tg.Constrain(nil, x)
	back := tg.Unconstrain(nil, v)
	for i := range x {
		if math.Abs(back[i]-x[i]) > 1e-9 {
			t.Fatalf("coordinate %d: unconstrain(constrain(x)) = %v, x = %v", i, back[i], x[i])
		}
	}
}

// TestBreakPredict checks that the stage's linear predictor with a break
// is the default one run on the exposure with the weeks before the break
// multiplied by the factor (computed here by hand), and that the layout's
// Media gives the same response.
func TestBreakPredict(t *testing.T) {
	sc := testScaled(52, 4)
	sc.RawExposure = [][]float64{sc.Upper[0], nil}
	sc.Breaks = []int{20, 0}
	st, err := Demand(sc, Options{})
	if err != nil {
		t.Fatal(err)
	}
	l := st.Layout()
	cs, _ := l.Channel("video")
	v := make([]float64, l.Len())
	for i := range v {
		v[i] = 0.5
	}
	v[cs.Break] = math.Log(1.7)
	got := st.Predict(nil, v)
	// by hand: 0.5 + regressors + channels, video on the old weeks times 1.7
	x := append([]float64(nil), sc.Upper[0]...)
	for i := 0; i < 20; i++ {
		x[i] *= 1.7
	}
	a := transform.Adstock(nil, x, 0.5)
	noBreak := st.Channels[0]
	noBreak.Break = nil
	plain := *st
	plain.Channels = []Channel{noBreak, st.Channels[1]}
	vp := v[:len(v)-1]
	base := plain.Predict(nil, vp)
	h0 := Media{Lam: 0.5, K: 0.5, S: 0.5}.Response(nil, sc.Upper[0])
	for i := range got {
		want := base[i] + 0.5*(transform.Hill(a[i], 0.5, 0.5)-h0[i])
		if math.Abs(got[i]-want) > 1e-12 {
			t.Fatalf("week %d: predictor %v, want %v", i, got[i], want)
		}
	}
	m := l.View(v).ChannelAt(0)
	if m.Before != 20 || math.Abs(m.Factor-1.7) > 1e-12 {
		t.Fatalf("media break %d x %v, want 20 x 1.7", m.Before, m.Factor)
	}
	// Carry then ResponseFrom continue Response bit for bit
	full := m.Response(nil, append(append([]float64(nil), sc.Upper[0]...), 0.4, 0.9))
	tail := m.ResponseFrom(nil, []float64{0.4, 0.9}, m.Carry(sc.Upper[0], 0))
	if full[52] != tail[0] || full[53] != tail[1] {
		t.Fatalf("ResponseFrom after Carry %v, Response %v", tail, full[52:])
	}
}

// TestBreakChoices checks that a break on a drifting or a linear channel is
// refused, and that the default stages have no break parameter.
func TestBreakChoices(t *testing.T) {
	sc := testScaled(52, 5)
	st, _ := Demand(sc, Options{})
	for _, n := range st.Names() {
		if len(n) > 9 && n[:9] == "log_break" {
			t.Fatalf("default stage has %s", n)
		}
	}
	sc.RawExposure = [][]float64{sc.Upper[0], nil}
	sc.Breaks = []int{20, 0}
	for _, o := range []Options{{Drift: map[string]bool{"video": true}}, {Linear: map[string]bool{"video": true}}} {
		if _, err := Demand(sc, o); err == nil {
			t.Errorf("%+v: no error for a break on that channel", o)
		}
		if _, err := Outcome(sc, o); err == nil {
			t.Errorf("%+v: no error for a break on that channel (outcome)", o)
		}
	}
}

// TestErrorResponse checks that the layout's Media of a channel with latent
// errors runs on x[t] exp(-sd z[t]) (computed here by hand) in the weeks
// with exposure, that Predict uses the same response, and that past the
// data's weeks the exposure is taken as given.
func TestErrorResponse(t *testing.T) {
	sc := testScaled(52, 6)
	sc.RawExposure = [][]float64{sc.Upper[0], nil}
	sc.Errors = []float64{0.3, 0}
	st, err := Demand(sc, Options{})
	if err != nil {
		t.Fatal(err)
	}
	l := st.Layout()
	v := make([]float64, l.Len())
	for i := range v {
		v[i] = 0.5
	}
	cs, _ := l.Channel("video")
	for i := range cs.ErrWeeks {
		v[cs.ErrZ+i] = math.Sin(float64(i))
	}
	x := append(append([]float64(nil), sc.Upper[0]...), 0.7)
	want := append([]float64(nil), x...)
	for i, w := range cs.ErrWeeks {
		want[w] *= math.Exp(-0.3 * math.Sin(float64(i)))
	}
	a := transform.Adstock(nil, want, 0.5)
	m := l.View(v).ChannelAt(0)
	got := m.Response(nil, x)
	for i := range got {
		if h := transform.Hill(a[i], 0.5, 0.5); math.Abs(got[i]-h) > 1e-12 {
			t.Fatalf("week %d: response %v, want %v", i, got[i], h)
		}
	}
	n := st.Predict(nil, v)
	v2 := append([]float64(nil), v...)
	v2[cs.Coef] = 0 // without video
	n0 := st.Predict(nil, v2)
	for i := range n {
		if d := n[i] - n0[i]; math.Abs(d-0.5*got[i]) > 1e-12 {
			t.Fatalf("week %d: video adds %v to the predictor, want %v", i, d, 0.5*got[i])
		}
	}
}

// TestFrequencyTarget checks a stage with a channel given as reach and
// frequency in the sampling coordinates, its parameter names and layout,
// and that the layout's Media runs on reach times g(frequency), computed
// here by hand, with the frequency after the data past its weeks; and that
// a steady week's response is H(x g(FreqAfter)).
func TestFrequencyTarget(t *testing.T) {
	sc := testScaled(52, 7)
	sc.RawExposure = [][]float64{sc.Upper[0], nil}
	f := make([]float64, 52)
	for w := range f {
		f[w] = 1.2 + float64(w%6)
	}
	sc.Freq, sc.FreqRecent = [][]float64{f, nil}, []float64{3.5, 0}
	st, err := Demand(sc, Options{})
	if err != nil {
		t.Fatal(err)
	}
	tg, err := st.Target()
	if err != nil {
		t.Fatal(err)
	}
	// 1e-5: the whole stage's log density is large at these points, and
	// central differences lose about 1e-6 of it to rounding
	mcmctest.CheckGradient(t, tg, 1e-5, termGrad)
	mcmctest.CheckNoAlloc(t, tg, make([]float64, tg.Dim()))
	l := st.Layout()
	cs, _ := l.Channel("video")
	names := l.Names()
	if names[cs.FreqK] != "Kfreq_alpha[video]" || names[cs.FreqK+1] != "Sfreq_alpha[video]" || cs.FreqK+2 != len(names) {
		t.Fatalf("frequency curve at %d: %v", cs.FreqK, names[cs.FreqK:])
	}
	v := make([]float64, l.Len())
	for i := range v {
		v[i] = 0.5
	}
	v[cs.FreqK], v[cs.FreqK+1] = 2.5, 1.8
	gain := func(f float64) float64 { return math.Pow(f, 1.8) / (math.Pow(f, 1.8) + math.Pow(2.5, 1.8)) }
	x := append(append([]float64(nil), sc.Upper[0]...), 0.8, 1.1)
	want := make([]float64, len(x))
	for w := range x {
		fw := 3.5
		if w < 52 {
			fw = f[w]
		}
		want[w] = x[w] * gain(fw)
	}
	a := transform.Adstock(nil, want, 0.5)
	m := l.View(v).ChannelAt(0)
	got := m.Response(nil, x)
	for w := range got {
		if h := transform.Hill(a[w], 0.5, 0.5); math.Abs(got[w]-h) > 1e-12 {
			t.Fatalf("week %d: response %v, want %v", w, got[w], h)
		}
	}
	tail := m.ResponseFrom(nil, x[52:], m.Carry(x[:52], 0))
	if tail[0] != got[52] || tail[1] != got[53] {
		t.Fatalf("ResponseFrom after Carry %v, Response %v", tail, got[52:])
	}
	if s, want := m.Steady(0.9), transform.Hill(0.9*gain(3.5), 0.5, 0.5); math.Abs(s-want) > 1e-12 {
		t.Fatalf("steady response %v, want %v", s, want)
	}
}

// TestCostPerUnit checks the one rule by which spend becomes exposure: with
// a cost per unit of 10 in weeks 0-39 and 13 from week 40 on (exposure 0
// in the weeks without spend), UpperScale is the spend per scaled unit at
// 13 (the latest 13 weeks with spend), CostPerUnit over weeks 0-39 at 10,
// and with a break at week 40 any window is priced from the break on; a
// channel run on spend keeps its divisor.
func TestCostPerUnit(t *testing.T) {
	const T = 60
	weeks := make([]time.Time, T)
	spend, exp, other := make([]float64, T), make([]float64, T), make([]float64, T)
	for w := range T {
		weeks[w] = time.Date(2024, 1, 1, 0, 0, 0, 0, time.UTC).AddDate(0, 0, 7*w)
		other[w] = 50 + float64(w%7)
		if w%5 == 3 {
			continue // no spend, no exposure
		}
		spend[w] = 1000 + 100*float64(w%4)
		cpu := 10.0
		if w >= 40 {
			cpu = 13
		}
		exp[w] = spend[w] / cpu
	}
	s := data.Series{Weeks: weeks, Upper: [][]float64{spend, other}, Search: [][]float64{other},
		Queries: other, Outcome: other, Exposure: [][]float64{exp, nil}}
	spec := data.Spec{Date: "week", Upper: []string{"video", "audio"}, Search: []string{"search"}, Queries: "q", Outcome: "y",
		Exposure: []data.Exposure{{Spend: "video", Column: "video_imp"}}}
	sc := Scale(s, spec)
	d := sc.ExposureScale[0] // raw exposure per scaled unit
	for _, c := range []struct {
		name     string
		got, cpu float64
	}{
		{"UpperScale (latest 13 weeks)", sc.UpperScale[0], 13},
		{"weeks 0-39", sc.CostPerUnit(0, 0, 39), 10},
		{"weeks 40-59", sc.CostPerUnit(0, 40, 59), 13},
	} {
		if want := c.cpu * d; math.Abs(c.got-want) > 1e-9*want {
			t.Errorf("%s: %v per scaled unit, want %v (cost per unit %v)", c.name, c.got, want, c.cpu)
		}
	}
	if sc.UpperScale[1] != SpendScale(other) || sc.CostPerUnit(1, 0, 10) != sc.UpperScale[1] {
		t.Errorf("a spend channel's divisor changed: %v", sc.UpperScale[1])
	}
	spec.Exposure[0].Break = weeks[40].Format(data.DateLayout)
	sc = Scale(s, spec)
	if got, want := sc.CostPerUnit(0, 0, 39), 13*d; math.Abs(got-want) > 1e-9*want {
		t.Errorf("with a break at week 40, weeks 0-39 are priced at %v, want the new measurement's %v", got, want)
	}
}

// BenchmarkMeasuredLogProbGrad is BenchmarkLogProbGrad's outcome stage with
// video measured in every way at once (a break, a latent error every week
// with exposure, reach and frequency): the cost of the measured-exposure
// term against the default stage.
func BenchmarkMeasuredLogProbGrad(b *testing.B) {
	sc := testScaled(156, 3)
	sc.RawExposure = [][]float64{sc.Upper[0], nil}
	sc.Breaks, sc.Errors = []int{80, 0}, []float64{0.15, 0}
	f := make([]float64, 156)
	for w := range f {
		f[w] = 1.5 + float64(w%4)
	}
	sc.Freq, sc.FreqRecent = [][]float64{f, nil}, []float64{3, 0}
	st, err := Outcome(sc, Options{})
	if err != nil {
		b.Fatal(err)
	}
	tg, err := st.Target()
	if err != nil {
		b.Fatal(err)
	}
	x := mcmctest.Ramp(tg.Dim())
	g := make([]float64, tg.Dim())
	b.ReportAllocs()
	for b.Loop() {
		tg.LogProbGrad(g, x)
	}
}
