package mcmc

import (
	"math/rand/v2"
	"testing"
)

// stdNormal is N(0, I) in dim dimensions (internal tests only).
type stdNormal struct{ dim int }

func (s stdNormal) Dim() int { return s.dim }
func (s stdNormal) LogProbGrad(grad, x []float64) float64 {
	lp := 0.0
	for i, v := range x {
		lp -= 0.5 * v * v
		grad[i] = -v
	}
	return lp
}

func newTestNUTS(dim int) *nuts {
	s := newNUTS(stdNormal{dim}, rand.New(rand.NewPCG(1, 0)), DefaultMaxTreeDepth)
	q := make([]float64, dim)
	for i := range q {
		q[i] = 0.5
	}
	if !s.setPosition(q) {
		panic("bad start")
	}
	s.eps = 0.3
	return s
}

// TestTransitionNoAlloc: a NUTS transition (tree building included) does not
// allocate once the chain's buffers exist (STYLE.md "Hot loops").
func TestTransitionNoAlloc(t *testing.T) {
	s := newTestNUTS(20)
	if n := testing.AllocsPerRun(200, s.transition); n != 0 {
		t.Errorf("transition allocates %v times per call, want 0", n)
	}
	if n := testing.AllocsPerRun(200, func() { s.leapfrog(&s.z, 0.1) }); n != 0 {
		t.Errorf("leapfrog allocates %v times per call, want 0", n)
	}
}

// TestLeapfrogReversible: a leapfrog step followed by a step of −ε returns
// to the start (time reversibility of the integrator, a property of the
// method), and the energy error on a standard normal is O(ε³) per step.
func TestLeapfrogReversible(t *testing.T) {
	s := newTestNUTS(5)
	s.samplePNorm(&s.z)
	q0 := append([]float64(nil), s.z.q...)
	p0 := append([]float64(nil), s.z.p...)
	h0 := s.hamiltonian(&s.z)
	s.leapfrog(&s.z, 0.01)
	if dh := s.hamiltonian(&s.z) - h0; dh > 1e-5 || dh < -1e-5 {
		t.Errorf("energy error %v after one step of 0.01", dh)
	}
	s.leapfrog(&s.z, -0.01)
	for i := range q0 {
		if d := s.z.q[i] - q0[i]; d > 1e-14 || d < -1e-14 {
			t.Errorf("q[%d] after a round trip: off by %v", i, d)
		}
		if d := s.z.p[i] - p0[i]; d > 1e-14 || d < -1e-14 {
			t.Errorf("p[%d] after a round trip: off by %v", i, d)
		}
	}
}

// BenchmarkLeapfrog times one leapfrog step with the gradient of a
// 100-dimensional standard normal; it reports 0 allocs/op.
func BenchmarkLeapfrog(b *testing.B) {
	s := newTestNUTS(100)
	s.samplePNorm(&s.z)
	b.ReportAllocs()
	for b.Loop() {
		s.leapfrog(&s.z, 1e-3)
	}
}

// BenchmarkTransition times one full NUTS transition (tree building) on a
// 100-dimensional standard normal with ε = 0.3; it reports 0 allocs/op.
func BenchmarkTransition(b *testing.B) {
	s := newTestNUTS(100)
	b.ReportAllocs()
	for b.Loop() {
		s.transition()
	}
}
