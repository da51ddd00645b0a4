package model

import (
	"fmt"
	"math"
)

// A smooth function of the week, for a coefficient that drifts (its
// multiplier exp(f(t))) and for a baseline that moves (f(t) added to the
// linear predictor). It is the Hilbert-space approximate Gaussian process of
// Riutort-Mayol, Bürkner, Andersen, Solin and Vehtari (2023), "Practical
// Hilbert space approximate Bayesian Gaussian processes for probabilistic
// programming", Statistics and Computing 33:17, with a squared-exponential
// kernel of length-scale ell (weeks):
//
//	f(t) = sum_{j=1..M} s_j z_j phi~_j(t),  z_j ~ Normal(0, 1),
//	phi_j(x) = L^(-1/2) sin(pi j (x + L) / (2 L)),  lambda_j = (pi j / (2 L))^2,
//
// x the week index minus the middle week, L = BoundaryFactor times the
// data's half-range, and phi~_j = phi_j minus its mean over the fitted
// weeks, so that f averages exactly zero there: a drifting coefficient
// keeps its meaning as the average effectiveness, and a moving baseline
// leaves the intercept the average level. The weights are the square
// roots of the kernel's spectral density S(w) = sd^2 sqrt(2 pi) ell
// exp(-ell^2 w^2 / 2) at sqrt(lambda_j):
//
//	s_j = sd (2 pi)^(1/4) sqrt(ell) exp(-ell^2 lambda_j / 4),
//
// so sd is the marginal sd of f before its mean is removed. (Normalising
// the weights so that sd is f's root mean square over the weeks whatever
// the length-scale reads better but sampled worse: with fixed true effects
// the data pin f near zero, only sd -> 0 can then do it, and the weights
// formed a funnel with sd, 17 to 21 divergent transitions in 4000 draws of
// the demo's demand stage against 3; here a long length-scale, whose level
// the centring removes, is a second way to a flat f.)
//
// Why this representation (how it samples): the weights z_j are a priori
// independent standard normals and enter f linearly, so the sampler moves in
// coordinates of unit scale (the non-centred form, which avoids the funnel
// between the amplitude and the function when the data say little); the
// basis does not depend on the hyperparameters, so one evaluation costs
// O(T M) multiply-adds with no matrix factorisation; and the length-scale
// only rescales the weights (s_j), so the weights of high frequencies that
// a long length-scale switches off are left to their prior instead of
// tangling with the rest. A random walk on knots has a fixed smoothness set
// by the knot spacing and correlates every knot with its neighbours; a
// full Gaussian process needs a T x T Cholesky factor per evaluation.
//
// M follows the paper's rule for the squared-exponential kernel,
// M >= 1.75 L / ell_min, with ell_min = MinLength weeks, the 1% quantile of
// the length-scale prior [the rule confirmed against PyMC's HSGP helper,
// required_num_eigenvectors; the boundary guidance c >= 3.2 ell / S, c >=
// 1.2, from memory]: with c = 1.5 the covariance is within 4% of the
// kernel's (TestBasis) for length-scales up to about 0.4 times the
// half-range (30 weeks on three years of data, where M = 11), 10% at 36
// weeks; a longer length-scale still gives a smooth
// function, close to a straight line over the data once its mean is
// removed, with a covariance a little different from the kernel's.
const (
	// BoundaryFactor is c, the domain's half-width L over the data's
	// half-range.
	BoundaryFactor = 1.5
	// MinLength is the shortest length-scale, in weeks, the basis is sized
	// to represent: the default prior puts 1% of its mass below it. It is
	// longer than the half-period of the yearly season (26 weeks) would
	// need to be copied, less than two quarters: a drift may move from
	// quarter to quarter, but cannot easily stand in for the seasons, with
	// which the drift of an always-on channel would otherwise trade off
	// (the multiplier of a steady response is a seasonal term of its own).
	MinLength = 20
)

// The default priors of a smooth function's hyperparameters and weights.
var (
	// PriorDriftSD is the marginal sd of the log multiplier: HalfNormal(0.5)
	// has its median at 0.34 (effectiveness typically within -29% and +40%
	// of its average) and 5% of its mass above 0.98.
	PriorDriftSD = Prior{HalfNormal, 0.5, 0}
	// PriorBaseSD is the marginal sd of a moving baseline, in the scaled
	// response's units (mean 1).
	PriorBaseSD = Prior{HalfNormal, 0.3, 0}
	// PriorLength is the length-scale in weeks: InvGamma(6, 260) has 1%
	// of its mass below 19.8 weeks, 1% above 146 weeks and its median at
	// 46 weeks (computed with gonum's Gamma quantile of 1/ell).
	PriorLength = Prior{InvGamma, 6, 260}
	// PriorWeight is the prior of each basis weight.
	PriorWeight = Prior{Normal, 0, 1}
)

// Basis is the basis of a smooth function over a stage's weeks. It does not
// change after NewBasis; stages and terms share it.
type Basis struct {
	T, M    int
	L       float64   // half-width of the domain, weeks
	sqrtLam []float64 // sqrt(lambda_j) = pi j / (2 L)
	phi     []float64 // T x M, row t: phi~_j(t)
	// col[j] is phi~_j over the weeks, the same values by column: f and
	// the gradient's projection run over weeks for several j at once
	// (axpys, dots), independent sums side by side, where a row at a time
	// waits on one running sum per week.
	col [][]float64
	// jumps are the candidate weeks of a drift that can jump (jump.go),
	// none for a smooth function; jmean[k] the share of the fitted weeks
	// at or after jumps[k].
	jumps []int
	jmean []float64
}

// NewJumpBasis returns the basis over T weeks of a drift that can jump: the
// smooth function's, and candidate weeks every JumpEvery weeks (jump.go).
func NewJumpBasis(T int, mask []bool) *Basis {
	return NewBasis(T, mask).withJumps(mask)
}

// NewBasis returns the basis over T weeks; the means are taken over the
// weeks not masked (mask may be nil: every week).
func NewBasis(T int, mask []bool) *Basis {
	half := float64(T-1) / 2
	if half < 1 {
		half = 1
	}
	L := BoundaryFactor * half
	M := int(math.Ceil(1.75 * L / MinLength))
	b := &Basis{T: T, M: M, L: L, sqrtLam: make([]float64, M), phi: make([]float64, T*M)}
	for j := range b.sqrtLam {
		b.sqrtLam[j] = math.Pi * float64(j+1) / (2 * L)
	}
	norm := 1 / math.Sqrt(L)
	means := make([]float64, M)
	n := 0
	for t := 0; t < T; t++ {
		x := float64(t) - half
		for j := 0; j < M; j++ {
			b.phi[t*M+j] = norm * math.Sin(b.sqrtLam[j]*(x+L))
		}
		if mask != nil && mask[t] {
			continue
		}
		n++
		for j := 0; j < M; j++ {
			means[j] += b.phi[t*M+j]
		}
	}
	for j := range means {
		means[j] /= float64(n)
	}
	for t := 0; t < T; t++ {
		for j := 0; j < M; j++ {
			b.phi[t*M+j] -= means[j]
		}
	}
	b.col = make([][]float64, M)
	cols := make([]float64, M*T)
	for j := range b.col {
		b.col[j] = cols[j*T : (j+1)*T : (j+1)*T]
		for t := range b.col[j] {
			b.col[j][t] = b.phi[t*M+j]
		}
	}
	return b
}

// scales writes s_j and, unless ds is nil, d s_j / d ell = s_j (1/(2 ell)
// - ell lambda_j / 2) into s and ds.
func (b *Basis) scales(s, ds []float64, sd, ell float64) {
	c := sd * math.Pow(2*math.Pi, 0.25) * math.Sqrt(ell)
	for j, w := range b.sqrtLam {
		lam := w * w
		s[j] = c * math.Exp(-ell*ell*lam/4)
		if ds != nil {
			ds[j] = s[j] * (0.5/ell - ell*lam/2)
		}
	}
}

// Eval writes f(t) for the weeks t of the basis at the hyperparameters sd
// and ell and the weights z (len M) into dst and returns it; a dst too
// short is replaced.
func (b *Basis) Eval(dst []float64, sd, ell float64, z []float64) []float64 {
	dst = resizeTo(dst, b.T)
	var buf [64]float64
	b.apply(dst, b.coefs(buf[:0], sd, ell, z), 0, b.T, nil)
	return dst
}

// coefs appends s_j z_j, the weights of the basis functions in f, to dst
// and returns them (no allocation when dst has the capacity).
func (b *Basis) coefs(dst []float64, sd, ell float64, z []float64) []float64 {
	n := len(dst)
	for range b.M {
		dst = append(dst, 0)
	}
	c := dst[n:]
	b.scales(c, nil, sd, ell)
	for j := range c {
		c[j] *= z[j]
	}
	return c
}

// at returns sum_j c_j phi~_j(t).
func (b *Basis) at(t int, c []float64) float64 {
	row := b.phi[t*b.M : t*b.M+b.M]
	v := 0.0
	for j, p := range row {
		v += p * c[j]
	}
	return v
}

// apply writes sum_j c_j phi~_j(t) into f[t] for t in [lo, hi), the terms
// added in the order of j (the bits of a loop over j per week); win is
// scratch of len M for the columns' windows.
func (b *Basis) apply(f, c []float64, lo, hi int, win [][]float64) {
	axpys(f[lo:hi], 0, c, b.window(win, lo, hi))
}

// window returns the columns over the weeks [lo, hi): col itself for every
// week, else win filled with the columns' sub-slices.
func (b *Basis) window(win [][]float64, lo, hi int) [][]float64 {
	if lo == 0 && hi == b.T {
		return b.col
	}
	for j, c := range b.col {
		win[j] = c[lo:hi]
	}
	return win
}

// smoothParams returns the parameters of a smooth function: its sd, its
// length-scale and the M weights, named sd, ell and z[1..M] (z with index
// inside the brackets of a name that already has them: "x[col]" gives
// "x[col,1]").
func smoothParams(sd, ell, z string, sdPrior Prior, M int) []Param {
	p := []Param{{Name: sd, Prior: sdPrior, Default: PositiveReal}, {Name: ell, Prior: PriorLength, Default: PositiveReal}}
	for j := 1; j <= M; j++ {
		var name string
		if n := len(z); n > 0 && z[n-1] == ']' {
			name = fmt.Sprintf("%s,%d]", z[:n-1], j)
		} else {
			name = fmt.Sprintf("%s[%d]", z, j)
		}
		p = append(p, Param{Name: name, Prior: PriorWeight, Default: Real})
	}
	return p
}

// Smooth is a smooth function of the week in a stage: a drifting channel's
// log-multiplier or a moving baseline. Its parameters are, in draw order,
// the sd, the length-scale and the M basis weights, then, when its basis
// has candidate jump weeks (jump.go), the jumps' scale and J weights.
type Smooth struct {
	Basis  *Basis
	Params []Param
}

// Eval writes f(t) over the data's weeks at the smooth's constrained
// values v (sd, length-scale, weights, as in Params) into dst.
func (s *Smooth) Eval(dst, v []float64) []float64 {
	b := s.Basis
	dst = b.Eval(dst, v[0], v[1], v[2:2+b.M])
	if b.J() > 0 {
		b.addJumps(dst, v[2+b.M], v[3+b.M:3+b.M+b.J()], 0, b.T)
	}
	return dst
}

// smoothEval evaluates a smooth function inside a target: its slots in the
// natural values (sd, ell, then the M weights from z; with jumps, their
// scale at z + M and the J weights after it) and scratch.
type smoothEval struct {
	b         *Basis
	sd, ell   int // positions in the natural values
	z         int // position of the first weight
	jsd       int // position of the jumps' scale, -1 without jumps
	s, ds, c  []float64
	f, p, pj  []float64
	win       [][]float64 // scratch: the basis columns' windows
	sdv, ellv float64
}

func newSmoothEval(b *Basis, sd, ell, z int) *smoothEval {
	e := &smoothEval{b: b, sd: sd, ell: ell, z: z, jsd: -1}
	if b.J() > 0 {
		e.jsd = z + b.M
	}
	e.alloc()
	return e
}

func (e *smoothEval) alloc() {
	M := e.b.M
	e.s, e.ds, e.c, e.p = make([]float64, M), make([]float64, M), make([]float64, M), make([]float64, M)
	e.f = make([]float64, e.b.T)
	e.pj = make([]float64, e.b.J())
	e.win = make([][]float64, M)
}

// full returns f over every week at the natural values v (allocating: for
// Unconstrain, not for the density).
func (e *smoothEval) full(v []float64) []float64 {
	f := e.b.Eval(nil, v[e.sd], v[e.ell], v[e.z:e.z+e.b.M])
	if e.jsd >= 0 {
		e.b.addJumps(f, v[e.jsd], v[e.jsd+1:e.jsd+1+e.b.J()], 0, e.b.T)
	}
	return f
}

func (e *smoothEval) clone() *smoothEval {
	c := *e
	c.alloc()
	return &c
}

// eval computes f(t) for t in [lo, hi) at the natural values nat into e.f.
func (e *smoothEval) eval(nat []float64, lo, hi int) {
	e.sdv, e.ellv = nat[e.sd], nat[e.ell]
	e.b.scales(e.s, e.ds, e.sdv, e.ellv)
	z := nat[e.z : e.z+e.b.M]
	for j, s := range e.s {
		e.c[j] = s * z[j]
	}
	e.b.apply(e.f, e.c, lo, hi, e.win)
	if e.jsd >= 0 {
		e.b.addJumps(e.f, nat[e.jsd], nat[e.jsd+1:e.jsd+1+e.b.J()], lo, hi)
	}
}

// backward adds to g the gradient of the log density with respect to the
// smooth's natural values given r[t] = d lp / d f(t) for t in [lo, hi), at
// the values of the last eval.
func (e *smoothEval) backward(g, nat, r []float64, lo, hi int) {
	M := e.b.M
	p := e.p
	clear(p)
	dots(p, r[lo:hi], e.b.window(e.win, lo, hi))
	z := nat[e.z : e.z+M]
	gz := g[e.z : e.z+M]
	var gsd, gell float64
	for j, pj := range p {
		gz[j] += e.s[j] * pj
		gsd += e.c[j] * pj
		gell += z[j] * e.ds[j] * pj
	}
	g[e.sd] += gsd / e.sdv
	g[e.ell] += gell
	if e.jsd < 0 {
		return
	}
	// w_k = jsd u_k: d lp / d u_k = jsd p_k, d lp / d jsd = sum_k u_k p_k
	e.b.jumpGrad(e.pj, r, lo, hi)
	jsd, u, gu := nat[e.jsd], nat[e.jsd+1:e.jsd+1+e.b.J()], g[e.jsd+1:e.jsd+1+e.b.J()]
	gj := 0.0
	for k, pk := range e.pj {
		gu[k] += jsd * pk
		gj += u[k] * pk
	}
	g[e.jsd] += gj
}
