package mediation

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// TestOmittedControlRho checks the closed form against the sample
// correlation of simulated errors that leave the control out.
func TestOmittedControlRho(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	for _, c := range []struct{ phiQ, phiY, sigmaQ, sigmaY, varZ float64 }{
		{-0.024, -0.076, 0.035, 0.041, 1}, // about the demo's price at the posterior mean
		{0.5, -0.2, 1, 0.3, 2},
		{0, 0.7, 0.2, 0.2, 1},
	} {
		const n = 200000
		eq, ey := make([]float64, n), make([]float64, n)
		sz := math.Sqrt(c.varZ)
		for i := range n {
			z := sz * rng.NormFloat64()
			eq[i] = c.phiQ*z + c.sigmaQ*rng.NormFloat64()
			ey[i] = c.phiY*z + c.sigmaY*rng.NormFloat64()
		}
		want := stat.Correlation(eq, ey, nil)
		got := OmittedControlRho(c.phiQ, c.phiY, c.sigmaQ, c.sigmaY, c.varZ)
		// sd of a sample correlation is below 1/sqrt(n) = 0.0022
		if math.Abs(got-want) > 0.01 {
			t.Errorf("%+v: %.4f, simulated %.4f", c, got, want)
		}
	}
	if got := OmittedControlRho(1, 1, 0, 0, 1); got != 1 {
		t.Errorf("a control that is the whole error: rho %v, want 1", got)
	}
}
