package allocate

import (
	"runtime"
	"sync"

	"spillway/funnel/forward"
)

// engine computes each channel's incremental outcome per draw with the
// forward simulator. Every draw's carryover from the data's weeks and its
// paths with no spend in the plan's weeks (the counterfactual, the same for
// every plan) are computed once; an evaluation then runs the plan's weeks
// and the weeks after them only.
type engine struct {
	sim    *forward.Simulator
	draws  []forward.Draw
	from   []forward.Carryover
	cfUp   [][]forward.Upper // [draw][upper channel]
	cfPaid [][]forward.Path  // [draw][paid-search channel]
	nu, ns int
	// unit[c] is channel c's spend per currency unit of its amount, in
	// scaled units, over the plan's weeks and the weeks after (zero there).
	unit    [][]float64
	scale   []float64 // channel c's spend divisor (currency per scaled unit)
	workers int
	scratch []scratch
	// evals counts channel evaluations over single draws, the cost unit
	evals int64
}

type scratch struct {
	up forward.Upper
	p  forward.Path
}

func newEngine(in Inputs, pattern [][]float64, scale []float64, after int) (*engine, error) {
	sim, err := forward.New(in.Data, in.Demand, in.Outcome)
	if err != nil {
		return nil, err
	}
	nd := len(in.DemandDraws.Rows)
	e := &engine{sim: sim, nu: len(in.Data.UpperNames), ns: len(in.Data.SearchNames),
		scale: scale, draws: make([]forward.Draw, nd), from: make([]forward.Carryover, nd),
		cfUp: make([][]forward.Upper, nd), cfPaid: make([][]forward.Path, nd)}
	n := len(pattern[0]) + after
	for c, w := range pattern {
		u := make([]float64, n)
		for t, v := range w {
			u[t] = v / scale[c]
		}
		e.unit = append(e.unit, u)
	}
	e.workers = runtime.GOMAXPROCS(0)
	e.scratch = make([]scratch, e.workers)
	zero := make([]float64, n)
	data := sim.Data()
	e.parallel(nd, func(_, d int) {
		dr := sim.Draw(in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d])
		e.draws[d] = dr
		sim.Carryover(&e.from[d], dr, data)
		e.cfUp[d] = make([]forward.Upper, e.nu)
		for c := range e.cfUp[d] {
			sim.UpperAfter(&e.cfUp[d][c], dr, c, zero, &e.from[d])
		}
		e.cfPaid[d] = make([]forward.Path, e.ns)
		for k := range e.cfPaid[d] {
			sim.SearchAfter(&e.cfPaid[d][k], dr, k, zero, &e.from[d])
		}
	})
	return e, nil
}

// parallel runs work(worker, i) for i in [0, n), spread over the workers;
// each i is done exactly once, by one worker, so results written by index
// do not depend on the number of workers.
func (e *engine) parallel(n int, work func(w, i int)) {
	workers := min(e.workers, n)
	if workers <= 1 {
		for i := 0; i < n; i++ {
			work(0, i)
		}
		return
	}
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			for i := w; i < n; i += workers {
				work(w, i)
			}
		}(w)
	}
	wg.Wait()
}

// series returns channel c's spend at amount a (currency over the plan's
// weeks), scaled, over the plan's weeks and the weeks after, in dst.
func (e *engine) series(dst []float64, c int, a float64) []float64 {
	dst = dst[:0]
	for _, u := range e.unit[c] {
		dst = append(dst, a*u)
	}
	return dst
}

// effects writes into dst[c][i] channel c's incremental outcome (outcome
// units) in draw idx[i] when it spends x[c] (scaled units, the plan's weeks
// and the weeks after); a nil x[c] is no spend (an effect of 0), and a nil
// dst[c] skips the channel. The effect is the channel's paths under x[c]
// minus its paths with no spend in those weeks, summed from the plan's
// first week (forward.Effect): via search and direct for an upper-funnel
// channel, the controlled path for paid search.
func (e *engine) effects(dst [][]float64, x [][]float64, idx []int) {
	e.parallel(len(idx), func(w, i int) {
		s := &e.scratch[w]
		d := idx[i]
		dr := e.draws[d]
		for c, xc := range x {
			if dst[c] == nil {
				continue
			}
			if xc == nil {
				dst[c][i] = 0
				continue
			}
			if c < e.nu {
				e.sim.UpperAfter(&s.up, dr, c, xc, &e.from[d])
				cf := &e.cfUp[d][c]
				dst[c][i] = forward.Effect(s.up.Via, cf.Via, 0) + forward.Effect(s.up.Direct, cf.Direct, 0)
			} else {
				k := c - e.nu
				e.sim.SearchAfter(&s.p, dr, k, xc, &e.from[d])
				dst[c][i] = forward.Effect(s.p, e.cfPaid[d][k], 0)
			}
		}
	})
	for c := range x {
		if dst[c] != nil && x[c] != nil {
			e.evals += int64(len(idx))
		}
	}
}
