package model

import "fmt"

// The default priors of DESIGN.md.
var (
	PriorMu      = Prior{Normal, 0.5, 0.5}
	PriorTrend   = Prior{Normal, 0, 0.5}
	PriorSeason  = Prior{Normal, 0, 0.25}
	PriorControl = Prior{Normal, 0, 0.5}
	PriorCoef    = Prior{HalfNormal, 0.5, 0}
	PriorRetain  = Prior{Beta, 3, 3}
	PriorHalfSat = Prior{Gamma, 3, 3}
	PriorShape   = Prior{Gamma, 4, 2}
	PriorSigma   = Prior{HalfNormal, 0.5, 0}
)

// Options change how stages are built.
type Options struct {
	// Linear lists data columns whose channel term is coef * x (no adstock,
	// no saturation).
	Linear map[string]bool
	// Priors overrides default priors by parameter name.
	Priors map[string]Prior
	// Plain samples in the direct coordinates (for comparison only).
	Plain bool
	// Drift lists data columns whose coefficient drifts by week on every
	// path the channel has (alpha and delta for an upper-funnel channel,
	// beta for paid search): coef exp(f(t)), f smooth with mean zero over
	// the fitted weeks (smooth.go, drift.go). Empty: no drift.
	Drift map[string]bool
	// DriftShape is "" (or DriftSmooth) for a smooth drift, or DriftJumps
	// for a drift that can also jump at candidate weeks (jump.go). Either way
	// an upper-funnel channel's two paths then drift together (DriftTie).
	DriftShape string
	// DriftsApart leaves an upper-funnel channel's two paths' drifts
	// independent, without the DriftTie (for comparison only).
	DriftsApart bool
	// Baseline is "" for the default trend line, or BaselineSmooth for a
	// baseline that moves: a smooth function of the week in its place.
	Baseline string
	// Returns are stated priors on upper-funnel channels' returns
	// (retprior.go); the coefficients they cover get the Conditional
	// family in the demand and the outcome stage, and the stages must be
	// fitted as one Joint target with the priors as cross terms.
	Returns []*ReturnPrior
}

// BaselineSmooth is the Options.Baseline of a baseline that moves.
const BaselineSmooth = "smooth"

// DriftSmooth is the Options.DriftShape of a smooth drift (the default).
const DriftSmooth = "smooth"

func baseStage(name, suffix string, y []float64, sc *Scaled, o Options) *Stage {
	st := &Stage{Name: name, Y: y, Mask: sc.Mask, Intercept: "mu_" + suffix, MuPrior: PriorMu,
		Sigma: "sigma_" + suffix, SigmaPrior: PriorSigma}
	if o.Baseline == BaselineSmooth {
		b := NewBasis(sc.T, sc.Mask)
		st.Baseline = &Smooth{Basis: b, Params: smoothParams("base_sd_"+suffix, "base_len_"+suffix, "base_z_"+suffix, PriorBaseSD, b.M)}
	} else {
		st.Regressors = append(st.Regressors, Regressor{Name: "b_" + suffix, X: sc.Tau, Prior: PriorTrend, Default: Real, Trend: true})
	}
	for k, nm := range []string{"c%s[1]", "c%s[2]", "d%s[1]", "d%s[2]"} {
		st.Regressors = append(st.Regressors, Regressor{Name: fmt.Sprintf(nm, suffix), X: sc.Season[k], Prior: PriorSeason, Default: Real})
	}
	for k, z := range sc.Controls {
		st.Regressors = append(st.Regressors, Regressor{Name: fmt.Sprintf("phi_%s[%s]", suffix, sc.ControlNames[k]), X: z, Prior: PriorControl, Default: Real})
	}
	return st
}

func channel(col string, x []float64, coef, lam, k, s string, o Options, mask []bool) Channel {
	c := Channel{Column: col, X: x, Linear: o.Linear[col], Params: mediaParams(col, coef, lam, k, s, o.Linear[col])}
	if o.Drift[col] {
		if o.DriftShape == DriftJumps {
			b := NewJumpBasis(len(x), mask)
			p := smoothParams("drift_sd_"+coef+"["+col+"]", "drift_len_"+coef+"["+col+"]", "drift_z_"+coef+"["+col+"]", PriorDriftSD, b.M)
			c.Drift = &Smooth{Basis: b, Params: append(p, jumpParams("drift_jump_sd_"+coef+"["+col+"]", "drift_jump_"+coef+"["+col+"]", b.J())...)}
		} else {
			b := NewBasis(len(x), mask)
			c.Drift = &Smooth{Basis: b, Params: smoothParams("drift_sd_"+coef+"["+col+"]", "drift_len_"+coef+"["+col+"]", "drift_z_"+coef+"["+col+"]", PriorDriftSD, b.M)}
		}
	}
	return c
}

// Demand returns stage 1: q~[t] on trend, seasonality, controls and each
// upper-funnel channel (alpha, lam, K, S).
func Demand(sc *Scaled, o Options) (*Stage, error) {
	st := baseStage("demand", "q", sc.Queries, sc, o)
	for c, col := range sc.UpperNames {
		st.Channels = append(st.Channels, channel(col, sc.Upper[c], "alpha", "lam", "K", "S", o, sc.Mask))
	}
	if err := withMeasurement(st, sc, "alpha"); err != nil {
		return nil, err
	}
	if err := withFrequency(st, sc, "alpha"); err != nil {
		return nil, err
	}
	st, err := finish(st, o)
	if err != nil {
		return nil, err
	}
	if err := applyReturns(st, o.Returns, true); err != nil {
		return nil, err
	}
	return st, nil
}

// Outcome returns stage 2: y~[t] on trend, seasonality, controls, gamma q~,
// each paid-search channel (beta, lam_s, K_s, S_s) and each upper-funnel
// channel directly (delta, lam2, K2, S2).
func Outcome(sc *Scaled, o Options) (*Stage, error) {
	st := outcomeBase("outcome", sc, o)
	st.Regressors = append(st.Regressors, Regressor{Name: QueryCoef, X: sc.Queries, Prior: PriorCoef, Default: PositiveReal})
	// keep gamma right after the controls, before the channels
	st = withChannels(st, sc, o)
	if err := withMeasurement(st, sc, "delta"); err != nil {
		return nil, err
	}
	if err := withFrequency(st, sc, "delta"); err != nil {
		return nil, err
	}
	st, err := finish(st, o)
	if err != nil {
		return nil, err
	}
	if err := applyReturns(st, o.Returns, false); err != nil {
		return nil, err
	}
	return st, nil
}

// Naive returns stage 2 without the query term: what a model that ignores
// branded search demand would credit to paid search.
func Naive(sc *Scaled, o Options) (*Stage, error) {
	st := withChannels(outcomeBase("naive", sc, o), sc, o)
	if err := withMeasurement(st, sc, "delta"); err != nil {
		return nil, err
	}
	if err := withFrequency(st, sc, "delta"); err != nil {
		return nil, err
	}
	return finish(st, o)
}

// withMeasurement gives each upper-funnel channel of st whose exposure has a
// measurement break (Scaled.Breaks) its log factor on the path whose
// coefficient is coef, with the prior PriorBreak, and each whose exposure
// is observed with error (Scaled.Errors) its latent errors. Either needs a
// channel that saturates and does not drift: a drift in effectiveness and
// a change in the measurement would explain the same weeks.
func withMeasurement(st *Stage, sc *Scaled, coef string) error {
	for c, col := range sc.UpperNames {
		at, sd := sc.BreakAt(c), sc.ErrorSD(c)
		if at == 0 && sd == 0 {
			continue
		}
		ch := &st.Channels[st.ChannelIndex(col)]
		switch {
		case ch.Linear:
			return fmt.Errorf("model: channel %s's exposure has a measurement break or error and the channel is linear; that needs the saturating channel", col)
		case ch.Drift != nil:
			return fmt.Errorf("model: channel %s's exposure has a measurement break or error and the channel drifts; the two would explain the same weeks: choose one", col)
		}
		if at > 0 {
			ch.Break = &Break{At: at, Param: Param{Name: breakName(coef, col), Prior: PriorBreak, Default: Real}}
		}
		if sd > 0 {
			e := &Error{SD: sd}
			for t, x := range ch.X {
				if x > 0 {
					e.Weeks = append(e.Weeks, t)
					e.Params = append(e.Params, Param{Name: errorName(coef, col, t), Prior: PriorLatent, Default: Real})
				}
			}
			ch.Error = e
		}
	}
	return nil
}

func outcomeBase(name string, sc *Scaled, o Options) *Stage {
	return baseStage(name, "y", sc.Outcome, sc, o)
}

func withChannels(st *Stage, sc *Scaled, o Options) *Stage {
	for s, col := range sc.SearchNames {
		st.Channels = append(st.Channels, channel(col, sc.Search[s], "beta", "lam_s", "K_s", "S_s", o, sc.Mask))
	}
	for c, col := range sc.UpperNames {
		st.Channels = append(st.Channels, channel(col, sc.Upper[c], "delta", "lam2", "K2", "S2", o, sc.Mask))
	}
	return st
}

func finish(st *Stage, o Options) (*Stage, error) {
	st.Plain = o.Plain
	for name, p := range o.Priors {
		st.SetPrior(name, p)
	}
	return st, nil
}
