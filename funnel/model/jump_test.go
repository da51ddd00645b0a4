package model

import (
	"math"
	"math/rand/v2"
	"testing"

	"spillway/funnel/mcmc/mcmctest"
)

// TestJumpBasis checks the candidate weeks (every JumpEvery weeks), that
// the jump part averages zero over the fitted weeks (with and without held
// out weeks), its value by the definition sum_k w_k (1[t >= t_k] - m_k),
// and jumpGrad against that definition summed over a range of weeks.
func TestJumpBasis(t *testing.T) {
	const T = 50
	mask := make([]bool, T)
	for i := 40; i < 46; i++ {
		mask[i] = true
	}
	rng := rand.New(rand.NewPCG(3, 3))
	for _, m := range [][]bool{nil, mask} {
		b := NewJumpBasis(T, m)
		if b.J() != 11 || b.JumpWeeks()[0] != 4 || b.JumpWeeks()[10] != 44 {
			t.Fatalf("candidate weeks %v, want 4, 8, ..., 44", b.JumpWeeks())
		}
		u := make([]float64, b.J())
		for k := range u {
			u[k] = rng.NormFloat64()
		}
		f := make([]float64, T)
		b.addJumps(f, 0.3, u, 0, T)
		n, s := 0, 0.0
		for i, fi := range f {
			want := 0.0
			for k, tk := range b.JumpWeeks() {
				in := 0.0
				if i >= tk {
					in = 1
				}
				want += 0.3 * u[k] * (in - b.jmean[k])
			}
			if math.Abs(fi-want) > 1e-12 || math.Abs(b.jumpAt(i, 0.3, u)-want) > 1e-12 {
				t.Fatalf("week %d: jump part %v (jumpAt %v), want %v", i, fi, b.jumpAt(i, 0.3, u), want)
			}
			if m == nil || !m[i] {
				n++
				s += fi
			}
		}
		if math.Abs(s/float64(n)) > 1e-12 {
			t.Errorf("jump part averages %v over the fitted weeks", s/float64(n))
		}
		r := make([]float64, T)
		for i := range r {
			r[i] = rng.NormFloat64()
		}
		for _, rg := range [][2]int{{0, T}, {10, 23}, {8, 9}, {45, T}, {0, 3}} {
			p := make([]float64, b.J())
			b.jumpGrad(p, r, rg[0], rg[1])
			for k, tk := range b.JumpWeeks() {
				want := 0.0
				for i := rg[0]; i < rg[1]; i++ {
					in := 0.0
					if i >= tk {
						in = 1
					}
					want += r[i] * (in - b.jmean[k])
				}
				if math.Abs(p[k]-want) > 1e-12 {
					t.Fatalf("weeks [%d, %d) candidate %d: gradient %v, want %v", rg[0], rg[1], k, p[k], want)
				}
			}
		}
	}
}

// TestJumpTerm checks a drifting channel term whose drift can jump: its
// gradient (coefficient, transform, smooth part, jump scale and weights)
// against central differences, and no allocation.
func TestJumpTerm(t *testing.T) {
	const T = 60
	sc := testScaled(T, 12)
	c := randomWeights(T, 12)
	b := NewJumpBasis(T, nil)
	M, J := b.M, b.J()
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
			nch := len(k)
			np := len(par)
			// sd, ell, the M weights, the jumps' scale, the J weights
			sm := newSmoothEval(b, np, np+1, np+2)
			k = append(k, np, np+1)
			base, scale = append(base, 0.4, 25), append(scale, 0.2, 10)
			for j := 0; j < M; j++ {
				k = append(k, np+2+j)
				base, scale = append(base, 0), append(scale, 1)
			}
			k = append(k, np+2+M)
			base, scale = append(base, 0.15), append(scale, 0.1)
			for j := 0; j < J; j++ {
				k = append(k, np+3+M+j)
				base, scale = append(base, 0), append(scale, 2)
			}
			term := newDriftTerm(newChannelTerm(&ch, k[:nch], par, false, centred), sm)
			f := predictorFunc(t, term, np+3+M+J, k, base, scale, c, -0.4)
			mcmctest.CheckGradient(t, f, 1e-6, termGrad)
			mcmctest.CheckNoAlloc(t, f, make([]float64, len(k)))
		}
	}
}

// TestStudentT checks the Student-t prior's log density against its
// closed form (the normalising constant aside) and its derivative
// against a central difference.
func TestStudentT(t *testing.T) {
	p := Prior{StudentT, 3, 0.5}
	lg1, _ := math.Lgamma(2)
	lg2, _ := math.Lgamma(1.5)
	for _, x := range []float64{-3, -0.2, 0, 0.7, 5} {
		lp, d := p.LogPdf(x)
		// t_nu(x; s) = Gamma((nu+1)/2) / (Gamma(nu/2) sqrt(nu pi) s) (1 + (x/s)^2/nu)^(-(nu+1)/2)
		full := lg1 - lg2 - 0.5*math.Log(3*math.Pi) - math.Log(0.5) - 2*math.Log1p(x*x/0.25/3)
		c := lg1 - lg2 - 0.5*math.Log(3*math.Pi)
		if math.Abs(lp+c-full) > 1e-12 {
			t.Errorf("x %v: log density %v, want %v", x, lp+c, full)
		}
		h := 1e-6
		a, _ := p.LogPdf(x + h)
		z, _ := p.LogPdf(x - h)
		if num := (a - z) / (2 * h); math.Abs(num-d) > 1e-6 {
			t.Errorf("x %v: derivative %v, central difference %v", x, d, num)
		}
	}
	if p.Support(Real) != Real || p.Check() != nil || (Prior{StudentT, 0, 1}).Check() == nil {
		t.Errorf("Student-t support or checks wrong")
	}
}
