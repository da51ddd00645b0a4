package model

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"spillway/funnel/stat"
)

// TestPanelOneRegionBaseline checks that with one region the panel with a
// moving baseline is the national stage with a moving baseline (issue 12:
// with one region the panel reduces to the national model): the two
// targets have the same dimension, map every point to the same DESIGN.md
// parameters (Constrain) and differ in log density by one constant over
// random points, for each stage, with and without weeks held out, and with
// a drifting channel beside the baseline. The coordinates coincide, so the
// equal densities are the same posterior (no Jacobian to compare).
func TestPanelOneRegionBaseline(t *testing.T) {
	const T = 40
	held := make([]bool, T)
	for i := 30; i < 36; i++ {
		held[i] = true
	}
	withDrift := testDrift
	withDrift.Baseline = BaselineSmooth
	for _, b := range panelBuilds {
		for _, oc := range []struct {
			name string
			o    Options
		}{{"baseline", testBaseline}, {"baseline and drift", withDrift}} {
			for _, mask := range [][]bool{nil, held} {
				name := fmt.Sprintf("%s %s masked=%v", b.name, oc.name, mask != nil)
				p := testPanelMask(t, 1, T, b.build, false, oc.o, mask)
				pt, err := p.Target()
				if err != nil {
					t.Fatal(err)
				}
				sc := testScaled(T, 20) // testPanelMask's region 1
				sc.Mask = mask
				st, err := b.build(sc, oc.o)
				if err != nil {
					t.Fatal(err)
				}
				nt, err := st.Target()
				if err != nil {
					t.Fatal(err)
				}
				if pt.base == nil || nt.Dim() != pt.Dim() {
					t.Fatalf("%s: panel dimension %d (baseline %v), national %d", name, pt.Dim(), pt.base != nil, nt.Dim())
				}
				rng := rand.New(rand.NewPCG(31, 7))
				x := make([]float64, nt.Dim())
				var c0 float64
				for rep := 0; rep < 8; rep++ {
					for i := range x {
						x[i] = 1.6*rng.Float64() - 0.8
					}
					vp, vn := pt.Constrain(nil, x), nt.Constrain(nil, x)
					for i := range vn {
						if math.Abs(vp[i]-vn[i]) > 1e-10*math.Max(1, math.Abs(vn[i])) {
							t.Fatalf("%s: %s is %v in the panel, %v nationally", name, st.Names()[i], vp[i], vn[i])
						}
					}
					d := pt.LogProb(x) - nt.LogProb(x)
					if rep == 0 {
						c0 = d
						continue
					}
					if math.Abs(d-c0) > 1e-8*math.Max(1, math.Abs(nt.LogProb(x))) {
						t.Errorf("%s point %d: panel lp - national lp = %.10g, first point %.10g", name, rep, d, c0)
					}
				}
			}
		}
	}
}

// TestPanelRegionBaseline checks that every region's national-shaped draw
// carries the panel's one baseline: read through each region's own stage
// layout (Params.AddBaseline, what the forward simulator adds), it is the
// base layout's week for week, not zero, and the regions' stages have no
// trend line.
func TestPanelRegionBaseline(t *testing.T) {
	p := testPanelOpts(t, 3, 20, Outcome, false, testBaseline)
	l := p.Layout()
	v := make([]float64, l.Len())
	for i := range v {
		v[i] = 0.2 + 0.1*math.Sin(float64(i))
	}
	base := l.Base().View(v[:l.Base().Len()]).Baseline(make([]float64, 22))
	if base == nil || math.Abs(base[0]) < 1e-3 {
		t.Fatalf("base layout's baseline %v, want one that moves", base)
	}
	for g, st := range p.Stages {
		for _, r := range st.Regressors {
			if r.Trend {
				t.Errorf("region %d: trend regressor %s beside the moving baseline", g, r.Name)
			}
		}
		got := st.Layout().View(l.Region(nil, v, g)).Baseline(make([]float64, 22))
		for w := range base {
			if got[w] != base[w] {
				t.Fatalf("region %d week %d: baseline %v, the panel's %v", g, w, got[w], base[w])
			}
		}
	}
}

// TestPanelBaselineStart checks the start the panel offers the sampler
// with a moving baseline (6 regions x 104 weeks): the least squares behind
// the coordinates put a trend line in the baseline's place (adding 0.4 tau
// to every region's response moves the shared slope, Coords.BaseSlope, by
// 0.4), the start's baseline is that line less its mean within 0.02 over
// the weeks, its weights within 1.5 of zero, its length-scale MinLength,
// the start point's log density above that of 20 of the sampler's usual
// starts, and every start variance in (0, 1].
func TestPanelBaselineStart(t *testing.T) {
	const T = 104
	for _, b := range panelBuilds[:2] {
		slope := func(shift float64) (*PanelTarget, *Panel) {
			p := testPanelOpts(t, 6, T, b.build, true, testBaseline)
			tau := trendLine(T)
			for _, st := range p.Stages {
				y := append([]float64(nil), st.Y...)
				for i := range y {
					y[i] += shift * tau[i]
				}
				st.Y = y
			}
			var err error
			if p.Coords, err = ChooseCoordinates(p); err != nil {
				t.Fatal(err)
			}
			tg, err := p.Target()
			if err != nil {
				t.Fatal(err)
			}
			return tg, p
		}
		t0, _ := slope(0)
		tg, p := slope(0.4)
		s0, s1 := t0.coords.BaseSlope, tg.coords.BaseSlope
		if math.IsNaN(s1) || math.Abs(s1-s0-0.4) > 1e-9 {
			t.Fatalf("%s: shared slope %v, %v without the added line: want 0.4 more", b.name, s1, s0)
		}
		x0 := make([]float64, tg.Dim())
		if !tg.StartPoint(x0) {
			t.Fatalf("%s: no start point", b.name)
		}
		v := tg.Constrain(nil, x0)
		l := p.Layout().Base()
		s := l.Baseline()
		f := l.View(v[:l.Len()]).Baseline(make([]float64, T))
		tau := trendLine(T)
		mean := stat.Mean(tau)
		for i := range f {
			if d := f[i] - s1*(tau[i]-mean); math.Abs(d) > 0.02 {
				t.Fatalf("%s week %d: start baseline %.4f, the shared line %.4f", b.name, i, f[i], s1*(tau[i]-mean))
			}
		}
		if math.Abs(v[s.Len]-MinLength) > 1e-9 {
			t.Errorf("%s: start length-scale %v, want %v", b.name, v[s.Len], MinLength)
		}
		for j := 0; j < s.Basis.M; j++ {
			if z := v[s.Z+j]; math.Abs(z) > 1.5 {
				t.Errorf("%s: start weight %d is %.3f", b.name, j+1, z)
			}
		}
		checkStart(t, b.name, tg, x0)
	}
}
