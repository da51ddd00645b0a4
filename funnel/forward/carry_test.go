package forward_test

import (
	"math/rand/v2"
	"testing"

	"spillway/funnel/forward"
	"spillway/funnel/model"
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

// TestAfterIsWholeRunDrift is TestAfterIsWholeRun with drifting
// coefficients: past the data a run holds each multiplier at its last
// week's value, and so does a run from the data's carryover, bit for bit.
func TestAfterIsWholeRunDrift(t *testing.T) {
	k := newTiny(t)
	o := model.Options{Linear: map[string]bool{"audio": true}, Drift: map[string]bool{"video": true, "audio": true, "paid": true}}
	dem, _ := model.Demand(k.sc, o)
	out, _ := model.Outcome(k.sc, o)
	rng := rand.New(rand.NewPCG(8, 9))
	draw := func(st *model.Stage) []float64 {
		tg, err := st.Target()
		if err != nil {
			t.Fatal(err)
		}
		x := make([]float64, tg.Dim())
		for i := range x {
			x[i] = rng.Float64() - 0.5
		}
		return tg.Constrain(nil, x)
	}
	T, N := k.weeks, 5
	sim, err := forward.New(k.sc, dem, out)
	if err != nil {
		t.Fatal(err)
	}
	if sim, err = sim.Extend(T + N); err != nil {
		t.Fatal(err)
	}
	d := sim.Draw(draw(dem), draw(out))
	var from forward.Carryover
	sim.Carryover(&from, d, sim.Data())
	tails := [][]float64{{1.2, 0, 0.4, 2, 0}, {0.5, 0.5, 0.5, 0.5, 0}, {0, 0, 3, 0.1, 0.2}}
	whole := forward.Plan{Upper: [][]float64{append(append([]float64(nil), k.video...), tails[0]...),
		append(append([]float64(nil), k.audio...), tails[1]...)},
		Search: [][]float64{append(append([]float64(nil), k.paid...), tails[2]...)}}
	var run forward.Run
	sim.Run(&run, d, whole, nil)
	var up forward.Upper
	var p forward.Path
	moved := false
	for c := range tails[:2] {
		sim.UpperAfter(&up, d, c, tails[c], &from)
		for i := range tails[c] {
			if up.Lift.Response[i] != run.Upper[c].Lift.Response[T+i] || up.Direct.Response[i] != run.Upper[c].Direct.Response[T+i] {
				t.Errorf("channel %d week %d: after the data %v %v, whole run %v %v", c, T+i, up.Lift.Response[i], up.Direct.Response[i],
					run.Upper[c].Lift.Response[T+i], run.Upper[c].Direct.Response[T+i])
			}
		}
		moved = moved || d.Demand.Last(c) != 1
	}
	sim.SearchAfter(&p, d, 0, tails[2], &from)
	for i := range tails[2] {
		if p.Response[i] != run.Search[0].Response[T+i] {
			t.Errorf("paid search week %d: after the data %v, whole run %v", T+i, p.Response[i], run.Search[0].Response[T+i])
		}
	}
	if !moved {
		t.Error("no multiplier moved: the test checks nothing")
	}
}
