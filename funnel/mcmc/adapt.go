package mcmc

import "math"

// DualAveraging adapts the leapfrog step size by Nesterov dual averaging of
// log ε (Hoffman and Gelman 2014, JMLR 15, section 3.2, as implemented in
// Stan's stepsize_adaptation.hpp). Its zero value is not usable; build it with
// NewDualAveraging.
//
// Per adaptation iteration m = 1, 2, ...:
//
//	η  = 1/(m + t0)
//	s̄  ← (1 − η) s̄ + η (δ − min(α, 1))
//	x  = μ − s̄ √m / γ,   ε = exp(x)
//	x̄  ← (1 − m^−κ) x̄ + m^−κ x
//
// and the final step size is exp(x̄).
type DualAveraging struct {
	// Delta is the target mean acceptance statistic δ.
	Delta float64
	// Mu is the shrinkage point μ of log ε, usually log(10 ε0).
	Mu float64
	// Gamma, Kappa and T0 are Stan's γ = 0.05, κ = 0.75 and t0 = 10.
	Gamma, Kappa, T0 float64

	counter float64
	sBar    float64
	xBar    float64
}

// NewDualAveraging returns a dual-averaging state with target acceptance delta,
// shrinkage point mu (on the log ε scale) and Stan's defaults γ = 0.05,
// κ = 0.75, t0 = 10.
func NewDualAveraging(delta, mu float64) DualAveraging {
	return DualAveraging{Delta: delta, Mu: mu, Gamma: 0.05, Kappa: 0.75, T0: 10}
}

// Restart forgets the history (m = 0, s̄ = 0, x̄ = 0) and keeps Delta and Mu.
func (d *DualAveraging) Restart() {
	d.counter, d.sBar, d.xBar = 0, 0, 0
}

// Learn records one iteration's acceptance statistic accept (values above 1
// count as 1) and returns the step size exp(x) to use next.
func (d *DualAveraging) Learn(accept float64) float64 {
	d.counter++
	if accept > 1 {
		accept = 1
	}
	eta := 1 / (d.counter + d.T0)
	d.sBar = (1-eta)*d.sBar + eta*(d.Delta-accept)
	x := d.Mu - d.sBar*math.Sqrt(d.counter)/d.Gamma
	xEta := math.Pow(d.counter, -d.Kappa)
	d.xBar = (1-xEta)*d.xBar + xEta*x
	return math.Exp(x)
}

// Final returns the averaged step size exp(x̄) used after warm-up.
func (d *DualAveraging) Final() float64 { return math.Exp(d.xBar) }

// Stan's default adaptation windows (CmdStan init_buffer, term_buffer, window).
const (
	DefaultInitBuffer = 75
	DefaultTermBuffer = 50
	DefaultBaseWindow = 25
)

// Windows returns the last warm-up iteration (0-based) of each slow
// mass-matrix adaptation window for numWarmup warm-up iterations with Stan's
// defaults, following Stan's windowed_adaptation.hpp: a fast initial buffer
// of 75 iterations, slow windows doubling from 25 (the last stretched to the
// start of the terminal buffer), and a fast terminal buffer of 50. When
// 75+25+50 > numWarmup the stages become 15%/75%/10% of numWarmup, and below
// 20 iterations there is no metric adaptation (nil).
func Windows(numWarmup int) []int {
	s := newWindowSchedule(numWarmup, DefaultInitBuffer, DefaultTermBuffer, DefaultBaseWindow)
	var ends []int
	for i := 0; i < numWarmup; i++ {
		_, end := s.step()
		if end {
			ends = append(ends, i)
		}
	}
	return ends
}

// windowSchedule is Stan's windowed_adaptation counter. step is called once
// per warm-up iteration, in order.
type windowSchedule struct {
	enabled    bool
	numWarmup  int
	initBuffer int
	termBuffer int
	baseWindow int
	counter    int
	windowSize int
	nextWindow int
}

func newWindowSchedule(numWarmup, initBuffer, termBuffer, baseWindow int) windowSchedule {
	s := windowSchedule{numWarmup: numWarmup}
	if numWarmup < 20 {
		return s
	}
	s.enabled = true
	if initBuffer+baseWindow+termBuffer > numWarmup {
		// Stan truncates 0.15 n and 0.1 n to unsigned integers.
		initBuffer = int(0.15 * float64(numWarmup))
		termBuffer = int(0.1 * float64(numWarmup))
		baseWindow = numWarmup - (initBuffer + termBuffer)
	}
	s.initBuffer, s.termBuffer, s.baseWindow = initBuffer, termBuffer, baseWindow
	// Stan restarts only on the default branch; restarting on both keeps the
	// reduced schedule working (one slow window), which is the documented intent.
	s.counter = 0
	s.windowSize = baseWindow
	s.nextWindow = initBuffer + baseWindow - 1
	return s
}

// step advances by one warm-up iteration. It reports whether the iteration's
// position belongs to a slow window (add it to the variance estimate) and
// whether this iteration ends a window (update the metric).
func (s *windowSchedule) step() (inWindow, endWindow bool) {
	if !s.enabled {
		return false, false
	}
	inWindow = s.counter >= s.initBuffer && s.counter < s.numWarmup-s.termBuffer && s.counter != s.numWarmup
	endWindow = s.counter == s.nextWindow && s.counter != s.numWarmup
	if endWindow {
		s.computeNextWindow()
	}
	s.counter++
	return inWindow, endWindow
}

// lastDone reports whether the window that step just ended was the last:
// what follows is the terminal buffer.
func (s *windowSchedule) lastDone() bool {
	return s.counter-1 == s.lastEnd()
}

// lastEnd is the iteration that ends the last metric window.
func (s *windowSchedule) lastEnd() int { return s.numWarmup - s.termBuffer - 1 }

func (s *windowSchedule) computeNextWindow() {
	last := s.lastEnd()
	if s.nextWindow == last {
		return
	}
	s.windowSize *= 2
	s.nextWindow = s.counter + s.windowSize
	if s.nextWindow == last {
		return
	}
	if s.nextWindow+2*s.windowSize >= s.numWarmup-s.termBuffer {
		s.nextWindow = last
	}
}

// welford accumulates a running mean and sum of squared deviations per
// coordinate (Welford 1962), as Stan's welford_var_estimator.
type welford struct {
	n    int
	mean []float64
	m2   []float64
}

func newWelford(dim int) welford {
	return welford{mean: make([]float64, dim), m2: make([]float64, dim)}
}

func (w *welford) restart() {
	w.n = 0
	clear(w.mean)
	clear(w.m2)
}

func (w *welford) add(q []float64) {
	w.n++
	n := float64(w.n)
	for i, v := range q {
		d := v - w.mean[i]
		w.mean[i] += d / n
		w.m2[i] += (v - w.mean[i]) * d
	}
}

// regularizedVariance writes into dst Stan's regularised diagonal metric
// (n/(n+5)) Var + 1e-3 (5/(n+5)) and returns dst. With a start metric
// (Settings.InvMetric) the shrinkage target is 1e-3 times it instead of
// 1e-3 times the identity: Stan's 1e-3 assumes coordinates of unit scale,
// and on coordinates with sd ~0.001 it would dominate the estimate (after
// a 25-draw window it adds 1.7e-4 to a variance of 1e-6).
func (w *welford) regularizedVariance(dst, start []float64) []float64 {
	n := float64(w.n)
	for i := range dst {
		v := 0.0
		if w.n > 1 {
			v = w.m2[i] / (n - 1)
		}
		base := 1e-3
		if start != nil {
			base *= start[i]
		}
		dst[i] = (n/(n+5))*v + base*(5/(n+5))
	}
	return dst
}
