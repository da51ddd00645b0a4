package model

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestPanelKernelsBits checks axpys and dots against one loop per series,
// bit for bit, for every count of series from none to nine (each
// remainder of four) on values whose sums round differently in another
// order.
func TestPanelKernelsBits(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	val := func() float64 { return math.Ldexp(rng.NormFloat64(), rng.IntN(60)-30) }
	for _, T := range []int{1, 7, 156} {
		for J := 0; J <= 9; J++ {
			x := make([][]float64, J)
			b := make([]float64, J)
			for j := range x {
				b[j] = val()
				x[j] = make([]float64, T)
				for i := range x[j] {
					x[j][i] = val()
				}
			}
			w := make([]float64, T)
			for i := range w {
				w[i] = val()
			}
			m := val()
			// one pass per series
			want := make([]float64, T)
			for i := range want {
				want[i] = m
			}
			for j := range x {
				for i, v := range x[j] {
					want[i] += b[j] * v
				}
			}
			start := make([]float64, J)
			wantS := make([]float64, J)
			for j := range x {
				start[j] = val()
				wantS[j] = start[j]
				for i, v := range x[j] {
					wantS[j] += w[i] * v
				}
			}
			got := make([]float64, T)
			axpys(got, m, b, x)
			for i := range got {
				if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
					t.Fatalf("T=%d, %d series: axpys week %d %v, want %v", T, J, i, got[i], want[i])
				}
			}
			gotS := append([]float64(nil), start...)
			dots(gotS, w, x)
			for j := range gotS {
				if math.Float64bits(gotS[j]) != math.Float64bits(wantS[j]) {
					t.Fatalf("T=%d, %d series: dots series %d %v, want %v", T, J, j, gotS[j], wantS[j])
				}
			}
		}
	}
}
