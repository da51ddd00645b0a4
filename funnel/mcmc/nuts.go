package mcmc

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
)

// maxDeltaH is the energy error above which a trajectory is divergent
// (Stan's max_deltaH).
const maxDeltaH = 1000

// point is a phase-space state: position q, momentum p, gradient g of log p
// at q, and log p(q).
type point struct {
	q, p, g []float64
	logp    float64
}

func newPoint(dim int) point {
	b := make([]float64, 3*dim)
	return point{q: b[:dim:dim], p: b[dim : 2*dim : 2*dim], g: b[2*dim:]}
}

func (z *point) copyFrom(src *point) {
	copy(z.q, src.q)
	copy(z.p, src.p)
	copy(z.g, src.g)
	z.logp = src.logp
}

// level holds the temporaries of one build-tree call at a given depth, so the
// recursion never allocates: at most one call per depth is active at a time.
type level struct {
	pInitEnd, pSharpInitEnd, rhoInit    []float64
	pFinalBeg, pSharpFinalBeg, rhoFinal []float64
	rhoExt                              []float64
	zProposeFinal                       point
}

// nuts is one chain's No-U-Turn transition kernel with a diagonal metric,
// H(q, p) = −log p(q) + ½ Σ invMetric[i] p[i]², plus ½ p_bᵀ Σ p_b over a
// dense block when there is one (denseBlock). All buffers are allocated in
// newNUTS; transition allocates nothing.
type nuts struct {
	m         Model
	dim       int
	rng       *rand.Rand
	eps       float64
	maxDepth  int
	invMetric []float64
	sqrtInvM  []float64   // 1/sqrt(invMetric), the momentum standard deviations
	dense     *denseBlock // nil: the metric is diagonal

	z                          point // current state
	zFwd, zBck, zSample, zProp point
	zInit                      point

	pFwdFwd, pSharpFwdFwd []float64
	pFwdBck, pSharpFwdBck []float64
	pBckFwd, pSharpBckFwd []float64
	pBckBck, pSharpBckBck []float64
	rho, rhoFwd, rhoBck   []float64
	rhoExt                []float64
	levels                []level

	// results of the last transition
	nLeapfrog    int
	sumMetroProb float64
	divergent    bool
	depth        int
	energy       float64
	accept       float64

	gradEvals int
}

func newNUTS(m Model, rng *rand.Rand, maxDepth int) *nuts {
	d := m.Dim()
	v := func() []float64 { return make([]float64, d) }
	s := &nuts{
		m: m, dim: d, rng: rng, eps: 1, maxDepth: maxDepth,
		invMetric: v(), sqrtInvM: v(),
		z: newPoint(d), zFwd: newPoint(d), zBck: newPoint(d), zSample: newPoint(d),
		zProp: newPoint(d), zInit: newPoint(d),
		pFwdFwd: v(), pSharpFwdFwd: v(), pFwdBck: v(), pSharpFwdBck: v(),
		pBckFwd: v(), pSharpBckFwd: v(), pBckBck: v(), pSharpBckBck: v(),
		rho: v(), rhoFwd: v(), rhoBck: v(), rhoExt: v(),
		levels: make([]level, maxDepth+1),
	}
	for i := range s.levels {
		s.levels[i] = level{
			pInitEnd: v(), pSharpInitEnd: v(), rhoInit: v(),
			pFinalBeg: v(), pSharpFinalBeg: v(), rhoFinal: v(),
			rhoExt: v(), zProposeFinal: newPoint(d),
		}
	}
	for i := range s.invMetric {
		s.invMetric[i] = 1
	}
	s.setMetric(s.invMetric)
	return s
}

// setMetric installs the diagonal inverse metric (the variance estimate).
func (s *nuts) setMetric(invMetric []float64) {
	copy(s.invMetric, invMetric)
	for i, v := range s.invMetric {
		s.sqrtInvM[i] = 1 / math.Sqrt(v)
	}
}

// setDense installs cov as the dense block's inverse metric (k × k) and
// takes the block's coordinates out of the diagonal loops: their diagonal
// entries become 0 and their momentum scale 1 (the block's draw is made
// from the standard normals by denseBlock.momentum).
func (s *nuts) setDense(cov []float64) error {
	if err := s.dense.set(cov); err != nil {
		return err
	}
	for _, i := range s.dense.idx {
		s.invMetric[i], s.sqrtInvM[i] = 0, 1
	}
	return nil
}

// metricDiag returns the inverse metric's diagonal, the dense block's
// included.
func (s *nuts) metricDiag() []float64 {
	out := append([]float64(nil), s.invMetric...)
	if d := s.dense; d != nil {
		k := len(d.idx)
		for j, i := range d.idx {
			out[i] = d.cov[j*k+j]
		}
	}
	return out
}

// setPosition evaluates the model at q and makes it the current state. It
// reports whether log p(q) and its gradient are finite.
func (s *nuts) setPosition(q []float64) bool {
	copy(s.z.q, q)
	s.z.logp = s.m.LogProbGrad(s.z.g, s.z.q)
	s.gradEvals++
	if math.IsNaN(s.z.logp) || math.IsInf(s.z.logp, 0) {
		return false
	}
	for _, g := range s.z.g {
		if math.IsNaN(g) || math.IsInf(g, 0) {
			return false
		}
	}
	return true
}

func (s *nuts) samplePNorm(z *point) {
	for i := range z.p {
		z.p[i] = s.rng.NormFloat64() * s.sqrtInvM[i]
	}
	if s.dense != nil {
		s.dense.momentum(z.p)
	}
}

// hamiltonian returns H(z) = −log p(q) + ½ pᵀ M⁻¹ p; NaN becomes +Inf.
func (s *nuts) hamiltonian(z *point) float64 {
	k := 0.0
	for i, p := range z.p {
		k += s.invMetric[i] * p * p
	}
	if s.dense != nil {
		k += s.dense.quad(z.p)
	}
	h := -z.logp + 0.5*k
	if math.IsNaN(h) {
		return math.Inf(1)
	}
	return h
}

// pSharp writes dτ/dp = M⁻¹ p into dst.
func (s *nuts) pSharp(dst, p []float64) {
	for i, v := range p {
		dst[i] = s.invMetric[i] * v
	}
	if d := s.dense; d != nil {
		for j, v := range d.sharp(p) {
			dst[d.idx[j]] = v
		}
	}
}

// leapfrog advances z by one leapfrog step of size eps (negative for a
// backward step) and re-evaluates log p and its gradient.
func (s *nuts) leapfrog(z *point, eps float64) {
	half := 0.5 * eps
	n := len(z.p)
	q, g, invM := z.q[:n], z.g[:n], s.invMetric[:n]
	for i, p := range z.p {
		p += half * g[i]
		z.p[i] = p
		q[i] += eps * invM[i] * p
	}
	if d := s.dense; d != nil {
		for j, v := range d.sharp(z.p) {
			q[d.idx[j]] += eps * v
		}
	}
	z.logp = s.m.LogProbGrad(z.g, z.q)
	s.gradEvals++
	for i := range z.p {
		z.p[i] += half * g[i]
	}
}

// leaf takes one leapfrog step of size eps from s.z (as leapfrog) and, in
// the same pass, writes the new sharp momentum M⁻¹p into pSharpBeg and
// pSharpEnd and the momentum into pBeg and pEnd, adds it into rho, and
// returns the Hamiltonian of the new state (NaN as +Inf).
func (s *nuts) leaf(eps float64, pSharpBeg, pSharpEnd, rho, pBeg, pEnd []float64) float64 {
	z := &s.z
	half := 0.5 * eps
	n := len(z.p)
	q, g, invM := z.q[:n], z.g[:n], s.invMetric[:n]
	for i, p := range z.p {
		p += half * g[i]
		z.p[i] = p
		q[i] += eps * invM[i] * p
	}
	if d := s.dense; d != nil {
		for j, v := range d.sharp(z.p) {
			q[d.idx[j]] += eps * v
		}
	}
	z.logp = s.m.LogProbGrad(z.g, z.q)
	s.gradEvals++
	pSharpBeg, pSharpEnd = pSharpBeg[:n], pSharpEnd[:n]
	rho, pBeg, pEnd = rho[:n], pBeg[:n], pEnd[:n]
	k := 0.0
	for i := range z.p {
		p := z.p[i] + half*g[i]
		z.p[i] = p
		ps := invM[i] * p
		k += ps * p
		pSharpBeg[i], pSharpEnd[i] = ps, ps
		pBeg[i], pEnd[i] = p, p
		rho[i] += p
	}
	if d := s.dense; d != nil {
		for j, ps := range d.sharp(z.p) {
			i := d.idx[j]
			k += ps * z.p[i]
			pSharpBeg[i], pSharpEnd[i] = ps, ps
		}
	}
	h := -z.logp + 0.5*k
	if math.IsNaN(h) {
		return math.Inf(1)
	}
	return h
}

func logSumExp(a, b float64) float64 {
	if math.IsInf(a, -1) {
		return b
	}
	if math.IsInf(b, -1) {
		return a
	}
	if a > b {
		return a + math.Log1p(math.Exp(b-a))
	}
	return b + math.Log1p(math.Exp(a-b))
}

// transition performs one NUTS iteration from the current state s.z with
// multinomial sampling of the trajectory (biased progressive sampling between
// subtrees at the top level, uniform within subtrees), following Stan's
// base_nuts.hpp. It leaves the selected state in s.z and sets the statistics.
func (s *nuts) transition() {
	s.samplePNorm(&s.z)
	s.zFwd.copyFrom(&s.z)
	s.zBck.copyFrom(&s.z)
	s.zSample.copyFrom(&s.z)

	copy(s.pFwdFwd, s.z.p)
	s.pSharp(s.pSharpFwdFwd, s.z.p)
	copy(s.pFwdBck, s.z.p)
	copy(s.pSharpFwdBck, s.pSharpFwdFwd)
	copy(s.pBckFwd, s.z.p)
	copy(s.pSharpBckFwd, s.pSharpFwdFwd)
	copy(s.pBckBck, s.z.p)
	copy(s.pSharpBckBck, s.pSharpFwdFwd)
	copy(s.rho, s.z.p)

	logSumWeight := 0.0
	h0 := s.hamiltonian(&s.z)
	s.nLeapfrog = 0
	s.sumMetroProb = 0
	s.depth = 0
	s.divergent = false

	for s.depth < s.maxDepth {
		clear(s.rhoFwd)
		clear(s.rhoBck)
		logSumWeightSubtree := math.Inf(-1)
		var valid bool
		if s.rng.Float64() > 0.5 {
			s.z.copyFrom(&s.zFwd)
			// The old trajectory becomes the backward part; its forward end
			// is next to the seam.
			copy(s.rhoBck, s.rho)
			copy(s.pBckFwd, s.pFwdFwd)
			copy(s.pSharpBckFwd, s.pSharpFwdFwd)
			valid = s.buildTree(s.depth, &s.zProp, s.pSharpFwdBck, s.pSharpFwdFwd, s.rhoFwd,
				s.pFwdBck, s.pFwdFwd, h0, 1, &logSumWeightSubtree)
			s.zFwd.copyFrom(&s.z)
		} else {
			s.z.copyFrom(&s.zBck)
			// The old trajectory becomes the forward part; its backward end
			// is next to the seam.
			copy(s.rhoFwd, s.rho)
			copy(s.pFwdBck, s.pBckBck)
			copy(s.pSharpFwdBck, s.pSharpBckBck)
			valid = s.buildTree(s.depth, &s.zProp, s.pSharpBckFwd, s.pSharpBckBck, s.rhoBck,
				s.pBckFwd, s.pBckBck, h0, -1, &logSumWeightSubtree)
			s.zBck.copyFrom(&s.z)
		}
		if !valid {
			break
		}
		s.depth++

		if logSumWeightSubtree > logSumWeight {
			s.zSample.copyFrom(&s.zProp)
		} else if s.rng.Float64() < math.Exp(logSumWeightSubtree-logSumWeight) {
			s.zSample.copyFrom(&s.zProp)
		}
		logSumWeight = logSumExp(logSumWeight, logSumWeightSubtree)

		// Stan's three checks: around the merged trajectory and across the
		// seam between the old trajectory and the new subtree, fused.
		var d1, d2, d3, d4, d5, d6 float64
		for i := range s.rho {
			r := s.rhoBck[i] + s.rhoFwd[i]
			s.rho[i] = r
			d1 += s.pSharpFwdFwd[i] * r
			d2 += s.pSharpBckBck[i] * r
			e := s.rhoBck[i] + s.pFwdBck[i]
			d3 += s.pSharpFwdBck[i] * e
			d4 += s.pSharpBckBck[i] * e
			f := s.rhoFwd[i] + s.pBckFwd[i]
			d5 += s.pSharpFwdFwd[i] * f
			d6 += s.pSharpBckFwd[i] * f
		}
		persist := d1 > 0 && d2 > 0 && d3 > 0 && d4 > 0 && d5 > 0 && d6 > 0
		if !persist {
			break
		}
	}

	s.accept = s.sumMetroProb / float64(s.nLeapfrog)
	s.z.copyFrom(&s.zSample)
	s.energy = s.hamiltonian(&s.z)
}

// buildTree extends the trajectory from s.z by 2^depth leapfrog steps in
// direction sign. It writes the subtree's multinomial proposal into propose,
// the sharp momenta and momenta at its two ends, adds the subtree's summed
// momentum into rho and its log weight into *logSumWeight, and reports
// whether the subtree is valid (no divergence, no U-turn inside).
func (s *nuts) buildTree(depth int, propose *point, pSharpBeg, pSharpEnd, rho, pBeg, pEnd []float64,
	h0, sign float64, logSumWeight *float64) bool {
	if depth == 0 {
		h := s.leaf(sign*s.eps, pSharpBeg, pSharpEnd, rho, pBeg, pEnd)
		s.nLeapfrog++
		if h-h0 > maxDeltaH {
			s.divergent = true
		}
		*logSumWeight = logSumExp(*logSumWeight, h0-h)
		if h0-h > 0 {
			s.sumMetroProb++
		} else {
			s.sumMetroProb += math.Exp(h0 - h)
		}
		propose.copyFrom(&s.z)
		return !s.divergent
	}

	lv := &s.levels[depth]
	logSumWeightInit := math.Inf(-1)
	clear(lv.rhoInit)
	if !s.buildTree(depth-1, propose, pSharpBeg, lv.pSharpInitEnd, lv.rhoInit, pBeg, lv.pInitEnd,
		h0, sign, &logSumWeightInit) {
		return false
	}

	// No copy of s.z into zFinal is needed: the first leaf of the final
	// subtree overwrites it before anything reads it.
	zFinal := &lv.zProposeFinal
	logSumWeightFinal := math.Inf(-1)
	clear(lv.rhoFinal)
	if !s.buildTree(depth-1, zFinal, lv.pSharpFinalBeg, pSharpEnd, lv.rhoFinal, lv.pFinalBeg, pEnd,
		h0, sign, &logSumWeightFinal) {
		return false
	}

	logSumWeightSubtree := logSumExp(logSumWeightInit, logSumWeightFinal)
	*logSumWeight = logSumExp(*logSumWeight, logSumWeightSubtree)
	if logSumWeightFinal > logSumWeightSubtree {
		propose.copyFrom(zFinal)
	} else if s.rng.Float64() < math.Exp(logSumWeightFinal-logSumWeightSubtree) {
		propose.copyFrom(zFinal)
	}

	// The three checks of Stan's base_nuts build_tree, fused into one pass:
	// around the merged subtree (rhoSubtree = rhoInit + rhoFinal) and across
	// the seam in both directions (rhoInit + pFinalBeg, rhoFinal + pInitEnd).
	var d1, d2, d3, d4, d5, d6 float64
	for i := range rho {
		rs := lv.rhoInit[i] + lv.rhoFinal[i]
		rho[i] += rs
		d1 += pSharpEnd[i] * rs
		d2 += pSharpBeg[i] * rs
		e := lv.rhoInit[i] + lv.pFinalBeg[i]
		d3 += lv.pSharpFinalBeg[i] * e
		d4 += pSharpBeg[i] * e
		f := lv.rhoFinal[i] + lv.pInitEnd[i]
		d5 += pSharpEnd[i] * f
		d6 += lv.pSharpInitEnd[i] * f
	}
	persist := d1 > 0 && d2 > 0 && d3 > 0 && d4 > 0 && d5 > 0 && d6 > 0
	return persist
}

// errImproper and errNoStepSize are returned by findStepSize.
var (
	errImproper   = errors.New("mcmc: step size search exceeded 1e7; the posterior may be improper")
	errNoStepSize = errors.New("mcmc: no acceptably small step size found; the density may not be continuous")
)

// findStepSize is Stan's init_stepsize heuristic: double or halve s.eps until
// the one-step acceptance probability crosses 0.8. It leaves s.z unchanged.
func (s *nuts) findStepSize() error {
	if s.eps == 0 || s.eps > 1e7 || math.IsNaN(s.eps) {
		return nil
	}
	s.zInit.copyFrom(&s.z)
	defer s.z.copyFrom(&s.zInit)
	oneStep := func() float64 {
		s.z.copyFrom(&s.zInit)
		s.samplePNorm(&s.z)
		h0 := s.hamiltonian(&s.z)
		s.leapfrog(&s.z, s.eps)
		h := s.hamiltonian(&s.z)
		return h0 - h
	}
	logTarget := math.Log(0.8)
	direction := -1.0
	if oneStep() > logTarget {
		direction = 1
	}
	for {
		dH := oneStep()
		if direction == 1 && !(dH > logTarget) {
			break
		}
		if direction == -1 && !(dH < logTarget) {
			break
		}
		if direction == 1 {
			s.eps *= 2
		} else {
			s.eps *= 0.5
		}
		if s.eps > 1e7 {
			return errImproper
		}
		if s.eps == 0 {
			return errNoStepSize
		}
	}
	return nil
}

// InitError reports that a chain found no starting point with a finite log
// density and gradient.
type InitError struct {
	Chain int // 0-based chain index
	Tries int
}

func (e *InitError) Error() string {
	return fmt.Sprintf("mcmc: chain %d: no initial point with finite log density and gradient after %d tries", e.Chain+1, e.Tries)
}
