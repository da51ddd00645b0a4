package model

import "math"

// panelBaseline is a baseline that moves on a region panel (Options.Baseline
// BaselineSmooth): one smooth function f(t) of the week, in scaled units,
// added to every region's linear predictor in place of the trend line, as
// the shared trend would be. Its slots are the national stage's, once in
// the base layout (sd, length-scale, weights), and it is evaluated by the
// national smooth (smooth.go's smoothEval), so every reader of a region's
// national-shaped draw (PanelLayout.Region, Params.AddBaseline) finds the
// panel's one baseline.
//
// Like a shared regressor it enters S_g, the mean of region g's predictor
// without its intercept (the intercepts' shear and conditional
// coordinates), with fbar, f's mean over every week (0 over the fitted
// weeks; fbar differs from 0 only when some weeks are held out), as the
// national baselineTerm shifts a centred intercept by fbar.
type panelBaseline struct {
	sm   *smoothEval
	fbar float64
	r    []float64 // scratch: d lp / d f(t)
}

func newPanelBaseline(s SmoothSlots) *panelBaseline {
	return &panelBaseline{sm: newSmoothEval(s.Basis, s.SD, s.Len, s.Z), r: make([]float64, s.Basis.T)}
}

func (b *panelBaseline) clone() *panelBaseline {
	if b == nil {
		return nil
	}
	return &panelBaseline{sm: b.sm.clone(), r: make([]float64, len(b.r))}
}

// prepare evaluates f over every week and its mean.
func (b *panelBaseline) prepare(nat []float64) bool {
	T := len(b.r)
	b.sm.eval(nat, 0, T)
	s := 0.0
	for _, f := range b.sm.f {
		s += f
	}
	b.fbar = s / float64(T)
	return !notFinite(b.fbar)
}

// forward adds f(t) to region g's predictor n.
func (b *panelBaseline) forward(n []float64) {
	for t, f := range b.sm.f {
		n[t] += f
	}
}

// backward adds the gradient in the smooth's natural values: with
// w[g][t] = d lp/d n[g][t] and gS[g] = d lp/d S_g,
//
//	d lp/d f(t) = sum_g (w[g][t] + gS[g]/T),
//
// pulled back by smoothEval.backward.
func (b *panelBaseline) backward(gn, nat []float64, w [][]float64, gS []float64) {
	T := len(b.r)
	off := 0.0
	for _, gs := range gS {
		off += gs
	}
	off /= float64(T)
	for t := range b.r {
		b.r[t] = off
	}
	for _, wg := range w {
		for t, v := range wg {
			b.r[t] += v
		}
	}
	b.sm.backward(gn, nat, b.r, 0, T)
}

// trendLine returns (t-1)/(T-1), t = 1..T: Scaled.Tau when no week is
// held out. Only the start uses it (ChooseCoordinates' least squares and
// startBaseline the same line, so its scale cancels).
func trendLine(T int) []float64 {
	x := make([]float64, T)
	for i := range x {
		if T > 1 {
			x[i] = float64(i) / float64(T-1)
		}
	}
	return x
}

// startBaseline gives the baseline's slots StartPoint's start: the
// regions' shared least-squares line (slope b, Coords.BaseSlope, with the
// intercepts' mean mu0 at its first week) as FromFixed turns a trend line
// into a moving baseline: its level into mu, the rest the least-squares
// projection on the basis over the fitted weeks (lineAsSmooth), at the
// shortest length-scale the basis is sized for (MinLength) and an sd of
// the prior's scale or |b| if larger, so that the weights stay within
// about one of zero (the projection's weights grow with b/sd and, at
// longer length-scales, without bound on the high frequencies). Without a
// slope (NaN) the baseline starts flat and mu at mu0.
func (t *PanelTarget) startBaseline(set func(int, float64), mu0, b float64) {
	s := t.lay.base.Baseline()
	v := make([]float64, t.lay.base.Len())
	mu := t.inter.mu
	v[mu] = mu0
	v[s.SD], v[s.Len] = PriorBaseSD.P1, MinLength
	if !math.IsNaN(b) {
		v[s.SD] = math.Max(v[s.SD], math.Abs(b))
		lineAsSmooth(s, t.mask[0], trendLine(t.T), b, v, mu)
	}
	set(mu, v[mu])
	set(s.SD, v[s.SD])
	set(s.Len, v[s.Len])
	for j := 0; j < s.Basis.M; j++ {
		set(s.Z+j, v[s.Z+j])
	}
}
