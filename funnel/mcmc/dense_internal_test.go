package mcmc

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestDenseMomentum checks the block's three operations on a 3 × 3 Σ
// against direct arithmetic: sharp is Σ p, quad is pᵀ Σ p, and momentum's
// draws have covariance Σ⁻¹ (so that ½ pᵀ Σ p is their energy), within
// 0.02 over 200,000 draws on entries of order 1 (a wrong transpose or
// factor fails by more than 0.3).
func TestDenseMomentum(t *testing.T) {
	cov := []float64{
		2, 0.6, -0.9,
		0.6, 1, 0.3,
		-0.9, 0.3, 1.5,
	}
	// Σ⁻¹ by the adjugate (closed form for 3 × 3)
	a, b, c := cov[0], cov[1], cov[2]
	d, e, f := cov[4], cov[5], cov[8]
	det := a*(d*f-e*e) - b*(b*f-c*e) + c*(b*e-c*d)
	inv := []float64{
		(d*f - e*e) / det, (c*e - b*f) / det, (b*e - c*d) / det,
		(c*e - b*f) / det, (a*f - c*c) / det, (b*c - a*e) / det,
		(b*e - c*d) / det, (b*c - a*e) / det, (a*d - b*b) / det,
	}
	blk := newDenseBlock([]int{0, 2, 3})
	if err := blk.set(cov); err != nil {
		t.Fatal(err)
	}
	p := []float64{0.5, 9, -1, 2}
	s := blk.sharp(p)
	pb := []float64{0.5, -1, 2}
	q := 0.0
	for r := 0; r < 3; r++ {
		want := 0.0
		for j := 0; j < 3; j++ {
			want += cov[r*3+j] * pb[j]
		}
		if math.Abs(s[r]-want) > 1e-12 {
			t.Errorf("sharp[%d] = %v, want %v", r, s[r], want)
		}
		q += want * pb[r]
	}
	if got := blk.quad(p); math.Abs(got-q) > 1e-12 {
		t.Errorf("quad = %v, want %v", got, q)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 200000
	var m [9]float64
	for it := 0; it < n; it++ {
		for i := range p {
			p[i] = rng.NormFloat64()
		}
		p[1] = 7
		blk.momentum(p)
		if p[1] != 7 {
			t.Fatalf("momentum changed a coordinate outside the block")
		}
		v := []float64{p[0], p[2], p[3]}
		for r := 0; r < 3; r++ {
			for j := 0; j < 3; j++ {
				m[r*3+j] += v[r] * v[j] / n
			}
		}
	}
	for i := range m {
		if math.Abs(m[i]-inv[i]) > 0.02 {
			t.Errorf("momentum covariance entry %d = %.4f, want Σ⁻¹'s %.4f", i, m[i], inv[i])
		}
	}
}

// TestWelfordCov: the running covariance matches the two-pass one on a
// small sample, and the regularised form is (n/(n+5)) Cov + 1e-3 (5/(n+5))
// times the start's diagonal.
func TestWelfordCov(t *testing.T) {
	xs := [][]float64{{1, 0, 2}, {3, 9, -1}, {2, 9, 0}, {5, 9, 4}, {0, 9, 1}}
	w := newWelfordCov([]int{0, 2})
	for _, x := range xs {
		w.add(x)
	}
	var m0, m2 float64
	for _, x := range xs {
		m0 += x[0] / 5
		m2 += x[2] / 5
	}
	var c00, c02, c22 float64
	for _, x := range xs {
		c00 += (x[0] - m0) * (x[0] - m0) / 4
		c02 += (x[0] - m0) * (x[2] - m2) / 4
		c22 += (x[2] - m2) * (x[2] - m2) / 4
	}
	dst := w.regularized(make([]float64, 4), []float64{2, 1, 3})
	want := []float64{0.5*c00 + 1e-3*2*0.5, 0.5 * c02, 0.5 * c02, 0.5*c22 + 1e-3*3*0.5}
	for i := range want {
		if math.Abs(dst[i]-want[i]) > 1e-12 {
			t.Errorf("regularised[%d] = %v, want %v", i, dst[i], want[i])
		}
	}
}

// TestDenseNoAlloc: with a dense block a transition and a leapfrog step
// still allocate nothing, and a leapfrog step of ε then −ε returns to the
// start (the integrator stays reversible with the block's Σ p).
func TestDenseNoAlloc(t *testing.T) {
	s := newTestNUTS(20)
	s.dense = newDenseBlock([]int{2, 5, 11})
	cov := []float64{1, 0.5, 0.2, 0.5, 2, -0.3, 0.2, -0.3, 0.7}
	if err := s.setDense(cov); err != nil {
		t.Fatal(err)
	}
	if n := testing.AllocsPerRun(200, s.transition); n != 0 {
		t.Errorf("transition allocates %v times per call, want 0", n)
	}
	if n := testing.AllocsPerRun(200, func() { s.leapfrog(&s.z, 0.1) }); n != 0 {
		t.Errorf("leapfrog allocates %v times per call, want 0", n)
	}
	s.samplePNorm(&s.z)
	q0 := append([]float64(nil), s.z.q...)
	s.leapfrog(&s.z, 0.2)
	moved := math.Abs(s.z.q[5]-q0[5]) > 1e-6
	for i := range s.z.p {
		s.z.p[i] = -s.z.p[i]
	}
	s.leapfrog(&s.z, 0.2)
	for i := range q0 {
		if math.Abs(s.z.q[i]-q0[i]) > 1e-12 {
			t.Errorf("coordinate %d: %v after a step there and back, want %v", i, s.z.q[i], q0[i])
		}
	}
	if !moved {
		t.Errorf("the block's coordinate did not move in a leapfrog step")
	}
}
