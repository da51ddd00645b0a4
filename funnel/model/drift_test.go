package model

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"spillway/funnel/mcmc/mcmctest"
)

var driftCases = []struct {
	name string
	o    Options
}{
	{"drift video and search", Options{Drift: map[string]bool{"video": true, "search": true}}},
	{"drift linear video", Options{Linear: map[string]bool{"video": true}, Drift: map[string]bool{"video": true, "audio": true}}},
	{"smooth baseline", Options{Baseline: BaselineSmooth}},
	{"drift and baseline, plain", Options{Plain: true, Baseline: BaselineSmooth, Drift: map[string]bool{"audio": true}}},
	{"drift, real coefficient", Options{Drift: map[string]bool{"video": true}, Priors: map[string]Prior{"alpha[video]": {Normal, 0, 1}, "drift_len_alpha[video]": {Fixed, 20, 0}}}},
	{"jumps video and search", Options{Drift: map[string]bool{"video": true, "search": true}, DriftShape: DriftJumps}},
	{"jumps linear audio, baseline", Options{Linear: map[string]bool{"audio": true}, Drift: map[string]bool{"audio": true}, DriftShape: DriftJumps, Baseline: BaselineSmooth}},
}

// TestBasis checks the smooth function's basis: M from the rule
// M = ceil(1.75 L / MinLength) (Riutort-Mayol et al. 2023), the mean of each
// basis function zero over the fitted weeks, and the covariance of f under
// the prior z ~ N(0, 1) against the squared-exponential kernel
// sd^2 exp(-d^2 / (2 ell^2)) it approximates, for length-scales inside the
// range the basis is sized for (before the means are removed; the removal
// is a fixed linear map of f).
func TestBasis(t *testing.T) {
	b := NewBasis(156, nil)
	if b.M != 11 || b.L != 1.5*77.5 {
		t.Errorf("156 weeks: M %d, L %v; want 11 and 116.25", b.M, b.L)
	}
	if b := NewBasis(52, nil); b.M != 4 {
		t.Errorf("52 weeks: M %d, want 4", b.M)
	}
	mask := make([]bool, 120)
	for i := 100; i < 120; i++ {
		mask[i] = true
	}
	bm := NewBasis(120, mask)
	for j := 0; j < bm.M; j++ {
		s := 0.0
		for i := 0; i < 100; i++ {
			s += bm.phi[i*bm.M+j]
		}
		if math.Abs(s) > 1e-12 {
			t.Errorf("basis function %d sums to %v over the fitted weeks", j+1, s)
		}
	}
	// the approximate covariance, from the raw basis (no mean removed)
	const sd = 0.7
	for _, ell := range []float64{MinLength, 25, 30} {
		s := make([]float64, b.M)
		b.scales(s, nil, sd, ell)
		worst := 0.0
		for _, p := range [][2]int{{0, 0}, {0, 10}, {40, 50}, {70, 80}, {70, 100}, {150, 155}, {20, 60}, {77, 77}} {
			phi := func(t, j int) float64 {
				return math.Sin(b.sqrtLam[j]*(float64(t)-77.5+b.L)) / math.Sqrt(b.L)
			}
			c := 0.0
			for j := range s {
				c += s[j] * s[j] * phi(p[0], j) * phi(p[1], j)
			}
			d := float64(p[0] - p[1])
			want := sd * sd * math.Exp(-d*d/(2*ell*ell))
			worst = math.Max(worst, math.Abs(c-want)/(sd*sd))
		}
		t.Logf("length-scale %v weeks: worst covariance error %.3g of sd^2", ell, worst)
		if worst > 0.05 {
			t.Errorf("length-scale %v weeks: covariance off by %.3g of sd^2", ell, worst)
		}
	}
}

// TestPriorLength checks the stated quantiles of the length-scale prior
// InvGamma(6, 260): 1/ell ~ Gamma(shape 6, rate 260) (gonum distuv).
func TestPriorLength(t *testing.T) {
	g := distuv.Gamma{Alpha: PriorLength.P1, Beta: PriorLength.P2}
	for _, c := range []struct{ p, want float64 }{{0.01, 19.8}, {0.5, 45.9}, {0.99, 145.6}} {
		if q := 1 / g.Quantile(1-c.p); math.Abs(q-c.want) > 0.1 {
			t.Errorf("%g quantile of the length-scale prior: %.2f weeks, want about %v", c.p, q, c.want)
		}
	}
}

// TestSmoothTerms checks the drifting channel and the moving baseline on
// their own, in natural values (saturating and linear, centred and not),
// against central differences, with no allocation.
func TestSmoothTerms(t *testing.T) {
	const T = 60
	sc := testScaled(T, 12)
	c := randomWeights(T, 12)
	b := NewBasis(T, nil)
	M := b.M
	for _, linear := range []bool{false, true} {
		for _, centred := range []bool{false, true} {
			ch := Channel{Column: "video", X: sc.Upper[0], Linear: linear, Params: mediaParams("video", "alpha", "lam", "K", "S", linear)}
			par := []param{{name: "mu", free: 0}, {name: "alpha", sup: PositiveReal, free: -1},
				{name: "lam", sup: UnitInterval, free: 1}, {name: "K", sup: PositiveReal, free: 2}, {name: "S", sup: PositiveReal, free: 3}}
			k := []int{1, 2, 3, 4}
			base, scale := []float64{0.3, 0.5, 1, 2}, []float64{0.2, 0.4, 0.5, 1}
			if linear {
				par, k, base, scale = par[:2], k[:1], base[:1], scale[:1]
			}
			np := len(par)
			// sd, ell, the weights
			sm := newSmoothEval(b, np, np+1, np+2)
			k = append(k, np, np+1)
			base, scale = append(base, 0.4, 25), append(scale, 0.2, 10)
			for j := 0; j < M; j++ {
				k = append(k, np+2+j)
				base, scale = append(base, 0), append(scale, 1)
			}
			term := newDriftTerm(newChannelTerm(&ch, k[:len(k)-M-2], par, false, centred), sm)
			f := predictorFunc(t, term, np+2+M, k, base, scale, c, -0.4)
			mcmctest.CheckGradient(t, f, 1e-6, termGrad)
			mcmctest.CheckNoAlloc(t, f, make([]float64, len(k)))
		}
	}
	for _, centred := range []bool{false, true} {
		term := newBaselineTerm(newSmoothEval(b, 1, 2, 3), centred)
		k, base, scale := []int{1, 2}, []float64{0.3, 25}, []float64{0.2, 10}
		for j := 0; j < M; j++ {
			k, base, scale = append(k, 3+j), append(base, 0), append(scale, 1)
		}
		f := predictorFunc(t, term, 3+M, k, base, scale, c, 0.6)
		mcmctest.CheckGradient(t, f, 1e-6, termGrad)
		mcmctest.CheckNoAlloc(t, f, make([]float64, len(k)))
	}
}

// TestSmoothStages checks whole stages with drifting channels and a moving
// baseline: the gradient against central differences, no allocation, that
// Predict at the constrained values gives the target's own linear
// predictor, that Constrain and Unconstrain are inverse, and that the
// layout finds every drift by meaning.
func TestSmoothStages(t *testing.T) {
	sc := testScaled(70, 13)
	masked := testScaled(70, 13)
	masked.Mask = make([]bool, 70)
	for i := 58; i < 66; i++ {
		masked.Mask[i] = true
	}
	rng := rand.New(rand.NewPCG(13, 13))
	for _, oc := range driftCases {
		for _, data := range []*Scaled{sc, masked} {
			for _, st := range stages(t, data, oc.o) {
				tg, err := st.Target()
				if err != nil {
					t.Fatalf("%s %s: %v", oc.name, st.Name, err)
				}
				// step 1e-5: central differences at 1e-6 lose eps |lp| / h,
				// about 1e-6 at these stages' densities, to rounding. With
				// jumps radius 0.6: the jump weights are sinh of their
				// coordinates (HeavyReal), and at random points of radius 1
				// they make multipliers of e^several and gradients in the
				// thousands, whose central differences lose 2e-6 to 5e-6
				// (scaled) to truncation and rounding at every step from
				// 1e-4 to 1e-5; at radius 0.6 the weights' cosh is at most
				// 1.19, so a missing factor of it would still show
				radius := 1.0
				if oc.o.DriftShape == DriftJumps {
					radius = 0.6
				}
				mcmctest.CheckGradient(t, tg, 1e-6, &mcmctest.GradSettings{Seed: 4, Points: 4, Radius: radius, Step: 1e-5})
				mcmctest.CheckNoAlloc(t, tg, make([]float64, tg.Dim()))
				x := make([]float64, tg.Dim())
				for i := range x {
					x[i] = rng.Float64()*2 - 1
				}
				tg.LogProb(x)
				v := tg.Constrain(nil, x)
				n := st.Predict(nil, v)
				for i := range n {
					if math.Abs(n[i]-tg.n[i]) > 1e-12 {
						t.Fatalf("%s %s week %d: Predict %v, the target's linear predictor %v", oc.name, st.Name, i, n[i], tg.n[i])
					}
				}
				back := tg.Constrain(nil, tg.Unconstrain(nil, v))
				for i := range v {
					if math.Abs(back[i]-v[i]) > 1e-9*math.Max(1, math.Abs(v[i])) {
						t.Fatalf("%s %s: Constrain(Unconstrain(v)) %s = %v, want %v", oc.name, st.Name, st.Names()[i], back[i], v[i])
					}
				}
				checkSmoothLayout(t, st, v)
			}
		}
	}
}

func checkSmoothLayout(t *testing.T, st *Stage, v []float64) {
	t.Helper()
	l := st.Layout()
	names := st.Names()
	p := l.View(v)
	seen := 0
	for j, c := range st.Channels {
		d := l.Channels()[j].Drift
		m := p.Multiplier(make([]float64, len(c.X)+3), j)
		if c.Drift == nil {
			if d.Has() || m[0] != 1 || m[len(m)-1] != 1 {
				t.Errorf("%s %s: no drift, slots %+v multiplier %v", st.Name, c.Column, d, m[0])
			}
			continue
		}
		seen++
		fam, _ := splitCoef(names[l.Channels()[j].Coef])
		if J := c.Drift.Basis.J(); J > 0 && (d.Jump < 0 || names[d.Jump] != "drift_jump_sd_"+fam+"["+c.Column+"]" ||
			names[d.Jump+J] != fmt.Sprintf("drift_jump_%s[%s,%d]", fam, c.Column, J)) {
			t.Errorf("%s %s: jump slots %+v", st.Name, c.Column, d)
		}
		if names[d.SD] != "drift_sd_"+fam+"["+c.Column+"]" || names[d.Len] != "drift_len_"+fam+"["+c.Column+"]" ||
			names[d.Z] != "drift_z_"+fam+"["+c.Column+",1]" {
			t.Errorf("%s %s: drift slots %s %s %s", st.Name, c.Column, names[d.SD], names[d.Len], names[d.Z])
		}
		f := c.Drift.Eval(nil, v[d.SD:])
		s := 0.0
		n := 0
		for i := range f {
			if math.Abs(m[i]-math.Exp(f[i])) > 1e-12 {
				t.Fatalf("%s %s week %d: multiplier %v, exp(f) %v", st.Name, c.Column, i, m[i], math.Exp(f[i]))
			}
			if st.Mask == nil || !st.Mask[i] {
				s += f[i]
				n++
			}
		}
		if math.Abs(s/float64(n)) > 1e-12 {
			t.Errorf("%s %s: log multiplier averages %v over the fitted weeks", st.Name, c.Column, s/float64(n))
		}
		if last := m[len(c.X)-1]; m[len(m)-1] != last {
			t.Errorf("%s %s: past the data the multiplier is %v, want the last week's %v", st.Name, c.Column, m[len(m)-1], last)
		}
	}
	bl := 0
	for _, blk := range l.Blocks() {
		if blk.Len > 1 {
			if strings.HasPrefix(names[blk.Start], "drift_jump_") {
				if blk.Len != NewJumpBasis(len(st.Y), nil).J() {
					t.Errorf("%s: jump block %+v", st.Name, blk)
				}
				continue
			}
			bl++
			if !strings.Contains(names[blk.Start], "_z_") || blk.Len != NewBasis(len(st.Y), nil).M {
				t.Errorf("%s: block %+v", st.Name, blk)
			}
		}
	}
	if st.Baseline != nil {
		seen++
		if !l.Baseline().Has() || names[l.Baseline().SD] != "base_sd_"+strings.TrimPrefix(st.Sigma, "sigma_") {
			t.Errorf("%s: baseline slots %+v", st.Name, l.Baseline())
		}
		T := len(st.Y)
		got, want := p.Baseline(make([]float64, T+2)), st.Baseline.Eval(nil, v[l.Baseline().SD:])
		for i := range got {
			if w := want[min(i, T-1)]; math.Abs(got[i]-w) > 1e-12 {
				t.Fatalf("%s week %d: baseline %v, want %v", st.Name, i, got[i], w)
			}
		}
		if slices.Contains(names, "b_q") || slices.Contains(names, "b_y") {
			t.Errorf("%s: a moving baseline replaces the trend line; names %v", st.Name, names)
		}
	} else if p.Baseline(make([]float64, 3)) != nil {
		t.Errorf("%s: no baseline, but Params.Baseline is not nil", st.Name)
	}
	if bl != seen {
		t.Errorf("%s: %d weight blocks for %d smooth functions", st.Name, bl, seen)
	}
}

// splitCoef splits "alpha[video]" into "alpha" and "video".
func splitCoef(name string) (string, string) {
	i := strings.IndexByte(name, '[')
	return name[:i], name[i+1 : len(name)-1]
}

// BenchmarkDriftLogProbGrad times the outcome stage's gradient (156 weeks,
// three saturating channels) with every channel drifting, against
// BenchmarkLogProbGrad, the same stage without drift: run both in one go
// (-bench LogProbGrad) and compare.
func BenchmarkDriftLogProbGrad(b *testing.B) {
	sc := testScaled(156, 3)
	st, _ := Outcome(sc, Options{Drift: map[string]bool{"video": true, "audio": true, "search": true}})
	tg, _ := st.Target()
	x := mcmctest.Ramp(tg.Dim())
	g := make([]float64, tg.Dim())
	b.ReportAllocs()
	for b.Loop() {
		tg.LogProbGrad(g, x)
	}
}

// TestSmoothPriorDrawAndLogLik checks that a prior draw of a stage with
// drifting channels and a moving baseline covers every parameter (the
// smooths' from their priors: sd and length-scale positive, invgamma's
// median about right), and that LogLik reads sigma by meaning (it is not
// the last value of such a draw).
func TestSmoothPriorDrawAndLogLik(t *testing.T) {
	sc := testScaled(60, 15)
	st, _ := Outcome(sc, Options{Drift: map[string]bool{"video": true}, Baseline: BaselineSmooth})
	rng := rand.New(rand.NewPCG(15, 15))
	l := st.Layout()
	d := l.Channels()[st.ChannelIndex("video")].Drift
	var lens []float64
	for range 2000 {
		v, err := st.PriorDraw(nil, rng)
		if err != nil {
			t.Fatal(err)
		}
		if len(v) != len(st.Names()) || !(v[d.SD] > 0) || !(v[d.Len] > 0) || !(v[l.Baseline().Len] > 0) {
			t.Fatalf("prior draw %v", v)
		}
		lens = append(lens, v[d.Len])
	}
	slices.Sort(lens)
	if m := lens[len(lens)/2]; math.Abs(m-45.9) > 3 {
		t.Errorf("median prior length-scale %.1f weeks, want about 45.9", m)
	}
	v, _ := st.PriorDraw(nil, rng)
	ll, pred := st.LogLik(nil, nil, v)
	sigma := l.View(v).Sigma()
	for i, y := range st.Y {
		z := (y - pred[i]) / sigma
		if want := -math.Log(sigma) - 0.5*math.Log(2*math.Pi) - 0.5*z*z; math.Abs(ll[i]-want) > 1e-12 {
			t.Fatalf("week %d: log likelihood %v, want %v", i, ll[i], want)
		}
	}
}
