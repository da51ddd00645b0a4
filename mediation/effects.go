package mediation

import (
	"fmt"
	"math"
	"runtime"
	"sort"
	"sync"
	"time"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/model"
	"spillway/funnel/stat"
	"spillway/mediation/linear"
	"spillway/mediation/ols"
)

// Window is a set of weeks [From, To] (indices into the data, inclusive).
type Window struct {
	Name     string // "all", "2024Q3" or "2024-01-01:2024-03-31"
	From, To int
}

// Quarters returns "all" followed by every calendar quarter that has at
// least one week (by week start date) in weeks.
func Quarters(weeks []time.Time) []Window {
	out := []Window{{Name: "all", From: 0, To: len(weeks) - 1}}
	for i, w := range weeks {
		q := fmt.Sprintf("%dQ%d", w.Year(), (int(w.Month())-1)/3+1)
		if last := &out[len(out)-1]; last.Name == q {
			last.To = i
		} else {
			out = append(out, Window{Name: q, From: i, To: i})
		}
	}
	return out
}

// ParseWindow resolves a window name ("all", "YYYYQn" or
// "YYYY-MM-DD:YYYY-MM-DD") against the data's weeks.
func ParseWindow(name string, weeks []time.Time) (Window, error) {
	for _, w := range Quarters(weeks) {
		if w.Name == name {
			return w, nil
		}
	}
	var a, b string
	if i := indexByte(name, ':'); i > 0 {
		a, b = name[:i], name[i+1:]
	} else {
		return Window{}, fmt.Errorf("window %q: expected all, a quarter in the data such as %s, or FROM:TO dates YYYY-MM-DD:YYYY-MM-DD", name, Quarters(weeks)[1].Name)
	}
	from, err1 := time.Parse("2006-01-02", a)
	to, err2 := time.Parse("2006-01-02", b)
	if err1 != nil || err2 != nil || to.Before(from) {
		return Window{}, fmt.Errorf("window %q: expected FROM:TO dates YYYY-MM-DD:YYYY-MM-DD with FROM <= TO", name)
	}
	w := Window{Name: name, From: -1, To: -1}
	for i, wk := range weeks {
		if !wk.Before(from) && !wk.After(to) {
			if w.From < 0 {
				w.From = i
			}
			w.To = i
		}
	}
	if w.From < 0 {
		return Window{}, fmt.Errorf("window %q holds no week of the data (%s to %s)", name, weeks[0].Format("2006-01-02"), weeks[len(weeks)-1].Format("2006-01-02"))
	}
	return w, nil
}

func indexByte(s string, c byte) int {
	for i := 0; i < len(s); i++ {
		if s[i] == c {
			return i
		}
	}
	return -1
}

// Inputs are what the split needs: the scaled data, the compiled stages, and
// paired posterior draws (row d of Demand pairs with row d of Outcome).
type Inputs struct {
	Data                   *model.Scaled
	Demand, Outcome, Naive *model.Stage
	DemandDraws            Draws
	OutcomeDraws           Draws
	NaiveDraws             Draws // may be empty
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
	Borrowed []Effect // search channels: controlled, apparent, naive, borrowed_share (window all)
	// Weekly[c] holds the weekly via-search and direct contributions of upper
	// channel c: [path 0 via_search, 1 direct][draw][week].
	Weekly [][2][][]float64
}

// Split computes the effects for each window by counterfactual simulation.
// Work is spread over the draws in parallel; the result does not depend on
// the number of cores.
func Split(in *Inputs, windows []Window) (*Result, error) {
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
	gi := indexOf(in.Outcome.Names(), "gamma")
	if gi < 0 {
		return nil, fmt.Errorf("mediation: the outcome stage has no gamma")
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
	ctl, app, shr, nai := make([][]float64, ns), make([][]float64, ns), make([][]float64, ns), make([][]float64, ns)
	for s := range ctl {
		ctl[s], app[s], shr[s], nai[s] = make([]float64, nd), make([]float64, nd), make([]float64, nd), make([]float64, nd)
	}
	res.Weekly = make([][2][][]float64, nu)
	for c := range res.Weekly {
		for p := 0; p < 2; p++ {
			res.Weekly[c][p] = make([][]float64, nd)
		}
	}
	T := sc.T
	my := sc.OutcomeScale
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
	for _, r := range in.Outcome.Regressors {
		if r.Name != "gamma" && !isFixed(r.Prior) {
			baseCols = append(baseCols, r.X)
		}
	}
	base := len(baseCols)
	p := base + ns + nu
	upperIdx := make([]int, nu)
	searchIdx := make([]int, ns)
	for c, col := range sc.UpperNames {
		upperIdx[c] = in.Outcome.ChannelIndex(col)
	}
	for s, col := range sc.SearchNames {
		searchIdx[s] = in.Outcome.ChannelIndex(col)
	}
	workers := runtime.GOMAXPROCS(0)
	var wg sync.WaitGroup
	errs := make([]error, workers)
	for wkr := 0; wkr < workers; wkr++ {
		wg.Add(1)
		go func(wkr int) {
			defer wg.Done()
			h1, h2, cf := make([]float64, T), make([]float64, T), make([]float64, T)
			hcf := make([]float64, T)
			X := mat.NewDense(T, p, nil)
			solver := ols.NewSolver(T, p)
			coef := make([]float64, p)
			hs := make([][]float64, ns)
			for s := range hs {
				hs[s] = make([]float64, T)
			}
			for d := wkr; d < nd; d += workers {
				v1, v2 := in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d]
				gamma := v2[gi]
				for c := 0; c < nu; c++ {
					x := sc.Upper[c]
					var alpha, delta float64
					h1, alpha = in.Demand.Response(h1, c, v1, x)
					h2, delta = in.Outcome.Response(h2, upperIdx[c], v2, x)
					wv, wd := make([]float64, T), make([]float64, T)
					for t := 0; t < T; t++ {
						wv[t] = my * gamma * alpha * h1[t]
						wd[t] = my * delta * h2[t]
					}
					res.Weekly[c][0][d], res.Weekly[c][1][d] = wv, wd
					for w, win := range windows {
						copy(cf, x)
						for t := win.From; t <= win.To; t++ {
							cf[t] = 0
						}
						var s1, s2 float64
						hcf, _ = in.Demand.Response(hcf, c, v1, cf)
						for t := win.From; t < T; t++ {
							s1 += h1[t] - hcf[t]
						}
						hcf, _ = in.Outcome.Response(hcf, upperIdx[c], v2, cf)
						for t := win.From; t < T; t++ {
							s2 += h2[t] - hcf[t]
						}
						eff[c][w].via[d] = my * gamma * alpha * s1
						eff[c][w].dir[d] = my * delta * s2
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
					hs[s], _ = in.Outcome.Response(hs[s], searchIdx[s], v2, sc.Search[s])
					for i := 0; i < T; i++ {
						X.Set(i, base+s, hs[s][i])
					}
				}
				for c := 0; c < nu; c++ {
					h2, _ = in.Outcome.Response(h2, upperIdx[c], v2, sc.Upper[c])
					for i := 0; i < T; i++ {
						X.Set(i, base+ns+c, h2[i])
					}
				}
				if _, err := solver.Coef(coef, X, sc.Queries); err != nil {
					errs[wkr] = fmt.Errorf("mediation: draw %d: regressing queries on the outcome stage's regressors: %w", d+1, err)
					return
				}
				for s := 0; s < ns; s++ {
					beta := v2[coefIndex(in.Outcome, searchIdx[s])]
					sum := 0.0
					for _, v := range hs[s] {
						sum += v
					}
					dd := coef[base+s]
					bApp := beta + gamma*dd
					ctl[s][d] = my * beta * sum
					app[s][d] = my * bApp * sum
					shr[s][d] = gamma * dd / bApp
					if hasNaive {
						vn := in.NaiveDraws.Rows[d]
						j := in.Naive.ChannelIndex(sc.SearchNames[s])
						hn, bn := in.Naive.Response(nil, j, vn, sc.Search[s])
						sn := 0.0
						for _, v := range hn {
							sn += v
						}
						nai[s][d] = my * bn * sn
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
		spend := 0.0
		for _, v := range sc.RawSearch[s] {
			spend += v
		}
		res.Borrowed = append(res.Borrowed,
			Effect{Channel: col, Path: "controlled", Window: "all", Draws: ctl[s], Spend: spend},
			Effect{Channel: col, Path: "apparent", Window: "all", Draws: app[s], Spend: spend})
		if hasNaive {
			res.Borrowed = append(res.Borrowed, Effect{Channel: col, Path: "naive", Window: "all", Draws: nai[s], Spend: spend})
		}
		res.Borrowed = append(res.Borrowed, Effect{Channel: col, Path: "borrowed_share", Window: "all", Draws: shr[s], Spend: spend})
	}
	return res, nil
}

// coefIndex returns the position of channel j's coefficient in the stage's
// parameter vector.
func coefIndex(st *model.Stage, j int) int {
	k := 1 + len(st.Regressors)
	for _, c := range st.Channels[:j] {
		if c.Linear {
			k++
		} else {
			k += 4
		}
	}
	return k
}

func indexOf(names []string, n string) int {
	for i, v := range names {
		if v == n {
			return i
		}
	}
	return -1
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
	gi := indexOf(in.Outcome.Names(), "gamma")
	if gi < 0 || nd != len(in.OutcomeDraws.Rows) {
		return nil, fmt.Errorf("mediation: sensitivity needs paired demand and outcome draws and a gamma")
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
			m, n := make([]float64, T), make([]float64, T)
			e1, e2 := make([]float64, T), make([]float64, T)
			h := make([]float64, T)
			for d := wkr; d < nd; d += workers {
				v1, v2 := in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d]
				gamma := v2[gi]
				in.Demand.Predict(m, v1)
				in.Outcome.Predict(n, v2)
				for t := 0; t < T; t++ {
					e2[t] = sc.Queries[t] - m[t]
					e1[t] = sc.Outcome[t] - n[t] + gamma*e2[t]
				}
				s1, s2, r := linear.Moments(e1, e2)
				pd[d] = perDraw{gamma: gamma, k: s1 / s2, r: r}
				for c := 0; c < nu; c++ {
					var alpha float64
					h, alpha = in.Demand.Response(h, c, v1, sc.Upper[c])
					sum := 0.0
					for _, v := range h {
						sum += v
					}
					amp[c][d] = sc.OutcomeScale * alpha * sum
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
		s.Zero = math.NaN()
		if Q != 0 {
			z := P / Q
			s.Zero = z / math.Sqrt(1+z*z)
		}
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
