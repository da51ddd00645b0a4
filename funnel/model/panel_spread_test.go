package model

import (
	"math"
	"math/rand/v2"
	"testing"

	"spillway/funnel/mcmc/mcmctest"
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

// TestPanelRegionRef checks the reference responses region by region that
// a channel's coefficients take in their conditional coordinates (condCoef)
// against their definition computed here from the data: rho[g] the log of
// the standard deviation of region g's own H(adstock(x[g]; lam); K, S) over
// its weeks, a region whose spend never changes (the dark region) at the
// panel's log href; that startRefs gives them at the same transforms; and
// that region g's coefficient is exp(m[g] + xi[g]/sqrt(P[g]) - rho[g]), so
// that xi[g] moves the coefficient times the region's own spread; and the
// gradient against finite differences when the dark region has an
// estimate, where rho's derivatives there are href's.
func TestPanelRegionRef(t *testing.T) {
	p := testPanel(t, 4, 30, Outcome, true)
	p.Coords = randomCoords(p, 9)
	p.Coords.CoefConditional = true
	p.Coords.CoefOwnSpread = true
	pt, err := p.Target()
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(6, 1))
	x := make([]float64, pt.Dim())
	flats := 0
	for rep := 0; rep < 3; rep++ {
		for i := range x {
			x[i] = 1.2*rng.Float64() - 0.6
		}
		g := make([]float64, pt.Dim())
		if lp := pt.LogProbGrad(g, x); math.IsInf(lp, 0) || math.IsNaN(lp) {
			t.Fatalf("log density %v", lp)
		}
		checked := 0
		for _, c := range pt.coefs {
			ch := c.ch
			if ch == nil || ch.linear || !c.rescale || c.cc == nil {
				continue
			}
			if ch.regional == nil || c.grho == nil {
				t.Fatal("a saturating channel in conditional coordinates without regional references")
			}
			tr := [3]float64{pt.nat[ch.k[1]], pt.nat[ch.k[2]], pt.nat[ch.k[3]]}
			refs := c.startRefs(tr)
			flat := 0
			for r, s := range ch.series {
				want := math.Log(ch.href)
				if ch.regional[r] {
					var m, ss float64
					hs := transform.Adstock(nil, s.x, tr[0])
					for i, a := range hs {
						hs[i] = transform.Hill(a, tr[1], tr[2])
						m += hs[i]
					}
					m /= float64(len(hs))
					for _, h := range hs {
						ss += (h - m) * (h - m)
					}
					want = 0.5 * math.Log(ss/float64(len(hs)))
				} else {
					flat++
				}
				if math.Abs(ch.rho[r]-want) > 1e-12*math.Abs(want) {
					t.Errorf("region %d: rho %.15g, want %.15g", r, ch.rho[r], want)
				}
				if math.Abs(refs[r]-want) > 1e-12*math.Abs(want) {
					t.Errorf("region %d: startRefs gives %.15g, want %.15g", r, refs[r], want)
				}
				v := math.Exp(c.cc.m[r] + x[c.block+r]/math.Sqrt(c.cc.p[r]) - ch.rho[r])
				if math.Abs(c.v[r]-v) > 1e-12*v {
					t.Errorf("region %d: coefficient %.15g, want %.15g", r, c.v[r], v)
				}
			}
			for r, s := range ch.series {
				if ch.regional[r] == constant(s.x) {
					t.Errorf("region %d: regional %v with spend %v", r, ch.regional[r], s.x)
				}
			}
			flats += flat
			checked++
		}
		if checked == 0 {
			t.Fatal("no saturating channel in conditional coordinates")
		}
	}
	if flats == 0 {
		t.Error("no region whose spend never changes: the dark region was not checked")
	}
	// Without CoefOwnSpread every region is referenced to the panel's
	// href: no region's own spread is computed, and theta[g] is
	// exp(m[g] + xi[g]/sqrt(P[g])) / href.
	p.Coords.CoefOwnSpread = false
	if pt, err = p.Target(); err != nil {
		t.Fatal(err)
	}
	if lp := pt.LogProbGrad(make([]float64, pt.Dim()), x); math.IsInf(lp, 0) || math.IsNaN(lp) {
		t.Fatalf("log density %v", lp)
	}
	for _, c := range pt.coefs {
		if c.ch == nil || c.cc == nil {
			continue
		}
		if c.ch.regional != nil || c.grho != nil {
			t.Fatal("regional references without CoefOwnSpread")
		}
		for r := range c.v {
			v := math.Exp(c.cc.m[r]+x[c.block+r]/math.Sqrt(c.cc.p[r])) / c.ch.href
			if math.Abs(c.v[r]-v) > 1e-12*v {
				t.Errorf("panel reference, region %d: coefficient %.15g, want %.15g", r, c.v[r], v)
			}
		}
	}
	// The dark region with an estimate of its own (randomCoords leaves it
	// none): its centre then weighs the estimate against the hierarchy, so
	// its reference, the panel's href, must pass its derivatives on too.
	for k := range p.Coords.CoefLog {
		p.Coords.CoefLog[k][1] = -1
	}
	pt, err = p.Target()
	if err != nil {
		t.Fatal(err)
	}
	if r := mcmctest.CheckGradient(t, pt, 1e-5, &mcmctest.GradSettings{Seed: 7, Points: 6, Radius: 1}); r.Checked < 4 {
		t.Fatalf("only %d points had a finite density", r.Checked)
	}
}
