package validate

import (
	"fmt"
	"math"
	"strings"
)

// When a refit counts as converged, and how many must for a claim.
//
// A refit converged when, in both its stages:
//   - the largest rank-normalised split R-hat is computable and at most
//     MaxRhat (Vehtari, Gelman, Simpson, Carpenter and Buerkner 2021);
//   - the smallest bulk and tail ESS are at least MinESSShare of the
//     refit's kept draws (chains x draws). At the default 4 x 1000 that is
//     400, the same bar as a fit's own verdict (Vehtari et al. 2021: 400,
//     i.e. 100 per chain); scaled to the draws so that a shorter sweep is
//     judged by the same efficiency rather than by a count it cannot reach,
//     and a longer one is not let off with a relatively tiny ESS;
//   - divergent transitions are at most MaxDivergentShare of the kept
//     draws (both stages together): at 4 x 1000, up to 4 of 8,000
//     transitions.
//
// Why divergences are a share, not zero: the recovery check's coverage
// itself measures, over all refits, whatever a rare divergence would cost
// the intervals, so one isolated divergence in thousands of transitions
// need not void the refit (on the demo at 4 x (500 + 1000), 1 divergence in
// 1 of 4 refits, with R-hat 1.005 and bulk ESS above 1,100); a refit
// whose divergences are many is not exploring its posterior and is not
// counted as converged.
//
// A claim ("recovers truth", "stable") needs at least MinConvergedShare of
// the check's refits converged, and the stability check's reference fit
// converged (every move is measured against it). Coverage is judged on all
// refits, not only the converged ones: whether a refit converges depends
// on its simulated data set, so keeping only the converged ones would
// select the easier data sets and could flatter the coverage. The
// unconverged refits are counted and named in the verdict. Why 90%: with
// the default 20 replicates that allows 2 unconverged refits; even if
// both had intervals wrong in the same direction they move a coverage by
// at most 2 of 20 (10 points), under half the width of the 95% binomial
// range the coverage is judged against (90% intervals: 75%-100%, 50%
// intervals: 30%-70%), so the verdict cannot rest on them alone; a larger
// share could carry a whole verdict. Requiring every refit converged (the
// previous rule) made a claim nearly impossible: with 2 chains of
// (500 + 500), 27 of the default sweep's 39 fits on the demo, where the
// model is right, had an R-hat above 1.01.
const (
	MaxRhat           = 1.01
	MinESSShare       = 0.1
	MaxDivergentShare = 0.001
	MinConvergedShare = 0.9
)

// stages whose convergence numbers every fitted job records.
var fitStages = []string{"demand", "outcome"}

// convergence judges one job's fit records against the rule above for a
// refit of chains x draws kept draws. It returns "" when the refit
// converged, else why not ("R-hat 1.013", "bulk ESS 210 < 400",
// "5 divergent transitions").
func convergence(s map[string]float64, chains, draws int) string {
	kept := float64(chains * draws)
	var why []string
	rh, ess, tail, div := math.Inf(-1), math.Inf(1), math.Inf(1), 0.0
	for _, st := range fitStages {
		r := s[st+"/rhat_max"]
		if math.IsNaN(r) || math.IsNaN(rh) {
			rh = math.NaN()
		} else {
			rh = math.Max(rh, r)
		}
		// a job without ESS records (made by hand) is judged on R-hat and
		// divergences alone; a real refit always records both
		if e, ok := s[st+"/ess_bulk_min"]; ok {
			ess = nanMin(ess, e)
		}
		if e, ok := s[st+"/ess_tail_min"]; ok {
			tail = nanMin(tail, e)
		}
		div += s[st+"/divergences"]
	}
	switch {
	case math.IsNaN(rh):
		why = append(why, "R-hat not computable")
	case rh > MaxRhat:
		why = append(why, fmt.Sprintf("R-hat %.3f", rh))
	}
	need := MinESSShare * kept
	if math.IsNaN(ess) || ess < need {
		why = append(why, fmt.Sprintf("bulk ESS %s < %.0f", essText(ess), need))
	}
	if math.IsNaN(tail) || tail < need {
		why = append(why, fmt.Sprintf("tail ESS %s < %.0f", essText(tail), need))
	}
	if div > MaxDivergentShare*kept {
		why = append(why, plural(int(div), "divergent transition"))
	}
	return strings.Join(why, ", ")
}

// nanMin is math.Min that keeps a NaN (a number that could not be
// computed fails the rule).
func nanMin(a, b float64) float64 {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.NaN()
	}
	return math.Min(a, b)
}

func essText(e float64) string {
	if math.IsNaN(e) {
		return "not computable"
	}
	return fmt.Sprintf("%.0f", e)
}

// converged reports whether a job's fits converged (convergence).
func (rep *Report) converged(m Manifest, s map[string]float64) bool {
	return convergence(s, m.Settings.Chains, m.Settings.Draws) == ""
}

// refitState counts a check's refits with fit records and names those
// that did not converge, each with why.
type refitState struct {
	n, bad int
	named  []string
}

func (rep *Report) refits(m Manifest, check string) refitState {
	var st refitState
	for _, j := range m.Jobs {
		if j.Check != check {
			continue
		}
		s, ok := rep.fits[j.Index]
		if !ok {
			continue
		}
		st.n++
		if why := convergence(s, m.Settings.Chains, m.Settings.Draws); why != "" {
			st.bad++
			st.named = append(st.named, fmt.Sprintf("%s (%s)", j.Label, why))
		}
	}
	return st
}

// enough reports whether bad unconverged of n leave at least
// MinConvergedShare converged.
func enough(bad, n int) bool {
	return float64(n-bad) >= MinConvergedShare*float64(n)-1e-9
}

// convergenceNotes adds to each verdict whose refits did not all converge
// how many did not and which, and the rule.
func (rep *Report) convergenceNotes(m Manifest) {
	for i := range rep.Verdicts {
		v := &rep.Verdicts[i]
		st := rep.refits(m, v.Check)
		if st.bad == 0 {
			continue
		}
		v.Details = append(v.Details, fmt.Sprintf("%d of %s did not converge: %s. A refit converged with R-hat <= %.2f, bulk and tail ESS >= %.0f%% of its %d draws and at most %.1f%% of them divergent; a claim needs %.0f%% of the refits converged, and coverage counts every refit. Longer refits (--warmup, --draws) converge more often.",
			st.bad, plural(st.n, "refit"), strings.Join(st.named, "; "), MaxRhat, 100*MinESSShare, m.Settings.Chains*m.Settings.Draws, 100*MaxDivergentShare, 100*MinConvergedShare))
	}
}
