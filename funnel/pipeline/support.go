package pipeline

import (
	"context"
	"fmt"

	"spillway/funnel/loo"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
)

// Support is the check that the media terms explain the outcome at all:
// the outcome stage's expected log predictive density for a left-out week
// (PSIS-LOO) against the same stage without any media term (model.Baseline:
// trend, seasons and controls only; no queries, no paid search, no upper
// funnel), fitted on the same weeks.
type Support struct {
	Outcome, Baseline *loo.Result
	// Diff is the outcome stage's ELPD minus the baseline's, SE its
	// standard error from the weekly differences.
	Diff, SE float64
	// Weeks is the number of weeks compared.
	Weeks int
}

// Supported thresholds. Vehtari, Gelman and Gabry (2017) read an ELPD
// difference against its standard error; Sivula, Magnusson and Vehtari
// (2022, "Uncertainty in Bayesian leave-one-out cross-validation based
// model comparison") call differences below about 4 small whatever their
// standard error. Media are supported when the difference is above both 4
// and twice its standard error. Calibrated on funnel/scenario (support_test
// in this package and cmd/spillway's support tests): the demo and the
// recovery scenarios give differences of tens to hundreds, a pure-noise
// outcome and an outcome that does not depend on spend give differences
// near or below zero.
const (
	SupportMinDiff = 4.0
	SupportMinZ    = 2.0
)

// Supported reports whether the media terms improve the prediction of
// left-out weeks clearly.
func (s *Support) Supported() bool {
	return s.Diff > SupportMinDiff && s.Diff > SupportMinZ*s.SE
}

// Text is the verdict's line on support.
func (s *Support) Text() string {
	ev := fmt.Sprintf("PSIS-LOO expected log predictive density %+.1f ± %.1f against the outcome stage without any media term, %d weeks", s.Diff, s.SE, s.Weeks)
	switch {
	case s.Supported():
		return fmt.Sprintf("media terms improve the prediction of left-out weeks (%s)", ev)
	case s.Diff <= 0:
		return fmt.Sprintf("media effects are NOT SUPPORTED by the data: the outcome predicts left-out weeks as well or better without any media term (%s); the media effects are not distinguishable from noise", ev)
	}
	return fmt.Sprintf("media effects are NOT CLEARLY SUPPORTED by the data: the media terms improve the prediction of left-out weeks too little to tell from noise (%s)", ev)
}

// Note is a caution when the comparison itself is shaky (a Pareto shape
// above 0.7: the leave-one-out estimate for that week is unreliable), or "".
func (s *Support) Note() string {
	n := 0
	for _, r := range []*loo.Result{s.Outcome, s.Baseline} {
		for _, k := range r.K {
			if k > 0.7 {
				n++
			}
		}
	}
	if n == 0 {
		return ""
	}
	return fmt.Sprintf("the leave-one-out estimate is unreliable for %d week(s) (Pareto k > 0.7): an influential week; read the support check with care", n)
}

// CheckSupport fits the baseline stage (FitBaseline) and compares it with
// the fitted outcome stage (CompareSupport).
func CheckSupport(ctx context.Context, f *Fitted, o model.Options, s mcmc.Settings) (*Support, error) {
	base, bf, err := FitBaseline(ctx, f.Data, o, s)
	if err != nil {
		return nil, err
	}
	return CompareSupport(f, base, bf), nil
}

// FitBaseline fits the baseline stage, the outcome stage without any media
// term, with seed s.Seed + 3 (after the three stages of Fit, so the fit's
// draws are unchanged) and the chains s asks for.
func FitBaseline(ctx context.Context, sc *model.Scaled, o model.Options, s mcmc.Settings) (*model.Stage, *mcmc.Fit, error) {
	base, err := model.Baseline(sc, o)
	if err != nil {
		return nil, nil, err
	}
	tg, err := base.Target()
	if err != nil {
		return nil, nil, fmt.Errorf("baseline stage: %w", err)
	}
	set := settings(s, 3)
	set.Recorder = nil
	bf, err := mcmc.Run(ctx, tg, &set)
	if err != nil {
		return nil, nil, fmt.Errorf("baseline stage: %w", err)
	}
	return base, bf, nil
}

// CompareSupport compares the fitted outcome stage with the baseline stage
// base and its fit bf by PSIS-LOO.
func CompareSupport(f *Fitted, base *model.Stage, bf *mcmc.Fit) *Support {
	out := &Support{Outcome: PSISOf(f.Stages[1], f.Fits[1]), Baseline: PSISOf(base, bf)}
	out.Diff, out.SE = loo.Compare(out.Outcome, out.Baseline)
	out.Weeks = len(out.Outcome.Pointwise)
	return out
}

// PSISOf returns the PSIS-LOO estimate of a stage from its fit.
func PSISOf(st *model.Stage, fit *mcmc.Fit) *loo.Result {
	var ll [][]float64
	var pred []float64
	for _, c := range fit.Chains {
		r, _ := c.Draws.Dims()
		for i := 0; i < r; i++ {
			var row []float64
			row, pred = st.LogLik(nil, pred, c.Draws.RawRowView(i))
			ll = append(ll, row)
		}
	}
	return loo.PSIS(ll)
}
