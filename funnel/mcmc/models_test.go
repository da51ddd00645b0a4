package mcmc_test

import (
	"fmt"
	"math"

	"spillway/funnel/mcmc"
)

// gaussian is a Gaussian with independent coordinates N(Mu[i], Sigma[i]²).
type gaussian struct {
	mu, sigma []float64
}

var _ mcmc.Target = (*gaussian)(nil)

func (g *gaussian) Dim() int { return len(g.mu) }
func (g *gaussian) LogProbGrad(grad, x []float64) float64 {
	lp := 0.0
	for i, v := range x {
		z := (v - g.mu[i]) / g.sigma[i]
		lp -= 0.5 * z * z
		grad[i] = -z / g.sigma[i]
	}
	return lp
}
func (g *gaussian) Names() []string {
	n := make([]string, len(g.mu))
	for i := range n {
		n[i] = fmt.Sprintf("x[%d]", i+1)
	}
	return n
}
func (g *gaussian) Constrain(dst, x []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(x))
	}
	copy(dst, x)
	return dst
}
func (g *gaussian) Clone() mcmc.Target { return g }

// correlated2 is a bivariate normal with zero means, unit variances scaled
// by s1, s2 and correlation rho.
type correlated2 struct{ s1, s2, rho float64 }

func (c correlated2) Dim() int { return 2 }
func (c correlated2) LogProbGrad(grad, x []float64) float64 {
	a, b := x[0]/c.s1, x[1]/c.s2
	k := 1 / (1 - c.rho*c.rho)
	lp := -0.5 * k * (a*a - 2*c.rho*a*b + b*b)
	grad[0] = -k * (a - c.rho*b) / c.s1
	grad[1] = -k * (b - c.rho*a) / c.s2
	return lp
}
func (c correlated2) Names() []string { return []string{"a", "b"} }
func (c correlated2) Constrain(dst, x []float64) []float64 {
	if dst == nil {
		dst = make([]float64, 2)
	}
	copy(dst, x)
	return dst
}
func (c correlated2) Clone() mcmc.Target { return c }

// regression is y ~ N(Xβ, σ²) with parameters (β, u = log σ). With
// conjugate = true the prior is the normal-inverse-gamma β | σ² ~ N(0, σ² I),
// σ² ~ Inv-Gamma(a0, b0); otherwise the flat prior p(β, σ²) ∝ 1/σ² (BDA3
// section 14.2), which is uniform in (β, log σ).
type regression struct {
	x         [][]float64 // rows of X
	y         []float64
	conjugate bool
	a0, b0    float64
	resid     []float64 // scratch
}

func newRegression(x [][]float64, y []float64, conjugate bool, a0, b0 float64) *regression {
	return &regression{x: x, y: y, conjugate: conjugate, a0: a0, b0: b0, resid: make([]float64, len(y))}
}

func (r *regression) k() int   { return len(r.x[0]) }
func (r *regression) Dim() int { return r.k() + 1 }
func (r *regression) LogProbGrad(grad, th []float64) float64 {
	k := r.k()
	beta, u := th[:k], th[k]
	s2 := math.Exp(2 * u)
	rss := 0.0
	for i, row := range r.x {
		m := 0.0
		for j, v := range row {
			m += v * beta[j]
		}
		e := r.y[i] - m
		r.resid[i] = e
		rss += e * e
	}
	for j := range beta {
		g := 0.0
		for i, row := range r.x {
			g += row[j] * r.resid[i]
		}
		grad[j] = g / s2
	}
	n := float64(len(r.y))
	if !r.conjugate {
		// log p = −n u − rss/(2σ²), flat in (β, u).
		grad[k] = -n + rss/s2
		return -n*u - rss/(2*s2)
	}
	// log p = −(a0 + 1 + (n + k)/2) log σ² − (b0 + rss/2 + |β|²/2)/σ²
	//         + log 2 + 2u   (Jacobian of σ² = exp(2u)).
	bb := 0.0
	for j, b := range beta {
		bb += b * b
		grad[j] -= b / s2
	}
	q := r.b0 + rss/2 + bb/2
	c := r.a0 + 1 + (n+float64(k))/2
	grad[k] = -2*c + 2*q/s2 + 2
	return -c*2*u - q/s2 + math.Log(2) + 2*u
}
func (r *regression) Names() []string {
	n := make([]string, 0, r.k()+1)
	for j := range r.k() {
		n = append(n, fmt.Sprintf("beta[%d]", j))
	}
	return append(n, "sigma")
}
func (r *regression) Constrain(dst, th []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(th))
	}
	k := r.k()
	copy(dst, th[:k])
	dst[k] = mcmc.Positive{}.Value(th[k])
	return dst
}
func (r *regression) Clone() mcmc.Target {
	return newRegression(r.x, r.y, r.conjugate, r.a0, r.b0)
}

// funnel is Neal's funnel (Neal 2003, "Slice sampling", Annals of
// Statistics 31(3), section 8): v ~ N(0, 3²), x_i | v ~ N(0, e^v), i = 1..d−1,
// in the centred parameterisation.
type funnel struct{ d int }

func (f funnel) Dim() int { return f.d }
func (f funnel) LogProbGrad(grad, x []float64) float64 {
	v := x[0]
	lp := -v * v / 18
	grad[0] = -v / 9
	ev := math.Exp(-v)
	for i := 1; i < f.d; i++ {
		lp += -0.5*x[i]*x[i]*ev - 0.5*v
		grad[i] = -x[i] * ev
		grad[0] += 0.5*x[i]*x[i]*ev - 0.5
	}
	return lp
}
func (f funnel) Names() []string {
	n := []string{"v"}
	for i := 1; i < f.d; i++ {
		n = append(n, fmt.Sprintf("x[%d]", i))
	}
	return n
}
func (f funnel) Constrain(dst, x []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(x))
	}
	copy(dst, x)
	return dst
}
func (f funnel) Clone() mcmc.Target { return f }

// logGamma is x ~ Gamma(shape a, rate 1) sampled on u = log x: the density
// of u is exp(a u − e^u) (Jacobian included), strongly skewed for small a.
type logGamma struct{ a float64 }

func (g logGamma) Dim() int { return 1 }
func (g logGamma) LogProbGrad(grad, x []float64) float64 {
	e := math.Exp(x[0])
	grad[0] = g.a - e
	return g.a*x[0] - e
}
func (g logGamma) Names() []string { return []string{"x"} }
func (g logGamma) Constrain(dst, u []float64) []float64 {
	if dst == nil {
		dst = make([]float64, 1)
	}
	dst[0] = mcmc.Positive{}.Value(u[0])
	return dst
}
func (g logGamma) Clone() mcmc.Target { return g }
