package mcmc

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sync"
	"time"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/stat"
)

// Recorder receives progress from the chains. Record is called after every
// iteration of every chain, from that chain's goroutine, so implementations
// must be safe for concurrent use. chain is the chain's 0-based position in
// Fit.Chains (its number unless Settings.Only picks chains); iter counts from 1 to
// Warmup+Draws within the chain; warmup reports whether the iteration was a
// warm-up iteration. A non-nil error stops the run, and Run returns it.
type Recorder interface {
	Record(chain, iter int, warmup bool) error
}

// Settings configures Run. A nil *Settings means the zero value, and every
// zero field means its documented default.
type Settings struct {
	// Chains is the number of chains, run in parallel goroutines. Zero means 4.
	Chains int
	// Warmup is the number of warm-up (adaptation) iterations per chain; they
	// are discarded. Zero means 1000; use NoWarmup for none.
	Warmup int
	// Draws is the number of kept iterations per chain. Zero means 1000.
	Draws int
	// Seed seeds the random streams: chain c (0-based) uses
	// rand.NewPCG(Seed, uint64(c)). The default 0 is a valid seed.
	Seed uint64
	// TargetAccept is the dual-averaging target δ for the mean acceptance
	// statistic, in (0, 1). Zero means 0.8.
	TargetAccept float64
	// WarmupAccept, if not zero, is the target δ of the warm-up's step size
	// until its last metric update; the terminal window (the last 50
	// iterations, where the sampling step size is learned) and the draws
	// use TargetAccept. A target near 1 buys its small steps only where
	// they matter: the metric's windows need the chain to explore, not to
	// integrate without divergence, and with a higher target every
	// warm-up trajectory costs as much as a draw's. Ignored when the
	// warm-up is too short to have metric windows.
	WarmupAccept float64
	// MaxTreeDepth caps the trajectory at 2^MaxTreeDepth leapfrog steps.
	// Zero means 10.
	MaxTreeDepth int
	// Only, if not nil, runs just these chains of the Chains (0-based,
	// increasing, each below Chains); Fit.Chains holds them in this order.
	// Each keeps the random stream and Init of the same chain in a run of
	// all Chains, so its draws are bit for bit that chain's: the chains of
	// one run can be sampled as separate jobs and put together.
	Only []int
	// Recorder, if not nil, receives progress after each iteration.
	Recorder Recorder
	// Init, if not nil, writes chain's initial unconstrained point into dst
	// (len Dim()) and returns false if it cannot. Nil means each coordinate
	// uniform in (−2, 2), redrawn up to InitTries times until the log density
	// and its gradient are finite.
	Init func(chain int, dst []float64) bool
	// InvMetric, if not nil, is the diagonal inverse metric (a variance per
	// unconstrained coordinate, len Dim(), each positive and finite) the
	// warm-up starts from, and the one sampling uses when there is no
	// warm-up. Nil means the identity, Stan's start. A start near the
	// posterior's scales spares the early warm-up the long trajectories an
	// identity metric needs where coordinates differ in scale by orders of
	// magnitude; the windows adapt it as usual, shrinking their estimates
	// toward 1e-3 times it (Stan: 1e-3 times the identity) so that the
	// shrinkage keeps the coordinates' relative scales.
	InvMetric []float64
	// DenseBlock, if not nil, lists coordinates (increasing, each below
	// Dim()) whose inverse metric the warm-up adapts as one dense
	// covariance instead of a variance each (denseBlock); the others stay
	// diagonal. Meant for a few dozen shared parameters beside many
	// region-level ones: the block costs k² per leapfrog step. Its start
	// is InvMetric's diagonal on the block (or the identity), and its
	// windows shrink toward 1e-3 times that diagonal, as the diagonal's do.
	DenseBlock []int
}

// NoWarmup as Settings.Warmup asks for no warm-up at all: the step size comes
// from the initial heuristic and the metric is the identity.
const NoWarmup = -1

// InitTries is the number of random initial points tried per chain.
const InitTries = 100

// Defaults of Settings.
const (
	DefaultChains       = 4
	DefaultWarmup       = 1000
	DefaultDraws        = 1000
	DefaultTargetAccept = 0.8
	DefaultMaxTreeDepth = 10
)

// resolved returns s with the defaults filled in, or an error for values
// that cannot be used.
func (s *Settings) resolved() (Settings, error) {
	var r Settings
	if s != nil {
		r = *s
	}
	if r.Chains == 0 {
		r.Chains = DefaultChains
	}
	switch {
	case r.Warmup == 0:
		r.Warmup = DefaultWarmup
	case r.Warmup == NoWarmup:
		r.Warmup = 0
	}
	if r.Draws == 0 {
		r.Draws = DefaultDraws
	}
	if r.TargetAccept == 0 {
		r.TargetAccept = DefaultTargetAccept
	}
	if r.MaxTreeDepth == 0 {
		r.MaxTreeDepth = DefaultMaxTreeDepth
	}
	switch {
	case r.Chains < 0:
		return r, fmt.Errorf("mcmc: chains = %d, want > 0", r.Chains)
	case r.Warmup < 0:
		return r, fmt.Errorf("mcmc: warmup = %d, want >= 0", r.Warmup)
	case r.Draws < 0:
		return r, fmt.Errorf("mcmc: draws = %d, want > 0", r.Draws)
	case !(r.TargetAccept > 0 && r.TargetAccept < 1):
		return r, fmt.Errorf("mcmc: target acceptance %v, want in (0, 1)", r.TargetAccept)
	case r.WarmupAccept != 0 && !(r.WarmupAccept > 0 && r.WarmupAccept < 1):
		return r, fmt.Errorf("mcmc: warm-up target acceptance %v, want in (0, 1) or 0", r.WarmupAccept)
	case r.MaxTreeDepth < 0 || r.MaxTreeDepth > 30:
		return r, fmt.Errorf("mcmc: max tree depth %d, want in [1, 30]", r.MaxTreeDepth)
	case r.Only != nil && len(r.Only) == 0:
		return r, errors.New("mcmc: Only lists no chain")
	}
	for i, c := range r.Only {
		if c < 0 || c >= r.Chains || i > 0 && c <= r.Only[i-1] {
			return r, fmt.Errorf("mcmc: Only = %v, want increasing chains from 0 to %d", r.Only, r.Chains-1)
		}
	}
	return r, nil
}

// Fit holds the draws of all chains on the constrained scale.
type Fit struct {
	// Names are the constrained parameter names, one per column of Draws.
	Names []string
	// Chains holds one entry per chain, in chain order.
	Chains []Chain
}

// Chain is one chain's kept draws and sampler statistics.
type Chain struct {
	// Draws has one row per kept iteration and one column per name, holding
	// constrained values.
	Draws *mat.Dense
	// Stats are the sampler statistics; zero when read back from CSV.
	Stats ChainStats
}

// ChainStats are one chain's sampler statistics.
type ChainStats struct {
	// WarmupSeconds and SamplingSeconds are wall-clock times of the two
	// phases, in seconds.
	WarmupSeconds, SamplingSeconds float64
	// GradientEvaluations counts calls of LogProbGrad, warm-up included.
	GradientEvaluations int
	// WarmupGradients counts the calls of LogProbGrad before the first kept
	// draw (the initial point and step-size searches included).
	WarmupGradients int
	// Warmup describes the warm-up in stretches between metric updates (the
	// first from the initial point to the end of the first slow window, the
	// last the terminal buffer), in order; nil without warm-up.
	Warmup []WarmupStretch
	// Divergences counts divergent sampling iterations (energy error > 1000).
	Divergences int
	// TreeDepthHits counts sampling iterations that stopped at MaxTreeDepth.
	TreeDepthHits int
	// StepSize is the adapted leapfrog step size used for sampling.
	StepSize float64
	// EBFMI is the energy Bayesian fraction of missing information over the
	// sampling iterations, Σ(E_n − E_{n−1})² / Σ(E_n − Ē)² (Betancourt 2016,
	// "Diagnosing suboptimal cotangent disintegrations in Hamiltonian Monte
	// Carlo"); NaN with fewer than two draws.
	EBFMI float64
	// MeanLeapfrogs is the mean number of leapfrog steps per sampling draw.
	MeanLeapfrogs float64
	// MeanAccept is the mean acceptance statistic over the sampling draws.
	MeanAccept float64
	// InvMetric is the adapted diagonal inverse metric (variance estimate of
	// each unconstrained coordinate; on a dense block, its diagonal).
	InvMetric []float64
}

// WarmupStretch is one stretch of a chain's warm-up between two metric
// updates: where the warm-up's gradients went.
type WarmupStretch struct {
	// Start is the stretch's first warm-up iteration (0-based); Iterations
	// how many it has.
	Start, Iterations int
	// Gradients counts the stretch's calls of LogProbGrad, the step-size
	// search after its metric update included.
	Gradients int
	// MeanTreeDepth and MeanStepSize are the means over its iterations of
	// the tree depth reached and of the step size used.
	MeanTreeDepth, MeanStepSize float64
	// TreeDepthHits counts its iterations that stopped at MaxTreeDepth;
	// Divergences its divergent ones.
	TreeDepthHits, Divergences int
}

// Column returns the draws of the named parameter per chain, as fresh slices
// indexed [chain][iteration], or nil if the name is absent.
func (f *Fit) Column(name string) [][]float64 {
	j := -1
	for i, n := range f.Names {
		if n == name {
			j = i
			break
		}
	}
	if j < 0 {
		return nil
	}
	return f.column(j)
}

func (f *Fit) column(j int) [][]float64 {
	out := make([][]float64, len(f.Chains))
	for c, ch := range f.Chains {
		out[c] = mat.Col(nil, j, ch.Draws)
	}
	return out
}

// NumDraws returns the total number of kept draws over all chains.
func (f *Fit) NumDraws() int {
	n := 0
	for _, ch := range f.Chains {
		if ch.Draws != nil {
			r, _ := ch.Draws.Dims()
			n += r
		}
	}
	return n
}

// Run samples t with s.Chains NUTS chains in parallel goroutines, each on its
// own clone of t (t itself is only asked for Names and Clone) and its own
// random stream, so the draws are identical whatever GOMAXPROCS is. A nil s
// means the defaults. Cancelling ctx stops all chains and returns ctx.Err();
// an error from one chain (no finite initial point, a failed step-size
// search, a Recorder error) stops the others and is returned, the lowest
// chain's first.
func Run(ctx context.Context, t Target, s *Settings) (*Fit, error) {
	set, err := s.resolved()
	if err != nil {
		return nil, err
	}
	names := t.Names()
	if t.Dim() < 1 {
		return nil, errors.New("mcmc: model has dimension 0")
	}
	if len(names) == 0 {
		return nil, errors.New("mcmc: target has no parameter names")
	}
	if m := set.InvMetric; m != nil {
		if len(m) != t.Dim() {
			return nil, fmt.Errorf("mcmc: initial metric has %d values, want %d", len(m), t.Dim())
		}
		for i, v := range m {
			if !(v > 0) || math.IsInf(v, 1) {
				return nil, fmt.Errorf("mcmc: initial metric: value %d is %v, want positive and finite", i, v)
			}
		}
	}
	for i, c := range set.DenseBlock {
		if c < 0 || c >= t.Dim() || i > 0 && c <= set.DenseBlock[i-1] {
			return nil, fmt.Errorf("mcmc: dense block %v, want increasing coordinates from 0 to %d", set.DenseBlock, t.Dim()-1)
		}
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	chains := set.Only
	if chains == nil {
		chains = make([]int, set.Chains)
		for c := range chains {
			chains[c] = c
		}
	}
	fit := &Fit{Names: append([]string(nil), names...), Chains: make([]Chain, len(chains))}
	errs := make([]error, len(chains))
	var wg sync.WaitGroup
	for i, c := range chains {
		tc := t.Clone()
		wg.Add(1)
		go func() {
			defer wg.Done()
			ch, err := runChain(ctx, tc, c, i, &set, len(names))
			if err != nil {
				errs[i] = err
				cancel()
				return
			}
			fit.Chains[i] = ch
		}()
	}
	wg.Wait()
	// Prefer a real failure over the cancellations it caused.
	var first error
	for _, e := range errs {
		if e != nil && !errors.Is(e, context.Canceled) {
			return nil, e
		}
		if e != nil && first == nil {
			first = e
		}
	}
	if first != nil {
		return nil, first
	}
	return fit, nil
}

// runChain runs chain c (0-based) of set on t; pos is its position in the
// Fit, for the Recorder.
func runChain(ctx context.Context, t Target, c, pos int, set *Settings, nNames int) (Chain, error) {
	rng := rand.New(rand.NewPCG(set.Seed, uint64(c)))
	dim := t.Dim()
	s := newNUTS(t, rng, set.MaxTreeDepth)
	if set.InvMetric != nil {
		s.setMetric(set.InvMetric)
	}
	var wc welfordCov
	var covBuf []float64
	if blk := set.DenseBlock; len(blk) > 0 {
		s.dense = newDenseBlock(blk)
		k := len(blk)
		covBuf = make([]float64, k*k)
		for j, i := range blk {
			covBuf[j*k+j] = s.invMetric[i]
		}
		if err := s.setDense(covBuf); err != nil {
			return Chain{}, fmt.Errorf("mcmc: chain %d: %w", c+1, err)
		}
		wc = newWelfordCov(s.dense.idx)
	}
	q0 := make([]float64, dim)
	if set.Init != nil {
		if !set.Init(c, q0) {
			return Chain{}, fmt.Errorf("mcmc: chain %d: Init failed", c+1)
		}
		if !s.setPosition(q0) {
			return Chain{}, fmt.Errorf("mcmc: chain %d: log density or gradient not finite at the given initial point", c+1)
		}
	} else {
		ok := false
		for try := 0; try < InitTries && !ok; try++ {
			for i := range q0 {
				q0[i] = -2 + 4*rng.Float64()
			}
			ok = s.setPosition(q0)
		}
		if !ok {
			return Chain{}, &InitError{Chain: c, Tries: InitTries}
		}
	}
	if err := s.findStepSize(); err != nil {
		return Chain{}, fmt.Errorf("mcmc: chain %d: %w", c+1, err)
	}

	sched := newWindowSchedule(set.Warmup, DefaultInitBuffer, DefaultTermBuffer, DefaultBaseWindow)
	delta := set.TargetAccept
	if set.WarmupAccept != 0 && sched.enabled {
		delta = set.WarmupAccept // until the last metric update
	}
	da := NewDualAveraging(delta, math.Log(10*s.eps))
	wf := newWelford(dim)
	varBuf := make([]float64, dim)

	var stretches []WarmupStretch
	cur := WarmupStretch{Start: 0}
	gradsBefore := 0 // the initial point and step-size search count in the first stretch
	start := time.Now()
	for it := 0; it < set.Warmup; it++ {
		if err := ctx.Err(); err != nil {
			return Chain{}, err
		}
		cur.MeanStepSize += s.eps
		s.transition()
		cur.Iterations++
		cur.MeanTreeDepth += float64(s.depth)
		if s.depth >= set.MaxTreeDepth {
			cur.TreeDepthHits++
		}
		if s.divergent {
			cur.Divergences++
		}
		s.eps = da.Learn(s.accept)
		inWin, endWin := sched.step()
		if inWin {
			wf.add(s.z.q)
			if s.dense != nil {
				wc.add(s.z.q)
			}
		}
		if endWin {
			wf.regularizedVariance(varBuf, set.InvMetric)
			for _, v := range varBuf {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					return Chain{}, fmt.Errorf("mcmc: chain %d: numerical overflow in metric adaptation", c+1)
				}
			}
			wf.restart()
			s.setMetric(varBuf)
			if s.dense != nil {
				wc.regularized(covBuf, set.InvMetric)
				wc.restart()
				if err := s.setDense(covBuf); err != nil {
					return Chain{}, fmt.Errorf("mcmc: chain %d: %w", c+1, err)
				}
			}
			if err := s.findStepSize(); err != nil {
				return Chain{}, fmt.Errorf("mcmc: chain %d: %w", c+1, err)
			}
			da.Mu = math.Log(10 * s.eps)
			if sched.lastDone() {
				da.Delta = set.TargetAccept
			}
			da.Restart()
		}
		if endWin || it == set.Warmup-1 {
			cur.Gradients = s.gradEvals - gradsBefore
			gradsBefore = s.gradEvals
			cur.MeanTreeDepth /= float64(cur.Iterations)
			cur.MeanStepSize /= float64(cur.Iterations)
			stretches = append(stretches, cur)
			cur = WarmupStretch{Start: it + 1}
		}
		if set.Recorder != nil {
			if err := set.Recorder.Record(pos, it+1, true); err != nil {
				return Chain{}, err
			}
		}
	}
	if set.Warmup > 0 {
		s.eps = da.Final()
	}
	warmSec := time.Since(start).Seconds()
	warmGrads := s.gradEvals

	draws := mat.NewDense(set.Draws, nNames, nil)
	energy := make([]float64, set.Draws)
	st := ChainStats{StepSize: s.eps}
	leapfrogs, acceptSum := 0, 0.0
	start = time.Now()
	raw := draws.RawMatrix()
	for it := 0; it < set.Draws; it++ {
		if err := ctx.Err(); err != nil {
			return Chain{}, err
		}
		s.transition()
		if s.divergent {
			st.Divergences++
		}
		if s.depth >= set.MaxTreeDepth {
			st.TreeDepthHits++
		}
		leapfrogs += s.nLeapfrog
		acceptSum += s.accept
		energy[it] = s.energy
		t.Constrain(raw.Data[it*raw.Stride:it*raw.Stride+nNames], s.z.q)
		if set.Recorder != nil {
			if err := set.Recorder.Record(pos, set.Warmup+it+1, false); err != nil {
				return Chain{}, err
			}
		}
	}
	st.SamplingSeconds = time.Since(start).Seconds()
	st.WarmupSeconds = warmSec
	st.GradientEvaluations = s.gradEvals
	st.WarmupGradients = warmGrads
	st.Warmup = stretches
	st.EBFMI = ebfmi(energy)
	st.MeanLeapfrogs = float64(leapfrogs) / float64(set.Draws)
	st.MeanAccept = acceptSum / float64(set.Draws)
	st.InvMetric = s.metricDiag()
	return Chain{Draws: draws, Stats: st}, nil
}

// ebfmi returns Σ(E_n − E_{n−1})² / Σ(E_n − Ē)², NaN for fewer than two
// energies or zero spread.
func ebfmi(e []float64) float64 {
	if len(e) < 2 {
		return math.NaN()
	}
	mean := stat.Mean(e)
	num, den := 0.0, 0.0
	for i, v := range e {
		den += (v - mean) * (v - mean)
		if i > 0 {
			d := v - e[i-1]
			num += d * d
		}
	}
	if den == 0 {
		return math.NaN()
	}
	return num / den
}
