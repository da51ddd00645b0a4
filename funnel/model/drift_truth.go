package model

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// FromFixed returns the constrained draw of st (Names order) that describes
// what the draw v of fixed describes, where fixed is the stage of the same
// data and options without drifting coefficients and with the trend line
// (Options without Drift and Baseline): true parameters given for the
// default model (truth.json) made a draw of a drift or moving-baseline
// model, so that recovery can simulate from them and compare a drift fit
// with them.
//
// Every parameter the two stages share keeps its value. A drifting
// coefficient gets weights 0: a multiplier of 1 in every week (its sd and
// length-scale then do not matter; they are set to the priors' scale). A
// moving baseline takes the trend line: its level, b times tau's mean over
// the fitted weeks, goes to the intercept, and the rest, b (tau - its
// mean), to the smooth function as its least-squares projection on the
// basis over the fitted weeks (a line is not exactly in the span of the
// sines, so the draw's baseline is the projection; FromFixed returns how
// far it departs from the line at most, in the stage's scaled units).
func (st *Stage) FromFixed(fixed *Stage, v []float64) (out []float64, maxDev float64, err error) {
	lf, l := fixed.Layout(), st.Layout()
	if len(v) != lf.Len() {
		return nil, 0, fmt.Errorf("model: %d values for the %s stage's %d parameters", len(v), fixed.Name, lf.Len())
	}
	byName := make(map[string]float64, len(v))
	for i, n := range lf.Names() {
		byName[n] = v[i]
	}
	out = make([]float64, l.Len())
	set := make([]bool, l.Len())
	for i, n := range l.Names() {
		if x, ok := byName[n]; ok {
			out[i], set[i] = x, true
		}
	}
	flat := func(s SmoothSlots, sd float64) {
		out[s.SD], out[s.Len] = sd, MinLength
		set[s.SD], set[s.Len] = true, true
		for j := 0; j < s.Basis.M; j++ {
			set[s.Z+j] = true // 0
		}
		if s.Jump >= 0 {
			out[s.Jump], set[s.Jump] = PriorJumpSD.P1, true
			for k := 1; k <= s.Basis.J(); k++ {
				set[s.Jump+k] = true // 0
			}
		}
	}
	for _, cs := range l.Channels() {
		if cs.Drift.Has() {
			flat(cs.Drift, PriorDriftSD.P1)
		}
	}
	if bl := l.Baseline(); bl.Has() {
		flat(bl, PriorBaseSD.P1)
		for i, r := range fixed.Regressors {
			if !r.Trend {
				continue
			}
			maxDev = lineAsSmooth(bl, fixed.Mask, r.X, v[lf.RegressorSlot(i)], out, l.InterceptSlot())
		}
	}
	for i, ok := range set {
		if !ok {
			return nil, 0, fmt.Errorf("model: the %s stage's %s has no value in a draw of the model without drift", st.Name, l.Names()[i])
		}
	}
	return out, maxDev, nil
}

// lineAsSmooth writes the line b tau into out as the intercept's share
// (b mean(tau)) and the smooth function's weights (the least-squares
// projection of b (tau - mean(tau)) on the basis over the weeks mask
// leaves in, at out's sd and length-scale), and returns the projection's
// largest departure from the line over those weeks.
func lineAsSmooth(s SmoothSlots, mask []bool, tau []float64, b float64, out []float64, intercept int) float64 {
	B := s.Basis
	var in []int
	mean := 0.0
	for t := 0; t < B.T; t++ {
		if mask == nil || !mask[t] {
			in = append(in, t)
			mean += tau[t]
		}
	}
	mean /= float64(len(in))
	out[intercept] += b * mean
	X := mat.NewDense(len(in), B.M, nil)
	g := mat.NewVecDense(len(in), nil)
	for r, t := range in {
		X.SetRow(r, B.phi[t*B.M:t*B.M+B.M])
		g.SetVec(r, b*(tau[t]-mean))
	}
	var c mat.VecDense
	if err := c.SolveVec(X, g); err != nil {
		return b // cannot happen for a basis of distinct sines; report the whole line as the departure
	}
	sc := make([]float64, B.M)
	B.scales(sc, nil, out[s.SD], out[s.Len])
	for j := range sc {
		out[s.Z+j] = c.AtVec(j) / sc[j]
	}
	f := B.Eval(nil, out[s.SD], out[s.Len], out[s.Z:s.Z+B.M])
	dev := 0.0
	for _, t := range in {
		dev = max(dev, math.Abs(f[t]-b*(tau[t]-mean)))
	}
	return dev
}
