package fitfoldertest

import (
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"strings"
	"time"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
	"spillway/funnel/mcmc"
	"spillway/funnel/stat"
	"spillway/funnel/window"
)

// Options changes the fixture. The zero value is a trustworthy fit with 400
// draws over 156 weeks.
type Options struct {
	// Untrustworthy makes the outcome stage fail its checks (one parameter
	// with R-hat 1.03 and ESS 210, three divergences) and writes the
	// matching verdict.
	Untrustworthy bool
	// Draws is the number of posterior draws; 0 means 400.
	Draws int
	// Weeks is the number of weeks; 0 means 156.
	Weeks int
	// Seed seeds the generator; 0 means 1.
	Seed uint64
}

// Fixture is what Write wrote, as numbers, for tests to compare against.
type Fixture struct {
	Dir     string
	Spec    data.Spec
	Command string
	Weeks   []time.Time
	// Columns maps each data column to its weekly values.
	Columns map[string][]float64
	// Windows lists the windows of effects.csv in file order.
	Windows []string
	// Draws holds the effect draws by key; index i is .draw i+1.
	Draws    map[fitfolder.DrawKey][]float64
	Effects  []fitfolder.Effect
	Borrowed []fitfolder.Borrowed
	// BorrowedDraws holds paid search's borrowed.csv measures per draw
	// (window all), by measure.
	BorrowedDraws map[string][]float64
	Weekly        []fitfolder.Weekly
	Sensitivity   []fitfolder.Sensitivity
	Breakeven     []fitfolder.Breakeven
	Fitted        []fitfolder.Fitted
	Curves        []fitfolder.Curve
	Returns       []fitfolder.Return
	// Implied is priors_implied.csv: each upper channel's whole-period
	// return per 1,000 of spend under the priors and the posterior (the
	// posterior's from returns.csv), and a stated return of video over
	// CustomWindow.
	Implied []fitfolder.Implied
	Params  map[string][]fitfolder.Param
	Stats   map[string]fitfolder.Stats
	Verdict []string
	// Fit is the folder as values, as the fit folder's writer was given it.
	Fit *fitfolder.Fit
}

// Upper, Search and the other names are the fixture's column names.
var (
	Upper  = []string{"video_spend", "audio_spend"}
	Search = []string{"search_spend"}
)

const (
	DateCol    = "week"
	QueriesCol = "branded_queries"
	OutcomeCol = "conversions"
	ControlCol = "price"
	// CustomWindow is the custom window the fixture adds to the quarters.
	CustomWindow = "2024-07-01:2024-12-31"
)

// Write creates dir (which must not exist or be empty) and writes a whole
// fit folder into it.
func Write(dir string, o Options) (*Fixture, error) {
	if o.Draws == 0 {
		o.Draws = 400
	}
	if o.Weeks == 0 {
		o.Weeks = 156
	}
	if o.Seed == 0 {
		o.Seed = 1
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	rng := rand.New(rand.NewPCG(o.Seed, 7))
	fx := &Fixture{
		Dir: dir,
		Spec: data.Spec{Data: "weekly.csv", Date: DateCol, Upper: Upper, Search: Search,
			Queries: QueriesCol, Outcome: OutcomeCol, Controls: []string{ControlCol}},
		Columns:       map[string][]float64{},
		Draws:         map[fitfolder.DrawKey][]float64{},
		BorrowedDraws: map[string][]float64{},
		Params:        map[string][]fitfolder.Param{},
		Stats:         map[string]fitfolder.Stats{},
	}
	fx.Command = "spillway run --data weekly.csv --date week --upper video_spend,audio_spend " +
		"--search search_spend --queries branded_queries --outcome conversions --controls price --seed 11 --out " + dir
	start := time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC)
	T := o.Weeks
	for t := range T {
		fx.Weeks = append(fx.Weeks, start.AddDate(0, 0, 7*t))
	}

	// Spend: video in six-week bursts, audio steady with a half-year wave,
	// search steady with a yearly wave.
	video, audio, search := make([]float64, T), make([]float64, T), make([]float64, T)
	price := make([]float64, T)
	for t := range T {
		ft := float64(t)
		if (t/6)%2 == 0 {
			video[t] = 60000 * (1 + 0.3*math.Sin(ft/5))
		} else {
			video[t] = 4000
		}
		video[t] = math.Round(video[t] * (1 + 0.05*rng.NormFloat64()))
		audio[t] = math.Round(15000 + 5000*math.Sin(2*math.Pi*ft/26) + 800*rng.NormFloat64())
		search[t] = math.Round(25000 + 4000*math.Sin(2*math.Pi*ft/52.18) + 1000*rng.NormFloat64())
		price[t] = math.Round((9.99+0.3*math.Sin(ft/9)+0.05*rng.NormFloat64())*100) / 100
	}
	fx.Columns["video_spend"], fx.Columns["audio_spend"], fx.Columns["search_spend"] = video, audio, search
	fx.Columns[ControlCol] = price

	// Weekly mean contributions (conversions) through each path.
	contrib := map[string]map[string][]float64{
		"video_spend":  {fitfolder.PathDirect: response(video, 0.5, 45), fitfolder.PathViaSearch: response(video, 0.6, 65)},
		"audio_spend":  {fitfolder.PathDirect: response(audio, 0.3, 35), fitfolder.PathViaSearch: response(audio, 0.4, 25)},
		"search_spend": {fitfolder.PathDirect: response(search, 0.2, 120)},
	}
	queries, conv := make([]float64, T), make([]float64, T)
	for t := range T {
		ft := float64(t)
		season := math.Sin(2 * math.Pi * ft / 52.18)
		via := contrib["video_spend"][fitfolder.PathViaSearch][t] + contrib["audio_spend"][fitfolder.PathViaSearch][t]
		queries[t] = math.Round(40000 + 3000*season + 160*via + 900*rng.NormFloat64())
		c := 2400 + 150*season + 0.004*(queries[t]-40000)
		for _, ch := range []string{"video_spend", "audio_spend", "search_spend"} {
			c += contrib[ch][fitfolder.PathDirect][t]
		}
		conv[t] = math.Round(c + 60*rng.NormFloat64())
	}
	fx.Columns[QueriesCol], fx.Columns[OutcomeCol] = queries, conv

	// Windows: all, each quarter with weeks, one custom range.
	fx.Windows = []string{"all"}
	var quarters []window.Window
	for y := 2023; y <= fx.Weeks[T-1].Year(); y++ {
		for q := 1; q <= 4; q++ {
			w := window.QuarterOf(y, q)
			if weeksIn(fx.Weeks, w) > 0 {
				quarters = append(quarters, w)
				fx.Windows = append(fx.Windows, w.Name)
			}
		}
	}
	custom, _ := window.Parse(CustomWindow)
	hasCustom := weeksIn(fx.Weeks, custom) > 0
	if hasCustom {
		fx.Windows = append(fx.Windows, CustomWindow)
	}

	// Draws: one shared scale factor per draw and channel-path (the model's
	// parameters are shared by all weeks), a small wobble per quarter.
	n := o.Draws
	channels := []string{"video_spend", "audio_spend", "search_spend"}
	for _, ch := range channels {
		paths := []string{fitfolder.PathDirect, fitfolder.PathViaSearch}
		if ch == "search_spend" {
			paths = paths[:1]
		}
		sdScale := map[string]float64{fitfolder.PathDirect: 0.18, fitfolder.PathViaSearch: 0.22}
		for _, p := range paths {
			g := make([]float64, n)
			for d := range n {
				g[d] = math.Max(0.05, 1+sdScale[p]*rng.NormFloat64())
			}
			all := make([]float64, n)
			cust := make([]float64, n)
			for _, w := range quarters {
				m := sumIn(fx.Weeks, contrib[ch][p], w)
				v := make([]float64, n)
				for d := range n {
					v[d] = m * g[d] * (1 + 0.03*rng.NormFloat64())
					all[d] += v[d]
					if hasCustom && w.Start.After(custom.Start.AddDate(0, 0, -1)) && w.End.Before(custom.End.AddDate(0, 0, 1)) {
						cust[d] += v[d]
					}
				}
				fx.Draws[fitfolder.DrawKey{Channel: ch, Path: p, Window: w.Name}] = v
			}
			fx.Draws[fitfolder.DrawKey{Channel: ch, Path: p, Window: "all"}] = all
			if hasCustom {
				fx.Draws[fitfolder.DrawKey{Channel: ch, Path: p, Window: CustomWindow}] = cust
			}
		}
		for _, w := range fx.Windows {
			tot := make([]float64, n)
			for d := range n {
				for _, p := range paths {
					tot[d] += fx.Draws[fitfolder.DrawKey{Channel: ch, Path: p, Window: w}][d]
				}
			}
			fx.Draws[fitfolder.DrawKey{Channel: ch, Path: fitfolder.PathTotal, Window: w}] = tot
		}
	}

	// effects.csv rows from the draws.
	for _, wn := range fx.Windows {
		w, _ := window.Parse(wn)
		for _, ch := range channels {
			spend := sumIn(fx.Weeks, fx.Columns[ch], w)
			paths := []string{fitfolder.PathDirect, fitfolder.PathViaSearch, fitfolder.PathTotal, fitfolder.PathMediatedShare}
			if ch == "search_spend" {
				paths = []string{fitfolder.PathDirect, fitfolder.PathTotal}
			}
			for _, p := range paths {
				var v []float64
				per := math.NaN()
				if p == fitfolder.PathMediatedShare {
					via := fx.Draws[fitfolder.DrawKey{Channel: ch, Path: fitfolder.PathViaSearch, Window: wn}]
					tot := fx.Draws[fitfolder.DrawKey{Channel: ch, Path: fitfolder.PathTotal, Window: wn}]
					v = make([]float64, n)
					for d := range n {
						v[d] = via[d] / tot[d]
					}
				} else {
					v = fx.Draws[fitfolder.DrawKey{Channel: ch, Path: p, Window: wn}]
				}
				s := slices.Sorted(slices.Values(v))
				e := fitfolder.Effect{Channel: ch, Path: p, Window: wn, Mean: stat.Mean(v),
					Q05: stat.Quantile(s, 0.05), Q50: stat.Quantile(s, 0.5), Q95: stat.Quantile(s, 0.95), PerUnitSpend: per}
				if p != fitfolder.PathMediatedShare {
					e.PerUnitSpend = e.Mean / spend
				}
				fx.Effects = append(fx.Effects, e)
				if p == fitfolder.PathTotal && slices.Contains(Upper, ch) && spend > 0 {
					// returns.csv: the total over spend, and its inverse
					fx.Returns = append(fx.Returns,
						fitfolder.Return{Channel: ch, Window: wn, Measure: "return_on_spend",
							Mean: e.Mean / spend, Q05: e.Q05 / spend, Q50: e.Q50 / spend, Q95: e.Q95 / spend},
						fitfolder.Return{Channel: ch, Window: wn, Measure: "cost_per_incremental",
							Mean: spend / e.Mean, Q05: spend / e.Q95, Q50: spend / e.Q50, Q95: spend / e.Q05})
				}
			}
		}
	}

	// borrowed.csv: apparent = controlled * (1 + k), k the borrowed ratio.
	ctrl := fx.Draws[fitfolder.DrawKey{Channel: "search_spend", Path: fitfolder.PathDirect, Window: "all"}]
	app, share, naive := make([]float64, n), make([]float64, n), make([]float64, n)
	for d := range n {
		k := math.Max(0.05, 0.62+0.1*rng.NormFloat64())
		app[d] = ctrl[d] * (1 + k)
		share[d] = (app[d] - ctrl[d]) / app[d]
		naive[d] = app[d] * (1 + 0.08*rng.NormFloat64())
	}
	for _, m := range []struct {
		name string
		v    []float64
	}{{"controlled", ctrl}, {"apparent", app}, {"naive", naive}, {"borrowed_share", share}} {
		s := slices.Sorted(slices.Values(m.v))
		fx.BorrowedDraws[m.name] = m.v
		fx.Borrowed = append(fx.Borrowed, fitfolder.Borrowed{Channel: "search_spend", Measure: m.name, Window: "all",
			Mean: stat.Mean(m.v), Q05: stat.Quantile(s, 0.05), Q50: stat.Quantile(s, 0.5), Q95: stat.Quantile(s, 0.95)})
	}

	// weekly.csv.
	for t, wk := range fx.Weeks {
		for _, ch := range channels {
			for _, p := range []string{fitfolder.PathDirect, fitfolder.PathViaSearch} {
				c, ok := contrib[ch][p]
				if !ok {
					continue
				}
				fx.Weekly = append(fx.Weekly, fitfolder.Weekly{Week: wk, Channel: ch, Path: p,
					Mean: c[t], Q05: c[t] * 0.72, Q95: c[t] * 1.3})
			}
		}
	}

	// sensitivity.csv and breakeven.csv: the via-search effect falls
	// linearly in rho and reaches zero at rho0 (video inside the range,
	// audio outside it).
	rho0 := map[string]float64{"video_spend": 0.45, "audio_spend": 1.4}
	for _, ch := range Upper {
		e, _ := fx.effect(ch, fitfolder.PathViaSearch, "all")
		half := (e.Q95 - e.Q05) / 2
		for i := -9; i <= 9; i++ {
			rho := float64(i) / 10
			m := e.Mean * (1 - rho/rho0[ch])
			fx.Sensitivity = append(fx.Sensitivity, fitfolder.Sensitivity{Channel: ch, Rho: rho,
				Mean: m, Q05: m - half*(1+0.3*math.Abs(rho)), Q95: m + half*(1+0.3*math.Abs(rho))})
		}
		be := math.NaN()
		if rho0[ch] <= 0.9 {
			be = rho0[ch]
		}
		fx.Breakeven = append(fx.Breakeven, fitfolder.Breakeven{Channel: ch, RhoZero: be})
	}

	// fitted.csv: a predictive mean close to the actuals with a 90% band.
	for _, st := range []struct {
		name   string
		actual []float64
		sd     float64
	}{{"demand", queries, 1100}, {"outcome", conv, 75}} {
		for t, wk := range fx.Weeks {
			m := st.actual[t] + st.sd*rng.NormFloat64()
			fx.Fitted = append(fx.Fitted, fitfolder.Fitted{Stage: st.name, Week: wk, Actual: st.actual[t],
				Mean: m, Q05: m - 1.645*st.sd, Q95: m + 1.645*st.sd})
		}
	}

	// priors_implied.csv
	nan := math.NaN()
	for _, ch := range Upper {
		for _, r := range fx.Returns {
			if r.Channel == ch && r.Measure == "return_on_spend" && (r.Window == "all" || ch == "video_spend" && r.Window == CustomWindow) {
				row := fitfolder.Implied{Channel: ch, Path: fitfolder.PathTotal, Window: r.Window, Measure: fitfolder.ImpliedReturnOnSpend, Per: 1000,
					StatedQ05: nan, StatedQ50: nan, StatedQ95: nan,
					PriorQ05: 100 * r.Q05, PriorQ50: 1000 * r.Q50, PriorQ95: 6000 * r.Q95,
					PostQ05: 1000 * r.Q05, PostQ50: 1000 * r.Q50, PostQ95: 1000 * r.Q95}
				if r.Window != "all" {
					row.StatedQ05, row.StatedQ50, row.StatedQ95 = 0.5, 1.2247448713915889, 3
					row.PriorQ05, row.PriorQ50, row.PriorQ95 = 0.49, 1.23, 3.02
				}
				fx.Implied = append(fx.Implied, row)
			}
		}
	}

	// curves.csv: saturating steady-state response per path.
	for _, ch := range Upper {
		cur := stat.Mean(fx.Columns[ch])
		dmax := map[string]float64{"video_spend": 90, "audio_spend": 110}[ch]
		vmax := map[string]float64{"video_spend": 140, "audio_spend": 70}[ch]
		// the marginal return: the slope of the total curve at cur
		m := dmax*1.2*cur/((2.2*cur)*(2.2*cur)) + vmax*0.9*cur/((1.9*cur)*(1.9*cur))
		fx.Returns = append(fx.Returns, fitfolder.Return{Channel: ch, Window: "all", Measure: "marginal_return",
			Mean: m, Q05: 0.7 * m, Q50: m, Q95: 1.35 * m})
		for i := 0; i <= 30; i++ {
			s := cur * 3 * float64(i) / 30
			d := dmax * s / (s + 1.2*cur)
			v := vmax * s / (s + 0.9*cur)
			for _, pv := range []struct {
				p string
				m float64
			}{{fitfolder.PathDirect, d}, {fitfolder.PathViaSearch, v}, {fitfolder.PathTotal, d + v}} {
				fx.Curves = append(fx.Curves, fitfolder.Curve{Channel: ch, Path: pv.p, WeeklySpend: s,
					Mean: pv.m, Q05: 0.7 * pv.m, Q95: 1.35 * pv.m, CurrentWeeklySpend: cur})
			}
		}
	}

	fx.makeStages(rng, o.Untrustworthy)
	return fx, fx.write()
}

func (fx *Fixture) effect(ch, p, w string) (fitfolder.Effect, bool) {
	for _, e := range fx.Effects {
		if e.Channel == ch && e.Path == p && e.Window == w {
			return e, true
		}
	}
	return fitfolder.Effect{}, false
}

// response returns the weekly contribution scale*H(a(x/mean(x))) with a
// geometric adstock of retention lam and a Hill curve K=1, S=1.5.
func response(x []float64, lam, scale float64) []float64 {
	m := stat.Mean(x)
	out := make([]float64, len(x))
	a := 0.0
	for t, v := range x {
		a = (1-lam)*v/m + lam*a
		h := math.Pow(a, 1.5) / (math.Pow(a, 1.5) + 1)
		out[t] = scale * h
	}
	return out
}

func (fx *Fixture) makeStages(rng *rand.Rand, bad bool) {
	names := map[string][]string{
		"demand": {"mu_q", "b_q", "cq[1]", "cq[2]", "dq[1]", "dq[2]", "phi_q[price]",
			"alpha[video_spend]", "alpha[audio_spend]", "lam[video_spend]", "lam[audio_spend]",
			"K[video_spend]", "K[audio_spend]", "S[video_spend]", "S[audio_spend]", "sigma_q"},
		"outcome": {"mu_y", "b_y", "cy[1]", "cy[2]", "dy[1]", "dy[2]", "phi_y[price]", "gamma",
			"beta[search_spend]", "lam_s[search_spend]", "K_s[search_spend]", "S_s[search_spend]",
			"delta[video_spend]", "delta[audio_spend]", "lam2[video_spend]", "lam2[audio_spend]",
			"K2[video_spend]", "K2[audio_spend]", "S2[video_spend]", "S2[audio_spend]", "sigma_y"},
		"naive": {"mu_y", "b_y", "cy[1]", "cy[2]", "dy[1]", "dy[2]", "phi_y[price]",
			"beta[search_spend]", "lam_s[search_spend]", "K_s[search_spend]", "S_s[search_spend]",
			"delta[video_spend]", "delta[audio_spend]", "sigma_y"},
	}
	for _, st := range fitfolder.StageNames {
		var ps []fitfolder.Param
		for _, name := range names[st] {
			m := 0.2 + 0.8*rng.Float64()
			sd := 0.05 + 0.1*rng.Float64()
			p := fitfolder.Param{Name: name, Mean: m, SD: sd, Q05: m - 1.645*sd, Q50: m, Q95: m + 1.645*sd,
				Rhat: 1 + 0.006*rng.Float64(), ESSBulk: math.Round(700 + 2500*rng.Float64()),
				ESSTail: math.Round(600 + 2000*rng.Float64()), MCSEMean: sd / 30}
			if bad && st == "outcome" && name == "K2[video_spend]" {
				p.Rhat, p.ESSBulk, p.ESSTail = 1.03, 210, 260
			}
			ps = append(ps, p)
		}
		fx.Params[st] = ps
		s := fitfolder.Stats{WallSeconds: 12.5, WarmupSeconds: []float64{5.1, 5.3, 4.9, 5.2},
			SamplingSeconds: []float64{6.2, 6.0, 6.4, 6.1}, GradientEvaluations: []int64{60000, 61000, 59000, 60500},
			Divergences: []int{0, 0, 0, 0}, TreedepthHits: []int{0, 0, 0, 0}, StepSize: []float64{0.31, 0.29, 0.33, 0.30}}
		if bad && st == "outcome" {
			s.Divergences = []int{0, 2, 0, 1}
		}
		fx.Stats[st] = s
	}
	if bad {
		fx.Verdict = []string{"not trustworthy",
			"outcome: R-hat 1.03 > 1.01 for K2[video_spend]",
			"outcome: bulk ESS 210 < 400 for K2[video_spend]",
			"outcome: 3 divergent transitions"}
	} else {
		fx.Verdict = []string{"trustworthy"}
	}
}

// write writes the fixture through the fit folder's own writer.
func (fx *Fixture) write() error {
	col := func(names ...string) [][]float64 {
		var out [][]float64
		for _, n := range names {
			out = append(out, fx.Columns[n])
		}
		return out
	}
	ds := &data.Dataset{Spec: fx.Spec, File: "data.csv", Weeks: fx.Weeks, Regions: []data.Region{{Series: data.Series{
		Weeks: fx.Weeks, Upper: col(fx.Spec.Upper...), Search: col(fx.Spec.Search...), Queries: fx.Columns[QueriesCol],
		Outcome: fx.Columns[OutcomeCol], Controls: col(fx.Spec.Controls...)}}}}
	f := &fitfolder.Fit{
		Dir:  fx.Dir,
		Run:  fitfolder.Run{Spec: fx.Spec, Seed: 11, Chains: 4, Warmup: 500, Draws: 500, Command: fx.Command, DataFile: "data.csv"},
		Data: &fitfolder.Data{Dataset: ds},
	}
	for _, st := range fitfolder.StageNames {
		ps := fx.Params[st]
		f.Stages = append(f.Stages, &fitfolder.Stage{Name: st, Params: ps, Stats: fx.Stats[st], Draws: drawsOf(ps)})
	}
	f.Verdict.Trustworthy = fx.Verdict[0] == "trustworthy"
	for _, line := range fx.Verdict[1:] {
		stage, text, _ := strings.Cut(line, ": ")
		f.Verdict.Reasons = append(f.Verdict.Reasons, fitfolder.Reason{Stage: stage, Text: text})
	}
	f.Split = fitfolder.Split{Effects: fx.Effects, EffectDraws: map[fitfolder.DrawKey]fitfolder.DrawSeries{},
		Borrowed: fx.Borrowed, Weekly: fx.Weekly, Sensitivity: fx.Sensitivity, Breakeven: fx.Breakeven,
		Fitted: fx.Fitted, Curves: fx.Curves, Returns: fx.Returns, Implied: fx.Implied}
	for k, v := range fx.Draws {
		d := make([]int, len(v))
		for i := range d {
			d[i] = i + 1
		}
		f.EffectDraws[k] = fitfolder.DrawSeries{Draw: d, Value: v}
	}
	fx.Fit = f
	return f.Write(fx.Dir)
}

func weeksIn(weeks []time.Time, w window.Window) int {
	n := 0
	for _, t := range weeks {
		if w.Contains(t) {
			n++
		}
	}
	return n
}

func sumIn(weeks []time.Time, v []float64, w window.Window) float64 {
	s := 0.0
	for t, wk := range weeks {
		if w.Contains(wk) {
			s += v[t]
		}
	}
	return s
}

// drawsOf returns a small draws.csv for the parameters ps, so that the
// folder is complete; the charts do not need it.
func drawsOf(ps []fitfolder.Param) *mcmc.Fit {
	chains := make([]mcmc.Chain, 2)
	for c := range chains {
		m := mat.NewDense(5, len(ps), nil)
		for it := range 5 {
			for j, p := range ps {
				m.Set(it, j, p.Mean+p.SD*float64(it-2)/2)
			}
		}
		chains[c] = mcmc.Chain{Draws: m}
	}
	names := make([]string, len(ps))
	for j, p := range ps {
		names[j] = p.Name
	}
	return &mcmc.Fit{Names: names, Chains: chains}
}
