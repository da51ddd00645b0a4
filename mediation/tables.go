package mediation

import (
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"time"

	"spillway/funnel/fitfolder"
	"spillway/funnel/model"
)

// EffectsTable returns effects.csv: per effect its mean, 5%, 50% and 95%
// quantiles, and the mean per unit of the channel's raw spend in the
// window (NaN for mediated_share, a fraction, and for a window without
// spend).
func EffectsTable(r *Result) []fitfolder.Effect {
	var rows []fitfolder.Effect
	for _, e := range r.Effects {
		s := Summarise(e.Draws)
		pu := math.NaN()
		if e.Path != "mediated_share" && e.Spend > 0 {
			pu = s.Mean / e.Spend
		}
		rows = append(rows, fitfolder.Effect{Channel: e.Channel, Path: e.Path, Window: e.Window,
			Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95, PerUnitSpend: pu})
	}
	return rows
}

// EffectDrawsTable returns effect_draws.csv: the draws of the direct,
// via_search and total effects, for paired-draw comparisons.
func EffectDrawsTable(r *Result) map[fitfolder.DrawKey]fitfolder.DrawSeries {
	out := map[fitfolder.DrawKey]fitfolder.DrawSeries{}
	for _, e := range r.Effects {
		if e.Path == "mediated_share" {
			continue
		}
		s := fitfolder.DrawSeries{Draw: make([]int, len(e.Draws)), Value: e.Draws}
		for d := range e.Draws {
			s.Draw[d] = d + 1
		}
		out[fitfolder.DrawKey{Channel: e.Channel, Path: e.Path, Window: e.Window}] = s
	}
	return out
}

// BorrowedTable returns borrowed.csv.
func BorrowedTable(r *Result) []fitfolder.Borrowed {
	var rows []fitfolder.Borrowed
	for _, e := range r.Borrowed {
		s := Summarise(e.Draws)
		rows = append(rows, fitfolder.Borrowed{Channel: e.Channel, Measure: e.Path, Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95})
	}
	return rows
}

// WeeklyTable returns weekly.csv: the weekly via-search and direct
// contributions of each upper channel (outcome units, against zero spend in
// every week).
func WeeklyTable(r *Result, weeks []time.Time, channels []string) []fitfolder.Weekly {
	var rows []fitfolder.Weekly
	col := make([]float64, 0, 4096)
	for t, wk := range weeks {
		for c, ch := range channels {
			for p, path := range []string{"via_search", "direct"} {
				col = col[:0]
				for _, d := range r.Weekly[c][p] {
					col = append(col, d[t])
				}
				s := Summarise(col)
				rows = append(rows, fitfolder.Weekly{Week: wk, Channel: ch, Path: path, Mean: s.Mean, Q05: s.Q05, Q95: s.Q95})
			}
		}
	}
	return rows
}

// SensitivityTable returns sensitivity.csv: the via-search effect at each
// rho.
func SensitivityTable(ss []Sensitivity) []fitfolder.Sensitivity {
	var rows []fitfolder.Sensitivity
	for _, s := range ss {
		for i, rho := range s.Rho {
			m := Summarise(s.Draws[i])
			rows = append(rows, fitfolder.Sensitivity{Channel: s.Channel, Rho: rho, Mean: m.Mean, Q05: m.Q05, Q95: m.Q95})
		}
	}
	return rows
}

// BreakevenTable returns breakeven.csv.
func BreakevenTable(ss []Sensitivity) []fitfolder.Breakeven {
	var rows []fitfolder.Breakeven
	for _, s := range ss {
		rows = append(rows, fitfolder.Breakeven{Channel: s.Channel, RhoZero: s.Zero})
	}
	return rows
}

// RhoGrid returns -0.9, -0.8, ..., 0.9.
func RhoGrid() []float64 {
	out := make([]float64, 19)
	for i := range out {
		out[i] = float64(i-9) / 10
	}
	return out
}

// FittedTable returns fitted.csv for the demand (queries) and outcome stages in raw units, with the 90% posterior
// predictive band (each draw's linear predictor plus its own noise). The
// noise is drawn from a PCG stream seeded by seed, so output is
// reproducible.
func FittedTable(in *Inputs, seed uint64) []fitfolder.Fitted {
	sc := in.Data
	var rows []fitfolder.Fitted
	for si, st := range []struct {
		stage *model.Stage
		draws Draws
		scale float64
		y     []float64
		name  string
	}{{in.Demand, in.DemandDraws, sc.QueriesScale, sc.Queries, "demand"}, {in.Outcome, in.OutcomeDraws, sc.OutcomeScale, sc.Outcome, "outcome"}} {
		rng := rand.New(rand.NewPCG(seed, uint64(si)))
		nd := len(st.draws.Rows)
		pred := make([][]float64, sc.T)
		for t := range pred {
			pred[t] = make([]float64, nd)
		}
		sig := len(st.draws.Names) - 1
		n := make([]float64, sc.T)
		var mean []float64 = make([]float64, sc.T)
		for d, v := range st.draws.Rows {
			st.stage.Predict(n, v)
			for t := range n {
				mean[t] += n[t] / float64(nd)
				pred[t][d] = (n[t] + v[sig]*rng.NormFloat64()) * st.scale
			}
		}
		for t, wk := range sc.Weeks {
			s := Summarise(pred[t])
			rows = append(rows, fitfolder.Fitted{Stage: st.name, Week: wk, Actual: st.y[t] * st.scale, Mean: mean[t] * st.scale, Q05: s.Q05, Q95: s.Q95})
		}
	}
	return rows
}

// CurvesTable returns curves.csv. A curve is the
// steady-state weekly incremental outcome when the channel spends
// weekly_spend every week (normalised adstock then equals the spend), through
// each path, on a grid from zero to twice the channel's largest weekly spend.
func CurvesTable(in *Inputs, points int) []fitfolder.Curve {
	sc := in.Data
	var rows []fitfolder.Curve
	gi := indexOf(in.Outcome.Names(), "gamma")
	nd := len(in.DemandDraws.Rows)
	one := []float64{0}
	for c, col := range sc.UpperNames {
		maxSpend, total := 0.0, 0.0
		for _, v := range sc.RawUpper[c] {
			maxSpend = math.Max(maxSpend, v)
			total += v
		}
		current := total / float64(sc.T)
		j2 := in.Outcome.ChannelIndex(col)
		via, dir, tot := make([]float64, nd), make([]float64, nd), make([]float64, nd)
		for i := 0; i < points; i++ {
			spend := 2 * maxSpend * float64(i) / float64(points-1)
			x := spend / sc.UpperScale[c]
			for d := 0; d < nd; d++ {
				v1, v2 := in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d]
				// a constant input x gives normalised adstock x in steady state;
				// evaluate H there with lam = 0 (identity adstock) via Response
				h1, alpha := steadyResponse(in.Demand, c, v1, x, one)
				h2, delta := steadyResponse(in.Outcome, j2, v2, x, one)
				via[d] = sc.OutcomeScale * v2[gi] * alpha * h1
				dir[d] = sc.OutcomeScale * delta * h2
				tot[d] = via[d] + dir[d]
			}
			for _, p := range []struct {
				name string
				x    []float64
			}{{"direct", dir}, {"via_search", via}, {"total", tot}} {
				s := Summarise(p.x)
				rows = append(rows, fitfolder.Curve{Channel: col, Path: p.name, WeeklySpend: spend, Mean: s.Mean, Q05: s.Q05, Q95: s.Q95, CurrentWeeklySpend: current})
			}
		}
	}
	return rows
}

// steadyResponse returns H(x; K, S) of channel j at v (x itself when linear)
// and the channel's coefficient.
func steadyResponse(st *model.Stage, j int, v []float64, x float64, buf []float64) (float64, float64) {
	vv := append([]float64(nil), v...)
	k := coefIndex(st, j)
	if !st.Channels[j].Linear {
		vv[k+1] = 0 // retention 0: adstock is the input itself
	}
	buf[0] = x
	h, coef := st.Response(buf, j, vv, buf[:1])
	return h[0], coef
}

// Table writes the human-readable split for one window: per upper channel
// the direct, via-search and total effects with 90% intervals and the
// mediated share; per paid-search channel the borrowed share.
func Table(w io.Writer, r *Result, window string, unit string) error {
	fmt.Fprintf(w, "Effect of each upper-funnel channel, window %s (%s; mean and 90%% interval)\n", window, unit)
	fmt.Fprintf(w, "%-16s %-26s %-26s %-26s %s\n", "channel", "direct", "via search", "total", "share via search")
	byKey := map[string]Summary{}
	var chans []string
	for _, e := range r.Effects {
		if e.Window != window {
			continue
		}
		if e.Path == "direct" {
			chans = append(chans, e.Channel)
		}
		byKey[e.Channel+"/"+e.Path] = Summarise(e.Draws)
	}
	if len(chans) == 0 {
		return fmt.Errorf("mediation: no effects for window %s", window)
	}
	iv := func(s Summary) string { return fmt.Sprintf("%.0f [%.0f, %.0f]", s.Mean, s.Q05, s.Q95) }
	for _, c := range chans {
		sh := byKey[c+"/mediated_share"]
		fmt.Fprintf(w, "%-16s %-26s %-26s %-26s %.0f%% [%.0f%%, %.0f%%]\n", c, iv(byKey[c+"/direct"]), iv(byKey[c+"/via_search"]), iv(byKey[c+"/total"]), 100*sh.Mean, 100*sh.Q05, 100*sh.Q95)
	}
	fmt.Fprintf(w, "\nPaid search, whole period (%s)\n", unit)
	fmt.Fprintf(w, "%-16s %-26s %-26s %s\n", "channel", "controlled", "apparent", "borrowed share")
	bk := map[string]Summary{}
	var sch []string
	for _, e := range r.Borrowed {
		if e.Path == "controlled" {
			sch = append(sch, e.Channel)
		}
		bk[e.Channel+"/"+e.Path] = Summarise(e.Draws)
	}
	for _, c := range sch {
		b := bk[c+"/borrowed_share"]
		fmt.Fprintf(w, "%-16s %-26s %-26s %.0f%% [%.0f%%, %.0f%%]\n", c, iv(bk[c+"/controlled"]), iv(bk[c+"/apparent"]), 100*b.Mean, 100*b.Q05, 100*b.Q95)
	}
	return nil
}
