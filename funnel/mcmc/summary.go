package mcmc

import (
	"fmt"
	"math"
	"runtime"
	"slices"
	"strings"
	"sync"

	"spillway/funnel/stat"
)

// Summary describes one constrained parameter over all chains' draws.
// Mean, SD and the quantiles are in the parameter's own units; Q05, Q50 and
// Q95 are type-7 quantiles (R's default). Rhat, ESSBulk, ESSTail and
// MCSEMean are NaN where R posterior gives NA (constant draws, NaN draws).
type Summary struct {
	Parameter                        string
	Mean, SD, Q05, Q50, Q95          float64
	Rhat, ESSBulk, ESSTail, MCSEMean float64
}

// Constant reports whether every draw of the parameter has the same value,
// such as a parameter fixed by construction. Summarize sets SD to exactly 0
// in that case and only then.
func (s Summary) Constant() bool { return s.SD == 0 }

// Summarize returns one Summary per name of f, in the order of f.Names.
// Parameters are summarised in parallel on up to GOMAXPROCS goroutines; the
// result does not depend on their number.
func Summarize(f *Fit) []Summary {
	out := make([]Summary, len(f.Names))
	next := make(chan int)
	var wg sync.WaitGroup
	for range min(runtime.GOMAXPROCS(0), len(f.Names)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range next {
				out[j] = summarizeColumn(f.Names[j], f.column(j))
			}
		}()
	}
	for j := range f.Names {
		next <- j
	}
	close(next)
	wg.Wait()
	return out
}

// SummarizeDraws returns the Summary of draws x indexed [chain][iteration]
// under the given name; it suits derived quantities computed per draw.
func SummarizeDraws(name string, x [][]float64) Summary {
	checkShape(x)
	return summarizeColumn(name, x)
}

func summarizeColumn(name string, x [][]float64) Summary {
	pooled := make([]float64, 0, len(x)*len(x[0]))
	for _, c := range x {
		pooled = append(pooled, c...)
	}
	s := Summary{Parameter: name}
	s.Mean, s.SD = stat.MeanSD(pooled) // before the sort below: the sums run in draw order
	constant := true
	for _, v := range pooled {
		if v != pooled[0] {
			constant = false
			break
		}
	}
	if constant {
		// Exactly, whatever rounding the mean and sd sums would give.
		s.Mean, s.SD = pooled[0], 0
	}
	if hasNaN(x) {
		nan := math.NaN()
		s.Q05, s.Q50, s.Q95, s.Rhat, s.ESSBulk, s.ESSTail = nan, nan, nan, nan, nan, nan
	} else {
		// One sort and one rank normalisation serve the quantiles, R-hat and
		// both ESS values.
		slices.Sort(pooled)
		s.Q05 = stat.Quantile(pooled, 0.05)
		s.Q50 = stat.Quantile(pooled, 0.5)
		s.Q95 = stat.Quantile(pooled, 0.95)
		zb := zScale(splitChains(x))
		s.Rhat = rhatFrom(x, zb, pooled)
		s.ESSBulk = essCore(zb)
		s.ESSTail = math.NaN()
		if !shouldReturnNA(x) {
			s.ESSTail = essTailFrom(x, pooled)
		}
	}
	s.MCSEMean = MCSEMean(x)
	if constant {
		s.MCSEMean = math.NaN()
	}
	return s
}

// Thresholds of Judge (Vehtari et al. 2021 for R-hat and ESS; Betancourt
// 2016 for E-BFMI, common practice).
const (
	MaxRhat  = 1.01
	MinESS   = 400
	MinEBFMI = 0.3
)

// Verdict says whether a fit can be trusted and, if not, why. Warnings are
// efficiency notes that do not by themselves make the fit untrustworthy.
type Verdict struct {
	Trustworthy bool
	Reasons     []string
	Warnings    []string
}

// Judge checks the summaries s of fit f: R-hat above MaxRhat, bulk or tail
// ESS below MinESS, any divergent transition, or a chain's E-BFMI below
// MinEBFMI make the fit not trustworthy, each adding one reason naming the
// worst parameter or the chains concerned. A parameter whose draws are all
// exactly equal (fixed by construction) is skipped, unless every parameter
// is: then the chains never moved and no diagnostic can be computed, which
// is a reason of its own. Any other NaN R-hat or ESS (too few draws, NaN
// draws) is "not computable" and also a failure: a diagnostic that cannot
// be computed cannot vouch for the fit. Chains whose Stats are all zero (as
// after ReadDraws) are not checked for divergences or E-BFMI; a warning
// says so. Tree-depth saturation is reported as a warning.
func Judge(f *Fit, s []Summary) Verdict {
	var v Verdict
	type worst struct {
		n     int
		name  string
		value float64
	}
	var rh, eb, et, nrh, neb, net worst
	note := func(w *worst, name string, value float64, worse func(a, b float64) bool) {
		w.n++
		if w.n == 1 || worse(value, w.value) {
			w.name, w.value = name, value
		}
	}
	higher := func(a, b float64) bool { return a > b }
	lower := func(a, b float64) bool { return a < b }
	first := func(a, b float64) bool { return false }
	varying := 0
	for _, p := range s {
		if p.Constant() {
			continue
		}
		varying++
		switch {
		case math.IsNaN(p.Rhat):
			note(&nrh, p.Parameter, p.Rhat, first)
		case p.Rhat > MaxRhat:
			note(&rh, p.Parameter, p.Rhat, higher)
		}
		switch {
		case math.IsNaN(p.ESSBulk):
			note(&neb, p.Parameter, p.ESSBulk, first)
		case p.ESSBulk < MinESS:
			note(&eb, p.Parameter, p.ESSBulk, lower)
		}
		switch {
		case math.IsNaN(p.ESSTail):
			note(&net, p.Parameter, p.ESSTail, first)
		case p.ESSTail < MinESS:
			note(&et, p.Parameter, p.ESSTail, lower)
		}
	}
	plural := func(n int) string {
		if n == 1 {
			return "1 parameter"
		}
		return fmt.Sprintf("%d parameters", n)
	}
	if varying == 0 && len(s) > 0 {
		v.Reasons = append(v.Reasons, fmt.Sprintf("R-hat and ESS not computable: the draws of all %s are identical (the chains never moved)", plural(len(s))))
	}
	for _, w := range []struct {
		w    worst
		what string
	}{{nrh, "R-hat"}, {neb, "bulk ESS"}, {net, "tail ESS"}} {
		if w.w.n > 0 {
			v.Reasons = append(v.Reasons, fmt.Sprintf("%s not computable for %s (first %s; too few draws or NaN draws)", w.what, plural(w.w.n), w.w.name))
		}
	}
	if rh.n > 0 {
		v.Reasons = append(v.Reasons, fmt.Sprintf("R-hat above %.2f for %s (worst %s: %.4g)", MaxRhat, plural(rh.n), rh.name, rh.value))
	}
	if eb.n > 0 {
		v.Reasons = append(v.Reasons, fmt.Sprintf("bulk ESS below %d for %s (worst %s: %.4g)", MinESS, plural(eb.n), eb.name, eb.value))
	}
	if et.n > 0 {
		v.Reasons = append(v.Reasons, fmt.Sprintf("tail ESS below %d for %s (worst %s: %.4g)", MinESS, plural(et.n), et.name, et.value))
	}

	var div, lowE, depth []string
	totalDiv, totalDepth, unknown := 0, 0, 0
	for c, ch := range f.Chains {
		st := ch.Stats
		if st.GradientEvaluations == 0 {
			unknown++
			continue
		}
		if st.Divergences > 0 {
			totalDiv += st.Divergences
			div = append(div, fmt.Sprintf("chain %d: %d", c+1, st.Divergences))
		}
		if math.IsNaN(st.EBFMI) || st.EBFMI < MinEBFMI {
			lowE = append(lowE, fmt.Sprintf("chain %d: %.3g", c+1, st.EBFMI))
		}
		if st.TreeDepthHits > 0 {
			totalDepth += st.TreeDepthHits
			depth = append(depth, fmt.Sprintf("chain %d: %d", c+1, st.TreeDepthHits))
		}
	}
	if totalDiv > 0 {
		v.Reasons = append(v.Reasons, fmt.Sprintf("%d divergent transitions after warm-up (%s)", totalDiv, strings.Join(div, ", ")))
	}
	if len(lowE) > 0 {
		v.Reasons = append(v.Reasons, fmt.Sprintf("E-BFMI below %.1f (%s)", MinEBFMI, strings.Join(lowE, ", ")))
	}
	if totalDepth > 0 {
		v.Warnings = append(v.Warnings, fmt.Sprintf("%d iterations hit the maximum tree depth (%s); sampling was slow but not biased", totalDepth, strings.Join(depth, ", ")))
	}
	if unknown > 0 {
		v.Warnings = append(v.Warnings, fmt.Sprintf("sampler statistics unavailable for %d of %d chains; divergences and E-BFMI not checked", unknown, len(f.Chains)))
	}
	v.Trustworthy = len(v.Reasons) == 0
	return v
}

// Worst returns the largest R-hat and the smallest bulk and tail ESS over
// the parameters of s whose draws vary. A value is NaN when it cannot be
// computed: a varying parameter's diagnostic is NaN, or no parameter
// varies at all (the chains never moved). Callers print NaN as "not
// computable", never as a number.
func Worst(s []Summary) (rhat, essBulk, essTail float64) {
	rhat, essBulk, essTail = math.Inf(-1), math.Inf(1), math.Inf(1)
	varying := false
	for _, p := range s {
		if p.Constant() {
			continue
		}
		varying = true
		rhat = nanMax(rhat, p.Rhat)
		essBulk = nanMin(essBulk, p.ESSBulk)
		essTail = nanMin(essTail, p.ESSTail)
	}
	if !varying {
		return math.NaN(), math.NaN(), math.NaN()
	}
	return rhat, essBulk, essTail
}

// nanMax and nanMin propagate NaN: a diagnostic that cannot be computed is
// the worst of all.
func nanMax(a, b float64) float64 {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.NaN()
	}
	return math.Max(a, b)
}

func nanMin(a, b float64) float64 {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.NaN()
	}
	return math.Min(a, b)
}
