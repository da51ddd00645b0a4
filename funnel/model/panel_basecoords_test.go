package model

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestPanelBaseCoord checks a moving baseline's weights on a panel against
// their definition: the data precision a_j = sum over the regions' fitted
// weeks of phi~_j(t)^2 / sigma^2 (weeks held out left out), the decoded
// weight z_j = xi_j / sqrt(1 + a_j s_j^2) with s_j the kernel's scale at the
// decoded sd and length-scale, the start's inverse (encode), and that one
// region keeps the national coordinates.
func TestPanelBaseCoord(t *testing.T) {
	const sigma = 0.8
	mask := make([]bool, 40)
	mask[3], mask[30] = true, true
	for _, G := range []int{1, 3} {
		p := testPanelMask(t, G, 40, Demand, false, testBaseline, mask)
		p.Coords = p.Uniform(0.5)
		p.Coords.SigmaEst = sigma
		tg, err := p.Target()
		if err != nil {
			t.Fatal(err)
		}
		if G == 1 {
			if tg.bc != nil {
				t.Fatal("one region: the baseline's weights left their national coordinates")
			}
			continue
		}
		c := tg.bc
		if c == nil {
			t.Fatal("no baseline coordinates on a 3-region panel")
		}
		b := tg.base.sm.b
		for j := 0; j < b.M; j++ {
			want := 0.0
			for w := 0; w < b.T; w++ {
				if !mask[w] {
					want += float64(G) * b.phi[w*b.M+j] * b.phi[w*b.M+j]
				}
			}
			want /= sigma * sigma
			if math.Abs(c.a[j]-want) > 1e-12*want {
				t.Errorf("a[%d] = %.15g, want %.15g", j, c.a[j], want)
			}
		}
		rng := rand.New(rand.NewPCG(2, 8))
		x := make([]float64, tg.Dim())
		for i := range x {
			x[i] = 2*rng.Float64() - 1
		}
		tg.Constrain(nil, x)
		s := tg.lay.base.Baseline()
		sd, ell := tg.nat[s.SD], tg.nat[s.Len]
		if sd != math.Exp(x[tg.par[s.SD].free]) || ell != math.Exp(x[tg.par[s.Len].free]) {
			t.Fatalf("sd %g and length-scale %g, want their coordinates' exponentials", sd, ell)
		}
		sc := make([]float64, b.M)
		b.scales(sc, nil, sd, ell)
		dst := make([]float64, tg.Dim())
		copy(dst, x)
		for j := 0; j < b.M; j++ {
			xi := x[c.zFree+j]
			want := xi / math.Sqrt(1+c.a[j]*sc[j]*sc[j])
			if got := tg.nat[s.Z+j]; math.Abs(got-want) > 1e-12*math.Abs(want) {
				t.Errorf("z[%d] = %.15g, want %.15g", j, got, want)
			}
			dst[c.zFree+j] = want
		}
		c.encode(tg, dst)
		for j := 0; j < b.M; j++ {
			if math.Abs(dst[c.zFree+j]-x[c.zFree+j]) > 1e-12 {
				t.Errorf("encode gives xi[%d] = %.15g, want %.15g", j, dst[c.zFree+j], x[c.zFree+j])
			}
		}
	}
}
