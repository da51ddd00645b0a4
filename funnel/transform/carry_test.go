package transform

import (
	"math/rand/v2"
	"testing"
)

// TestAdstockFrom holds a run continued from its carryover to the whole
// run bit for bit, at every split point, and checks the first week by
// DESIGN.md's recursion with a[-1] = a0.
func TestAdstockFrom(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	x := make([]float64, 40)
	for i := range x {
		if rng.Float64() < 0.7 {
			x[i] = 2 * rng.Float64()
		}
	}
	for _, lam := range []float64{0, 0.3, 0.9, 0.99} {
		whole := Adstock(nil, x, lam)
		for cut := 0; cut <= len(x); cut++ {
			a0 := AdstockEnd(x[:cut], lam, 0)
			if cut > 0 && a0 != whole[cut-1] {
				t.Fatalf("lam %v cut %d: end %v, whole run %v", lam, cut, a0, whole[cut-1])
			}
			tail := AdstockFrom(nil, x[cut:], lam, a0)
			for i, v := range tail {
				if v != whole[cut+i] {
					t.Fatalf("lam %v cut %d week %d: continued %v, whole run %v", lam, cut, cut+i, v, whole[cut+i])
				}
			}
		}
		// no spend after the cut: the carryover decays geometrically
		a := AdstockFrom(nil, make([]float64, 3), lam, 1.5)
		if want := 1.5 * lam * lam * lam; a[2] != lam*(lam*(lam*1.5)) || !near(a[2], want) {
			t.Errorf("lam %v: a[2] %v, want %v", lam, a[2], want)
		}
	}
}

func near(a, b float64) bool { return a-b < 1e-15 && b-a < 1e-15 }
