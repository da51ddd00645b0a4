package mediation

import (
	"fmt"
	"math"
	"runtime"
	"sort"
	"sync"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/forward"
	"spillway/funnel/model"
	"spillway/funnel/stat"
	"spillway/funnel/window"
	"spillway/mediation/linear"
)

// Inputs are what the split needs: the scaled data, the compiled stages, and
// paired posterior draws (row d of Demand pairs with row d of Outcome).
type Inputs struct {
	Data                   *model.Scaled
	Demand, Outcome, Naive *model.Stage
	DemandDraws            Draws
	OutcomeDraws           Draws
	NaiveDraws             Draws // may be empty
	// DriftsApart says the stages were fitted with an upper channel's two
	// paths' drifts independent (model.Options.DriftsApart): their prior
	// draws are then each stage's own, not the tie's pair (PriorInputs).
	DriftsApart bool
}

// Effect draws of one channel and path over one window, outcome units.
type Effect struct {
	Channel, Path, Window string
	Draws                 []float64
	Spend                 float64 // the channel's raw spend in the window
}

// Result holds every effect the split reports, per posterior draw.
type Result struct {
	Effects  []Effect // upper channels: direct, via_search, total, mediated_share per window
	Borrowed []Effect // search channels: controlled, apparent, naive, borrowed_share per window
	// ApparentBound counts the draws whose apparent return the constraints
	// of the stage without queries bound (see projection).
	ApparentBound int
	// Weekly[c] holds the weekly via-search and direct contributions of upper
	// channel c: [path 0 via_search, 1 direct][draw][week].
	Weekly [][2][][]float64
}

// Split computes the effects for each window by counterfactual simulation.
// Work is spread over the draws in parallel; the result does not depend on
// the number of cores.
func Split(in *Inputs, windows []window.Window) (*Result, error) {
	if err := in.DemandDraws.check(in.Demand.Names(), "demand"); err != nil {
		return nil, err
	}
	if err := in.OutcomeDraws.check(in.Outcome.Names(), "outcome"); err != nil {
		return nil, err
	}
	nd := len(in.DemandDraws.Rows)
	if len(in.OutcomeDraws.Rows) != nd {
		return nil, fmt.Errorf("mediation: %d demand draws but %d outcome draws; the stages pair draws by index", nd, len(in.OutcomeDraws.Rows))
	}
	hasNaive := in.Naive != nil && len(in.NaiveDraws.Rows) > 0
	if hasNaive {
		if err := in.NaiveDraws.check(in.Naive.Names(), "naive"); err != nil {
			return nil, err
		}
		if len(in.NaiveDraws.Rows) != nd {
			return nil, fmt.Errorf("mediation: %d naive draws but %d outcome draws", len(in.NaiveDraws.Rows), nd)
		}
	}
	sc := in.Data
	nu, ns := len(sc.UpperNames), len(sc.SearchNames)
	if !in.Outcome.Layout().HasGamma() {
		return nil, fmt.Errorf("mediation: the outcome stage has no gamma")
	}
	sim, err := forward.New(sc, in.Demand, in.Outcome)
	if err != nil {
		return nil, err
	}
	var naive *forward.Simulator
	if hasNaive {
		if naive, err = forward.New(sc, in.Demand, in.Naive); err != nil {
			return nil, err
		}
	}
	// per channel x window x path slots
	res := &Result{}
	type slot struct{ via, dir []float64 }
	eff := make([][]slot, nu)
	for c := range eff {
		eff[c] = make([]slot, len(windows))
		for w := range windows {
			eff[c][w] = slot{make([]float64, nd), make([]float64, nd)}
		}
	}
	// paid search per channel x window: controlled, apparent, naive, share
	type bslot struct{ ctl, app, nai, shr []float64 }
	bor := make([][]bslot, ns)
	for s := range bor {
		bor[s] = make([]bslot, len(windows))
		for w := range windows {
			bor[s][w] = bslot{make([]float64, nd), make([]float64, nd), make([]float64, nd), make([]float64, nd)}
		}
	}
	res.Weekly = make([][2][][]float64, nu)
	for c := range res.Weekly {
		for p := 0; p < 2; p++ {
			res.Weekly[c][p] = make([][]float64, nd)
		}
	}
	T := sc.T
	// The omitted-variable identity regresses q~ on stage 2's other
	// sampled regressors: the intercept, trend, seasons and controls that
	// are not held fixed, then every channel's response.
	var baseCols [][]float64
	if !isFixed(in.Outcome.MuPrior) {
		ones := make([]float64, T)
		for i := range ones {
			ones[i] = 1
		}
		baseCols = append(baseCols, ones)
	}
	qi := in.Outcome.Layout().QueryRegressor()
	for i, r := range in.Outcome.Regressors {
		if i != qi && !isFixed(r.Prior) {
			baseCols = append(baseCols, r.X)
		}
	}
	base := len(baseCols)
	p := base + ns + nu
	// The naive stage's priors on the same columns, as normal means and
	// precisions, and their signs: the apparent coefficient is what that
	// stage, with those priors, would find (see projection).
	proj := projection{T: T, search: base, ns: ns}
	if !isFixed(in.Outcome.MuPrior) {
		proj.add(in.Outcome.MuPrior, model.Real)
	}
	for i, r := range in.Outcome.Regressors {
		if i != qi && !isFixed(r.Prior) {
			proj.add(r.Prior, r.Default)
		}
	}
	for _, col := range append(append([]string(nil), sc.SearchNames...), sc.UpperNames...) {
		prm := in.Outcome.Channels[in.Outcome.ChannelIndex(col)].Params[0]
		proj.add(prm.Prior, prm.Default)
	}
	bound := make([]bool, nd)
	workers := runtime.GOMAXPROCS(0)
	var wg sync.WaitGroup
	errs := make([]error, workers)
	for wkr := 0; wkr < workers; wkr++ {
		wg.Add(1)
		go func(wkr int) {
			defer wg.Done()
			up := make([]forward.Upper, nu)
			var cf forward.Upper
			var cfx []float64
			X := mat.NewDense(T+p, p, nil)
			ws := proj.workspace()
			theta := make([]float64, p)
			coef := make([]float64, p)
			var run forward.Run
			hs := make([]forward.Path, ns)
			var hn, cfs, cfn forward.Path
			for d := wkr; d < nd; d += workers {
				dr := sim.Draw(in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d])
				for c := 0; c < nu; c++ {
					x := sc.Upper[c]
					sim.Upper(&up[c], dr, c, x)
					wv, wd := make([]float64, T), make([]float64, T)
					for t := 0; t < T; t++ {
						wv[t] = up[c].Via.At(t)
						wd[t] = up[c].Direct.At(t)
					}
					res.Weekly[c][0][d], res.Weekly[c][1][d] = wv, wd
					for w, win := range windows {
						cfx = forward.Without(cfx, x, win.From, win.To)
						sim.Upper(&cf, dr, c, cfx)
						eff[c][w].via[d] = forward.Effect(up[c].Via, cf.Via, win.From)
						eff[c][w].dir[d] = forward.Effect(up[c].Direct, cf.Direct, win.From)
					}
				}
				// paid search: controlled, and apparent by the omitted-variable identity
				if ns == 0 {
					continue
				}
				for k, col := range baseCols {
					for i, v := range col {
						X.Set(i, k, v)
					}
				}
				for s := 0; s < ns; s++ {
					sim.Search(&hs[s], dr, s, sc.Search[s])
					for i := 0; i < T; i++ {
						X.Set(i, base+s, hs[s].Response[i])
					}
				}
				for c := 0; c < nu; c++ {
					for i := 0; i < T; i++ {
						X.Set(i, base+ns+c, up[c].Direct.Response[i])
					}
				}
				gamma := dr.Outcome.Gamma()
				k := 0
				if !isFixed(in.Outcome.MuPrior) {
					theta[k] = dr.Outcome.Intercept()
					k++
				}
				for i, r := range in.Outcome.Regressors {
					if i != qi && !isFixed(r.Prior) {
						theta[k] = dr.Outcome.Regressor(i)
						k++
					}
				}
				for _, col := range sc.SearchNames {
					m, _ := dr.Outcome.Channel(col)
					theta[k] = m.Coef
					k++
				}
				for _, col := range sc.UpperNames {
					m, _ := dr.Outcome.Channel(col)
					theta[k] = m.Coef
					k++
				}
				sy, sq := dr.Outcome.Sigma(), dr.Demand.Sigma()
				sim.Fit(&run, dr) // the draw's expected outcome, for what X leaves out
				b, err := proj.solve(coef, ws, X, theta, sc.Queries, run.Outcome, gamma, sy*sy+gamma*gamma*sq*sq)
				if err != nil {
					errs[wkr] = fmt.Errorf("mediation: draw %d: projecting the outcome on the stage's regressors without queries: %w", d+1, err)
					return
				}
				bound[d] = b
				for s := 0; s < ns; s++ {
					m, _ := dr.Outcome.Channel(sc.SearchNames[s])
					beta := m.Coef
					bApp := coef[base+s]
					// the apparent path: paid search's response with the
					// coefficient the stage without queries would give it
					apparent := forward.Path{Gain: sc.OutcomeScale * bApp, Response: hs[s].Response}
					var nd forward.Draw
					if hasNaive {
						nd = naive.Draw(in.DemandDraws.Rows[d], in.NaiveDraws.Rows[d])
						naive.Search(&hn, nd, s, sc.Search[s])
					}
					for w, win := range windows {
						cfx = forward.Without(cfx, sc.Search[s], win.From, win.To)
						sim.Search(&cfs, dr, s, cfx)
						b := bor[s][w]
						b.ctl[d] = forward.Effect(hs[s], cfs, win.From)
						b.app[d] = forward.Effect(apparent, cfs, win.From)
						// the borrowed share is a ratio of coefficients:
						// the same in every window
						b.shr[d] = BorrowedShare(bApp, beta)
						if hasNaive {
							naive.Search(&cfn, nd, s, cfx)
							b.nai[d] = forward.Effect(hn, cfn, win.From)
						}
					}
				}
			}
		}(wkr)
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	for _, b := range bound {
		if b {
			res.ApparentBound++
		}
	}
	for c, col := range sc.UpperNames {
		for w, win := range windows {
			spend := 0.0
			for t := win.From; t <= win.To; t++ {
				spend += sc.RawUpper[c][t]
			}
			via, dir := eff[c][w].via, eff[c][w].dir
			tot, share := make([]float64, nd), make([]float64, nd)
			for d := range tot {
				tot[d] = via[d] + dir[d]
				share[d] = via[d] / tot[d]
			}
			for _, e := range []struct {
				path string
				x    []float64
			}{{"direct", dir}, {"via_search", via}, {"total", tot}, {"mediated_share", share}} {
				res.Effects = append(res.Effects, Effect{Channel: col, Path: e.path, Window: win.Name, Draws: e.x, Spend: spend})
			}
		}
	}
	for s, col := range sc.SearchNames {
		for w, win := range windows {
			spend := 0.0
			for t := win.From; t <= win.To; t++ {
				spend += sc.RawSearch[s][t]
			}
			b := bor[s][w]
			res.Borrowed = append(res.Borrowed,
				Effect{Channel: col, Path: "controlled", Window: win.Name, Draws: b.ctl, Spend: spend},
				Effect{Channel: col, Path: "apparent", Window: win.Name, Draws: b.app, Spend: spend})
			if hasNaive {
				res.Borrowed = append(res.Borrowed, Effect{Channel: col, Path: "naive", Window: win.Name, Draws: b.nai, Spend: spend})
			}
			res.Borrowed = append(res.Borrowed, Effect{Channel: col, Path: "borrowed_share", Window: win.Name, Draws: b.shr, Spend: spend})
		}
	}
	return res, nil
}

// Summary is a posterior summary of one effect.
type Summary struct {
	Mean, Q05, Q50, Q95 float64
}

// Summarise returns the mean and the 5%, 50% and 95% quantiles (R type 7)
// of x.
func Summarise(x []float64) Summary {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	return Summary{Mean: stat.Mean(s), Q05: stat.Quantile(s, 0.05), Q50: stat.Quantile(s, 0.5), Q95: stat.Quantile(s, 0.95)}
}

// Sensitivity holds the via-search effect of one upper channel (window all)
// for each assumed correlation rho of the two stages' errors.
type Sensitivity struct {
	Channel string
	Rho     []float64
	Draws   [][]float64 // [rho][draw]
	// Zero is the rho at which the posterior mean of the via-search effect
	// is zero (NaN if it has no root in (-1, 1)).
	Zero float64
	// p and q are the sums over draws of the mean's closed form
	// P - Q rho/sqrt(1-rho^2) (see Sensitivities): the regions' add up to
	// their sum's (SumSensitivities).
	p, q float64
}

// zeroOf returns the root in (-1, 1) of P - Q rho/sqrt(1-rho^2), NaN
// when Q is zero.
func zeroOf(P, Q float64) float64 {
	if Q == 0 {
		return math.NaN()
	}
	z := P / Q
	return z / math.Sqrt(1+z*z)
}

// Sensitivities follows Imai, Keele and Yamamoto (2010): if the demand and
// outcome errors correlate with rho, the outcome stage's query coefficient
// is biased. Per draw, with e2 = q~ - m (demand residuals), e3 = y~ - n
// (outcome residuals) and e1 = e3 + gamma e2 (the outcome residual without
// the query term), the coefficient consistent with rho is
// gamma(rho) = (s1/s2)(r - rho sqrt((1-r^2)/(1-rho^2))), r = corr(e1, e2)
// (mediation/linear.GammaAt). The draw's gamma is shifted by
// gamma(rho) - gamma(0), so rho = 0 reproduces the main result exactly; in a
// linear model fitted by least squares this is the paper's closed form.
//
// The via-search effect of a draw is then A (gamma - k rho sqrt((1-r^2)/(1-rho^2)))
// with A = mean(y) alpha sum_t H and k = s1/s2, so the posterior mean is
// P - Q rho/sqrt(1-rho^2) with P = mean(A gamma), Q = mean(A k sqrt(1-r^2)),
// and its root is rho0 = (P/Q)/sqrt(1+(P/Q)^2), in closed form.
func Sensitivities(in *Inputs, rhos []float64) ([]Sensitivity, error) {
	sc := in.Data
	nd := len(in.DemandDraws.Rows)
	if !in.Outcome.Layout().HasGamma() || nd != len(in.OutcomeDraws.Rows) {
		return nil, fmt.Errorf("mediation: sensitivity needs paired demand and outcome draws and a gamma")
	}
	sim, err := forward.New(sc, in.Demand, in.Outcome)
	if err != nil {
		return nil, err
	}
	nu := len(sc.UpperNames)
	type perDraw struct{ gamma, k, r float64 }
	pd := make([]perDraw, nd)
	amp := make([][]float64, nu) // A per channel and draw
	for c := range amp {
		amp[c] = make([]float64, nd)
	}
	T := sc.T
	workers := runtime.GOMAXPROCS(0)
	var wg sync.WaitGroup
	for wkr := 0; wkr < workers; wkr++ {
		wg.Add(1)
		go func(wkr int) {
			defer wg.Done()
			var run forward.Run
			e1, e2 := make([]float64, T), make([]float64, T)
			for d := wkr; d < nd; d += workers {
				dr := sim.Draw(in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d])
				gamma := dr.Outcome.Gamma()
				sim.Fit(&run, dr)
				m, n := run.Queries, run.Outcome
				for t := 0; t < T; t++ {
					e2[t] = sc.Queries[t] - m[t]
					e1[t] = sc.Outcome[t] - n[t] + gamma*e2[t]
				}
				s1, s2, r := linear.Moments(e1, e2)
				pd[d] = perDraw{gamma: gamma, k: s1 / s2, r: r}
				for c := 0; c < nu; c++ {
					lift := run.Upper[c].Lift
					amp[c][d] = sc.OutcomeScale * lift.Gain * lift.Sum()
				}
			}
		}(wkr)
	}
	wg.Wait()
	out := make([]Sensitivity, nu)
	for c, col := range sc.UpperNames {
		s := Sensitivity{Channel: col, Rho: rhos, Draws: make([][]float64, len(rhos))}
		var P, Q float64
		for d, p := range pd {
			P += amp[c][d] * p.gamma
			Q += amp[c][d] * p.k * math.Sqrt(1-p.r*p.r)
		}
		s.Zero, s.p, s.q = zeroOf(P, Q), P, Q
		for i, rho := range rhos {
			row := make([]float64, nd)
			for d, p := range pd {
				row[d] = amp[c][d] * (p.gamma - p.k*rho*math.Sqrt((1-p.r*p.r)/(1-rho*rho)))
			}
			s.Draws[i] = row
		}
		out[c] = s
	}
	return out, nil
}

func isFixed(p model.Prior) bool { return p.Family == model.Fixed }
