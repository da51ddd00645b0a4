package model

import (
	"math"
	"math/rand/v2"
	"testing"

	"spillway/funnel/transform"
)

// TestPanelSpreadRef checks the reference response of a panel's channel
// against its definition computed here from the data: with several
// regions the standard deviation of H(adstock(x[g]; lam); K, S) over every
// region-week (a dark region and one that shares region 1's flights
// included), with one region H(abar; K, S); and that startRef gives its
// log at the same transforms.
func TestPanelSpreadRef(t *testing.T) {
	for _, G := range []int{1, 4} {
		p := testPanel(t, G, 30, Outcome, G > 1)
		pt, err := p.Target()
		if err != nil {
			t.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(5, uint64(G)))
		x := make([]float64, pt.Dim())
		for rep := 0; rep < 3; rep++ {
			for i := range x {
				x[i] = 1.2*rng.Float64() - 0.6
			}
			g := make([]float64, pt.Dim())
			if lp := pt.LogProbGrad(g, x); math.IsInf(lp, 0) || math.IsNaN(lp) {
				t.Fatalf("G=%d: log density %v", G, lp)
			}
			checked := 0
			for _, c := range pt.coefs {
				ch := c.ch
				if ch == nil || ch.linear || !c.rescale {
					continue
				}
				tr := [3]float64{pt.nat[ch.k[1]], pt.nat[ch.k[2]], pt.nat[ch.k[3]]}
				want := transform.Hill(ch.abar, tr[1], tr[2])
				if G > 1 {
					var all []float64
					for _, s := range ch.series {
						for _, a := range transform.Adstock(nil, s.x, tr[0]) {
							all = append(all, transform.Hill(a, tr[1], tr[2]))
						}
					}
					m, ss := 0.0, 0.0
					for _, h := range all {
						m += h
					}
					m /= float64(len(all))
					for _, h := range all {
						ss += (h - m) * (h - m)
					}
					want = math.Sqrt(ss / float64(len(all)))
				}
				if math.Abs(ch.href-want) > 1e-12*want {
					t.Errorf("G=%d: href %.15g, want %.15g", G, ch.href, want)
				}
				if got := math.Exp(c.startRef(tr)); math.Abs(got-want) > 1e-12*want {
					t.Errorf("G=%d: startRef gives %.15g, want %.15g", G, got, want)
				}
				checked++
			}
			if checked == 0 {
				t.Fatalf("G=%d: no saturating channel with a sampled coefficient", G)
			}
		}
	}
}
