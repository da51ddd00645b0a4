package model

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// ErrImproper is returned when a parameter's prior is flat or Jeffreys: such
// a prior has no distribution to draw from.
var ErrImproper = errors.New("improper prior")

// PriorDraw writes one draw of the stage's parameters from their priors
// into dst (Stage.Names order; a dst of another length is replaced) and
// returns it. Parameters are independent a priori (DESIGN.md); a fixed
// prior gives its value; a Conditional coefficient is NaN, for the
// return prior's Draw to fill once both stages are drawn. A flat or Jeffreys prior has no distribution: the
// error wraps ErrImproper and names the parameter.
func (s *Stage) PriorDraw(dst []float64, rng *rand.Rand) ([]float64, error) {
	names := s.Names()
	dst = resizeTo(dst, len(names))
	k := 0
	draw := func(p Prior) error {
		v, err := drawPrior(p, rng)
		if err != nil {
			return fmt.Errorf("%s: %w", names[k], err)
		}
		dst[k] = v
		k++
		return nil
	}
	if err := draw(s.MuPrior); err != nil {
		return nil, err
	}
	for _, r := range s.Regressors {
		if err := draw(r.Prior); err != nil {
			return nil, err
		}
	}
	for _, c := range s.Channels {
		for _, p := range c.Params {
			if err := draw(p.Prior); err != nil {
				return nil, err
			}
		}
	}
	if err := draw(s.SigmaPrior); err != nil {
		return nil, err
	}
	for _, sm := range s.smooths() {
		for _, p := range sm.Params {
			if err := draw(p.Prior); err != nil {
				return nil, err
			}
		}
	}
	for i := range s.Channels {
		for _, p := range s.Channels[i].measureParams() {
			if err := draw(p.Prior); err != nil {
				return nil, err
			}
		}
	}
	return dst, nil
}

func drawPrior(p Prior, rng *rand.Rand) (float64, error) {
	switch p.Family {
	case Normal:
		return p.P1 + p.P2*rng.NormFloat64(), nil
	case HalfNormal:
		return math.Abs(p.P1 * rng.NormFloat64()), nil
	case Gamma:
		return distuv.Gamma{Alpha: p.P1, Beta: p.P2, Src: rng}.Rand(), nil
	case Beta:
		return distuv.Beta{Alpha: p.P1, Beta: p.P2, Src: rng}.Rand(), nil
	case InvGamma:
		return 1 / distuv.Gamma{Alpha: p.P1, Beta: p.P2, Src: rng}.Rand(), nil
	case StudentT:
		return distuv.StudentsT{Mu: 0, Sigma: p.P2, Nu: p.P1, Src: rng}.Rand(), nil
	case Fixed:
		return p.P1, nil
	case Conditional:
		// drawn after the whole draw, by the return prior (ReturnPrior.Draw)
		return math.NaN(), nil
	case Flat, Jeffreys:
		return 0, fmt.Errorf("%w %s", ErrImproper, p.Family)
	}
	return 0, fmt.Errorf("unknown prior family %q", p.Family)
}

// Baseline returns the outcome stage without any media term: trend,
// seasonality and controls only, no query term, no paid search, no upper
// funnel. Its priors are the outcome stage's (overrides included). The
// support check compares the outcome stage's predictive accuracy with it.
func Baseline(sc *Scaled, o Options) (*Stage, error) {
	return finish(outcomeBase("baseline", sc, o), o)
}

// LogLik writes the log likelihood of each week in the likelihood (the
// weeks not masked, in order), log Normal(Y[t] | n[t], sigma), at the
// constrained draw v into dst and returns it; pred is scratch for the
// linear predictor (either may be nil).
func (s *Stage) LogLik(dst, pred, v []float64) ([]float64, []float64) {
	pred = s.Predict(resizeTo(pred, len(s.Y)), v)
	sigma := v[s.sigmaIndex()]
	c := -math.Log(sigma) - 0.5*math.Log(2*math.Pi)
	dst = dst[:0]
	for t, y := range s.Y {
		if s.Mask != nil && s.Mask[t] {
			continue
		}
		z := (y - pred[t]) / sigma
		dst = append(dst, c-0.5*z*z)
	}
	return dst, pred
}

// sigmaIndex returns the position of sigma in the stage's draws: after the
// intercept, the regressors and the channels (the smooths come after it).
func (s *Stage) sigmaIndex() int {
	k := 1 + len(s.Regressors)
	for _, c := range s.Channels {
		k += len(c.Params)
	}
	return k
}
