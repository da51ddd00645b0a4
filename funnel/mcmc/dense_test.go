package mcmc_test

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/mcmc"
)

// mvnormal is a zero-mean normal with covariance cov (its precision kept).
type mvnormal struct {
	cov, prec *mat.SymDense
}

func newMVNormal(cov []float64) mvnormal {
	n := int(math.Sqrt(float64(len(cov))))
	c := mat.NewSymDense(n, cov)
	var ch mat.Cholesky
	if !ch.Factorize(c) {
		panic("not positive definite")
	}
	p := mat.NewSymDense(n, nil)
	if err := ch.InverseTo(p); err != nil {
		panic(err)
	}
	return mvnormal{cov: c, prec: p}
}

func (m mvnormal) Dim() int { return m.cov.SymmetricDim() }
func (m mvnormal) LogProbGrad(grad, x []float64) float64 {
	lp := 0.0
	for i := range x {
		g := 0.0
		for j := range x {
			g -= m.prec.At(i, j) * x[j]
		}
		grad[i] = g
		lp += 0.5 * g * x[i]
	}
	return lp
}
func (m mvnormal) Names() []string {
	out := make([]string, m.Dim())
	for i := range out {
		out[i] = string(rune('a' + i))
	}
	return out
}
func (m mvnormal) Constrain(dst, x []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(x))
	}
	copy(dst, x)
	return dst
}
func (m mvnormal) Clone() mcmc.Target { return m }

// ridge6 is six coordinates, two of them (b and e) on a ridge: sds 1 and 5,
// correlation -0.99, as a slope and the curve shape that trades against it;
// the other four independent with sds 0.1, 1, 3 and 0.5.
func ridge6() mvnormal {
	sd := []float64{0.1, 1, 1, 3, 5, 0.5}
	cov := make([]float64, 36)
	for i, s := range sd {
		cov[i*6+i] = s * s
	}
	cov[1*6+4], cov[4*6+1] = -0.99*1*5, -0.99*1*5
	return newMVNormal(cov)
}

// TestDenseBlock samples ridge6 with the ridge's two coordinates as a
// dense block: every second moment within 4 MCSE of the closed form
// (E[b e] = -4.95), the adapted block's variances within a factor 1.5 of
// the truth, and fewer than half the diagonal metric's leapfrog steps per
// draw on the same target (a diagonal metric's step is set by the ridge's
// width, sqrt(1 - 0.99²) = 0.14 of b's sd).
func TestDenseBlock(t *testing.T) {
	m := ridge6()
	dense, err := mcmc.Run(context.Background(), m, &mcmc.Settings{Seed: 3, DenseBlock: []int{1, 4}})
	if err != nil {
		t.Fatal(err)
	}
	checkConverged(t, dense)
	names := m.Names()
	for i := range names {
		for j := i; j < len(names); j++ {
			a, b := dense.Column(names[i]), dense.Column(names[j])
			xy := make([][]float64, len(a))
			for c := range a {
				xy[c] = make([]float64, len(a[c]))
				for k := range a[c] {
					xy[c][k] = a[c][k] * b[c][k]
				}
			}
			checkMoment(t, names[i]+names[j], xy, m.cov.At(i, j), 4)
		}
		checkMoment(t, names[i], dense.Column(names[i]), 0, 4)
	}
	for c, ch := range dense.Chains {
		for _, i := range []int{1, 4} {
			if r := ch.Stats.InvMetric[i] / m.cov.At(i, i); r < 1/1.5 || r > 1.5 {
				t.Errorf("chain %d: block variance %d is %.3g of the truth, want within a factor 1.5", c+1, i, r)
			}
		}
	}
	diag, err := mcmc.Run(context.Background(), m, &mcmc.Settings{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	steps := func(f *mcmc.Fit) float64 {
		s := 0.0
		for _, ch := range f.Chains {
			s += ch.Stats.MeanLeapfrogs / float64(len(f.Chains))
		}
		return s
	}
	if d, g := steps(dense), steps(diag); !(d < g/2) {
		t.Errorf("leapfrog steps per draw: dense block %.1f, diagonal %.1f; want under half", d, g)
	}
	t.Logf("leapfrog steps per draw: dense block %.1f, diagonal %.1f", steps(dense), steps(diag))
}

// TestDenseBlockChecked: a block that is not increasing or leaves the
// target is refused before sampling.
func TestDenseBlockChecked(t *testing.T) {
	for _, blk := range [][]int{{4, 1}, {1, 6}, {-1}, {2, 2}} {
		if _, err := mcmc.Run(context.Background(), ridge6(), &mcmc.Settings{Draws: 10, Warmup: 10, DenseBlock: blk}); err == nil {
			t.Errorf("dense block %v: no error", blk)
		}
	}
}
