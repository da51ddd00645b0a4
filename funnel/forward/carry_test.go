package forward_test

import (
	"testing"

	"spillway/funnel/forward"
)

// TestAfterIsWholeRun holds a budget plan evaluated from the data's
// carryover to the same plan run from the data's first week, bit for bit:
// every path's gain and every week's response after the data, and so every
// effect computed from them.
func TestAfterIsWholeRun(t *testing.T) {
	k := newTiny(t)
	T, N := k.weeks, 7
	sim, err := forward.New(k.sc, k.demand, k.outcome)
	if err != nil {
		t.Fatal(err)
	}
	if sim, err = sim.Extend(T + N); err != nil {
		t.Fatal(err)
	}
	d := sim.Draw(k.v1, k.v2)
	var from forward.Carryover
	sim.Carryover(&from, d, sim.Data())
	tails := [][]float64{{1.2, 0, 0.4, 2, 0, 0, 0}, {0.5, 0.5, 0.5, 0.5, 0, 0, 0}, {0, 0, 3, 0.1, 0.2, 0, 0}}
	whole := forward.Plan{Upper: [][]float64{append(append([]float64(nil), k.video...), tails[0]...),
		append(append([]float64(nil), k.audio...), tails[1]...)},
		Search: [][]float64{append(append([]float64(nil), k.paid...), tails[2]...)}}
	var run forward.Run
	sim.Run(&run, d, whole, nil)
	same := func(what string, got, want forward.Path) {
		t.Helper()
		if got.Gain != want.Gain {
			t.Errorf("%s: gain %v, whole run %v", what, got.Gain, want.Gain)
		}
		for i, v := range got.Response {
			if v != want.Response[T+i] {
				t.Errorf("%s week %d: %v, whole run %v", what, T+i, v, want.Response[T+i])
			}
		}
	}
	var up forward.Upper
	for c, name := range []string{"video", "audio"} {
		sim.UpperAfter(&up, d, c, tails[c], &from)
		same(name+" lift", up.Lift, run.Upper[c].Lift)
		same(name+" via search", up.Via, run.Upper[c].Via)
		same(name+" direct", up.Direct, run.Upper[c].Direct)
	}
	var p forward.Path
	sim.SearchAfter(&p, d, 0, tails[2], &from)
	same("paid search", p, run.Search[0])

	// and nothing is allocated once the buffers have grown
	if a := testing.AllocsPerRun(20, func() {
		sim.Carryover(&from, d, sim.Data())
		sim.UpperAfter(&up, d, 0, tails[0], &from)
		sim.SearchAfter(&p, d, 0, tails[2], &from)
	}); a != 0 {
		t.Errorf("%v allocations per evaluation", a)
	}
}
