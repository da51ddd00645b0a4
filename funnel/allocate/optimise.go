package allocate

import (
	"errors"
	"math"
	"time"

	"gonum.org/v1/gonum/optimize"
)

// thinTo is the number of draws the search from several starts runs on;
// the best plan found is then polished on every draw.
const thinTo = 500

// Optimise returns the plan that maximises the objective within the
// limits and the budget, with its evaluation (Evaluate) and, for the
// posterior mean, the check of its first-order conditions.
func (p *Problem) Optimise() (*Result, error) {
	t0 := time.Now()
	e0 := p.eng.evals
	n := len(p.names)
	a := make([]float64, n)
	var free []int
	rest := p.budgetC
	for c := range a {
		if p.locked[c] {
			a[c] = float64(p.minC[c]) / 100
			rest -= p.minC[c]
		} else {
			free = append(free, c)
		}
	}
	st := Stats{}
	switch len(free) {
	case 0:
	case 1:
		a[free[0]] = float64(rest) / 100
	default:
		var err error
		if a, err = p.find(a, free, float64(rest)/100, &st); err != nil {
			return nil, err
		}
	}
	planned, err := p.roundToCents(a)
	if err != nil {
		return nil, err
	}
	r, err := p.evaluate(planned, true)
	if err != nil {
		return nil, err
	}
	st.Evaluations = float64(p.eng.evals-e0) / float64(len(p.eng.draws)*n)
	st.Seconds = time.Since(t0).Seconds()
	r.Stats = st
	return r, nil
}

// Stats say what an optimisation cost.
type Stats struct {
	// Starts is the number of plans the search started from.
	Starts int
	// Evaluations counts evaluations of the whole plan on every draw
	// (channel evaluations on single draws, divided by channels x draws).
	Evaluations float64
	// Seconds is the wall time of Optimise.
	Seconds float64
	// Status is how the final polish ended (gonum/optimize's status).
	Status string
}

// find finds the free channels' amounts: starts on a thinned set of
// draws, the best polished on all of them, then channels next to a limit
// set on it and the rest polished again.
func (p *Problem) find(a []float64, free []int, total float64, st *Stats) ([]float64, error) {
	nd := len(p.eng.draws)
	all := make([]int, nd)
	for i := range all {
		all[i] = i
	}
	thin := all
	if step := nd / thinTo; step > 1 {
		thin = nil
		for i := 0; i < nd; i += step {
			thin = append(thin, i)
		}
	}
	lo, hi := make([]float64, len(free)), make([]float64, len(free))
	for i, c := range free {
		lo[i] = float64(p.minC[c]) / 100
		hi[i] = total
		if p.maxC[c] != noMax {
			hi[i] = math.Min(hi[i], float64(p.maxC[c])/100)
		}
	}
	bs := newBoxSimplex(lo, hi, total)
	starts := p.starts(a, free, total, bs)
	st.Starts = len(starts)
	full := newObjective(p, all)
	// the objective is divided by the posterior mean of the current plan's
	// incremental outcome (or, if that is zero, the first start's), for
	// either objective, so tolerances are relative
	meanOutcome := func(a []float64) float64 {
		full.value(a)
		v := 0.0
		for _, m := range full.lastMu {
			v += m
		}
		return math.Abs(v)
	}
	cur := amounts(p.curC)
	scale := meanOutcome(cur)
	if scale == 0 || math.IsNaN(scale) {
		place(cur, free, bs, starts[0])
		scale = meanOutcome(cur)
	}
	if scale == 0 || math.IsNaN(scale) {
		scale = 1
	}
	coarse := full
	if len(thin) < nd {
		coarse = newObjective(p, thin)
	}
	var best []float64
	bestVal := math.Inf(-1)
	for _, z0 := range starts {
		z, v, _, err := p.minimise(coarse, bs, a, free, z0, scale, 1e-6, false)
		if err != nil {
			return nil, err
		}
		if v > bestVal {
			best, bestVal = z, v
		}
	}
	z, _, status, err := p.minimise(full, bs, a, free, best, scale, 1e-10, true)
	if err != nil {
		return nil, err
	}
	st.Status = status
	out := append([]float64(nil), a...)
	place(out, free, bs, z)
	return p.activeSet(full, out, free, scale)
}

// starts returns the coordinates of the plans the search starts from: the
// current plan scaled to the budget, an even split, and each free channel
// taking most of it.
func (p *Problem) starts(a []float64, free []int, total float64, bs *boxSimplex) [][]float64 {
	m := len(free)
	var plans [][]float64
	cur, sum := make([]float64, m), 0.0
	for i, c := range free {
		cur[i] = float64(p.curC[c])
		sum += cur[i]
	}
	if sum > 0 {
		for i := range cur {
			cur[i] *= total / sum
		}
		plans = append(plans, cur)
	}
	even := make([]float64, m)
	for i := range even {
		even[i] = total / float64(m)
	}
	plans = append(plans, even)
	for j := 0; j < m; j++ {
		heavy := make([]float64, m)
		for i := range heavy {
			heavy[i] = 0.2 * total / float64(m-1)
		}
		heavy[j] = 0.8 * total
		plans = append(plans, heavy)
	}
	var out [][]float64
	for _, pl := range plans {
		z := make([]float64, bs.dim())
		bs.coords(z, pl, 0.01)
		out = append(out, z)
	}
	return out
}

// place writes the free channels' amounts at z into a.
func place(a []float64, free []int, bs *boxSimplex, z []float64) {
	af := make([]float64, len(free))
	bs.amounts(af, z)
	for i, c := range free {
		a[c] = af[i]
	}
}

// minimise maximises obj over the free channels from z0 with gonum's BFGS
// (posterior mean, gradient by forward differences) or Nelder-Mead (a
// quantile), and returns the best point it evaluated, its value and how the
// run ended. The objective is divided by scale so tol is relative.
func (p *Problem) minimise(obj *objective, bs *boxSimplex, fixed []float64, free []int, z0 []float64, scale, tol float64, polish bool) ([]float64, float64, string, error) {
	n := len(fixed)
	a := append([]float64(nil), fixed...)
	mask := make([]bool, n)
	for _, c := range free {
		mask[c] = true
	}
	h := make([]float64, n)
	for _, c := range free {
		h[c] = 1e-6 * bs.total
	}
	best := append([]float64(nil), z0...)
	bestVal := math.Inf(-1)
	f := func(z []float64) float64 {
		place(a, free, bs, z)
		v := obj.value(a)
		if v > bestVal {
			bestVal = v
			copy(best, z)
		}
		return -v / scale
	}
	ga, gaf := make([]float64, n), make([]float64, len(free))
	grad := func(g, z []float64) {
		place(a, free, bs, z)
		obj.marginal(ga, a, h, mask)
		for i, c := range free {
			gaf[i] = -ga[c] / scale
		}
		bs.gradient(g, z, gaf)
	}
	prob := optimize.Problem{Func: f}
	var method optimize.Method
	var settings *optimize.Settings
	if p.quantile == 0 {
		// BFGS's major iterations are steps along a search direction: two
		// without progress end the run. The gradient threshold (in z, the
		// objective divided by scale) is far below what holds the
		// marginal returns equal to 1e-4 relatively, and above the noise
		// of the forward differences.
		prob.Grad = grad
		method = &optimize.BFGS{}
		settings = &optimize.Settings{
			Converger:         &optimize.FunctionConverge{Absolute: tol, Relative: tol, Iterations: 2},
			GradientThreshold: 1e-7,
			MajorIterations:   100,
			FuncEvaluations:   100,
		}
		if !polish {
			settings.FuncEvaluations = 50
		}
	} else {
		// Nelder-Mead's major iterations are single moves of the simplex,
		// many of which do not improve the best vertex. A polish starts
		// next to the optimum, with a small simplex.
		nm := &optimize.NelderMead{SimplexSize: 1}
		settings = &optimize.Settings{
			Converger:       &optimize.FunctionConverge{Absolute: tol, Relative: tol, Iterations: 30},
			FuncEvaluations: 400,
		}
		if polish {
			nm.SimplexSize = 0.05
			settings.Converger = &optimize.FunctionConverge{Absolute: tol, Relative: tol, Iterations: 10}
			settings.FuncEvaluations = 60
		}
		method = nm
	}
	res, err := optimize.Minimize(prob, z0, settings, method)
	status := ""
	if res != nil {
		status = res.Status.String()
	}
	if err != nil && !errors.Is(err, optimize.ErrLinesearcherFailure) && !errors.Is(err, optimize.ErrNoProgress) {
		// a line search that cannot improve further ends at the best point
		// so far; anything else is a failure
		if math.IsInf(bestVal, -1) {
			return nil, 0, status, err
		}
		status += " (" + err.Error() + ")"
	}
	return best, bestVal, status, nil
}

// activeSet sets free channels that ended next to a limit on it and
// polishes the others again, as long as that does not lower the
// objective.
func (p *Problem) activeSet(obj *objective, a []float64, free []int, scale float64) ([]float64, error) {
	for range free {
		val := obj.value(a)
		b := append([]float64(nil), a...)
		var inner []int
		rest := 0.0
		moved := false
		for _, c := range free {
			lo, hi := float64(p.minC[c])/100, math.Inf(1)
			if p.maxC[c] != noMax {
				hi = float64(p.maxC[c]) / 100
			}
			near := 1e-3 * (math.Min(hi, obj.p.Budget()) - lo)
			switch {
			case b[c]-lo <= near:
				moved = moved || b[c] != lo
				b[c] = lo
			case hi-b[c] <= near:
				moved = moved || b[c] != hi
				b[c] = hi
			default:
				inner = append(inner, c)
				rest += b[c]
			}
		}
		if !moved {
			return a, nil
		}
		// what the limits freed or took goes to the channels inside them
		total := 0.0
		for _, c := range free {
			if !containsInt(inner, c) {
				total += b[c]
			}
		}
		left := 0.0
		for c := range b {
			if !containsInt(free, c) {
				left += b[c]
			}
		}
		total = p.Budget() - left - total // what the inner channels share
		switch len(inner) {
		case 0:
			// every channel on a limit: the limits must then add up to
			// what they share, to the cent that rounding settles
			if math.Abs(total) > 0.01 {
				return a, nil
			}
		case 1:
			b[inner[0]] = total
		default:
			lo, hi := make([]float64, len(inner)), make([]float64, len(inner))
			start := make([]float64, len(inner))
			for i, c := range inner {
				lo[i], hi[i] = float64(p.minC[c])/100, total
				if p.maxC[c] != noMax {
					hi[i] = math.Min(hi[i], float64(p.maxC[c])/100)
				}
				start[i] = b[c] * total / rest
			}
			bs := newBoxSimplex(lo, hi, total)
			z0 := make([]float64, bs.dim())
			bs.coords(z0, start, 1e-9)
			z, _, _, err := p.minimise(obj, bs, b, inner, z0, scale, 1e-10, true)
			if err != nil {
				return nil, err
			}
			place(b, inner, bs, z)
		}
		if !p.feasible(b) || obj.value(b) < val-1e-12*math.Abs(val) {
			return a, nil
		}
		a = b
	}
	return a, nil
}

func containsInt(s []int, v int) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}

// feasible reports whether amounts a keep every limit, to a cent.
func (p *Problem) feasible(a []float64) bool {
	for c, v := range a {
		if v < float64(p.minC[c])/100-0.01 || (p.maxC[c] != noMax && v > float64(p.maxC[c])/100+0.01) {
			return false
		}
	}
	return true
}
