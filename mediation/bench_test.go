package mediation

import (
	"math/rand/v2"
	"spillway/funnel/window"
	"testing"

	"spillway/funnel/model"
)

// BenchmarkSplit times the per-draw work of spillway split on 156 weeks and
// 4000 paired draws: the effects (13 windows), the sensitivity, the fitted
// values and the response curves.
func BenchmarkSplit(b *testing.B) {
	t := &testing.T{}
	sc, st1, st2, _, _ := synth(t, 156, 7, model.Options{})
	for _, raw := range sc.RawUpper {
		sc.UpperScale = append(sc.UpperScale, model.SpendScale(raw))
	}
	rng := rand.New(rand.NewPCG(7, 8))
	draw := func(st *model.Stage) []float64 {
		v := make([]float64, len(st.Names()))
		for i, n := range st.Names() {
			switch n[0] {
			case 'l':
				v[i] = 0.2 + 0.6*rng.Float64()
			case 'K', 'S':
				v[i] = 0.5 + rng.Float64()
			default:
				v[i] = 0.05 + 0.4*rng.Float64()
			}
		}
		return v
	}
	in := &Inputs{Data: sc, Demand: st1, Outcome: st2,
		DemandDraws: Draws{Names: st1.Names()}, OutcomeDraws: Draws{Names: st2.Names()}}
	for range 4000 {
		in.DemandDraws.Rows = append(in.DemandDraws.Rows, draw(st1))
		in.OutcomeDraws.Rows = append(in.OutcomeDraws.Rows, draw(st2))
	}
	wins := window.Quarters(sc.Weeks)
	b.Run("effects", func(b *testing.B) {
		for b.Loop() {
			if _, err := Split(in, wins); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("sensitivity", func(b *testing.B) {
		for b.Loop() {
			if _, err := Sensitivities(in, RhoGrid()); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("fitted", func(b *testing.B) {
		for b.Loop() {
			if _, err := Fitted(in, 1); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("curves", func(b *testing.B) {
		for b.Loop() {
			if _, err := Curves(in, 41); err != nil {
				b.Fatal(err)
			}
		}
	})
}
