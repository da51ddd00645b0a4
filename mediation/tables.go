package mediation

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"strconv"
	"time"

	"spillway/funnel/model"
)

func ff(v float64) string {
	if math.IsNaN(v) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

func writeAll(w io.Writer, rows [][]string) error {
	cw := csv.NewWriter(w)
	if err := cw.WriteAll(rows); err != nil {
		return err
	}
	return cw.Error()
}

// WriteEffects writes effects.csv: channel,path,window,mean,q05,q50,q95,per_unit_spend.
// per_unit_spend is the path's mean effect per unit of the channel's raw
// spend in the window (empty for mediated_share, a fraction).
func WriteEffects(w io.Writer, r *Result) error {
	rows := [][]string{{"channel", "path", "window", "mean", "q05", "q50", "q95", "per_unit_spend"}}
	for _, e := range r.Effects {
		s := Summarise(e.Draws)
		pu := math.NaN()
		if e.Path != "mediated_share" && e.Spend > 0 {
			pu = s.Mean / e.Spend
		}
		rows = append(rows, []string{e.Channel, e.Path, e.Window, ff(s.Mean), ff(s.Q05), ff(s.Q50), ff(s.Q95), ff(pu)})
	}
	return writeAll(w, rows)
}

// WriteEffectDraws writes effect_draws.csv: channel,path,window,.draw,value
// for the direct, via_search and total paths, for paired-draw comparisons.
func WriteEffectDraws(w io.Writer, r *Result) error {
	cw := csv.NewWriter(w)
	if err := cw.Write([]string{"channel", "path", "window", ".draw", "value"}); err != nil {
		return err
	}
	for _, e := range r.Effects {
		if e.Path == "mediated_share" {
			continue
		}
		for d, v := range e.Draws {
			if err := cw.Write([]string{e.Channel, e.Path, e.Window, strconv.Itoa(d + 1), ff(v)}); err != nil {
				return err
			}
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteBorrowed writes borrowed.csv: channel,measure,mean,q05,q50,q95.
func WriteBorrowed(w io.Writer, r *Result) error {
	rows := [][]string{{"channel", "measure", "mean", "q05", "q50", "q95"}}
	for _, e := range r.Borrowed {
		s := Summarise(e.Draws)
		rows = append(rows, []string{e.Channel, e.Path, ff(s.Mean), ff(s.Q05), ff(s.Q50), ff(s.Q95)})
	}
	return writeAll(w, rows)
}

// WriteWeekly writes weekly.csv: week,channel,path,mean,q05,q95, the weekly
// via-search and direct contributions of each upper channel (outcome units,
// against zero spend in every week).
func WriteWeekly(w io.Writer, r *Result, weeks []time.Time, channels []string) error {
	rows := [][]string{{"week", "channel", "path", "mean", "q05", "q95"}}
	col := make([]float64, 0, 4096)
	for t, wk := range weeks {
		for c, ch := range channels {
			for p, path := range []string{"via_search", "direct"} {
				col = col[:0]
				for _, d := range r.Weekly[c][p] {
					col = append(col, d[t])
				}
				s := Summarise(col)
				rows = append(rows, []string{wk.Format("2006-01-02"), ch, path, ff(s.Mean), ff(s.Q05), ff(s.Q95)})
			}
		}
	}
	return writeAll(w, rows)
}

// WriteSensitivity writes sensitivity.csv:
// channel,rho,via_search_mean,via_search_q05,via_search_q95.
func WriteSensitivity(w io.Writer, ss []Sensitivity) error {
	rows := [][]string{{"channel", "rho", "via_search_mean", "via_search_q05", "via_search_q95"}}
	for _, s := range ss {
		for i, rho := range s.Rho {
			m := Summarise(s.Draws[i])
			rows = append(rows, []string{s.Channel, strconv.FormatFloat(rho, 'f', 1, 64), ff(m.Mean), ff(m.Q05), ff(m.Q95)})
		}
	}
	return writeAll(w, rows)
}

// WriteBreakeven writes breakeven.csv: channel,rho_zero.
func WriteBreakeven(w io.Writer, ss []Sensitivity) error {
	rows := [][]string{{"channel", "rho_zero"}}
	for _, s := range ss {
		rows = append(rows, []string{s.Channel, ff(s.Zero)})
	}
	return writeAll(w, rows)
}

// RhoGrid returns -0.9, -0.8, ..., 0.9.
func RhoGrid() []float64 {
	out := make([]float64, 19)
	for i := range out {
		out[i] = float64(i-9) / 10
	}
	return out
}

// WriteFitted writes fitted.csv: stage,week,actual,mean,q05,q95 for the
// demand (queries) and outcome stages in raw units, with the 90% posterior
// predictive band (each draw's linear predictor plus its own noise). The
// noise is drawn from a PCG stream seeded by seed, so output is
// reproducible.
func WriteFitted(w io.Writer, in *Inputs, seed uint64) error {
	sc := in.Data
	rows := [][]string{{"stage", "week", "actual", "mean", "q05", "q95"}}
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
			rows = append(rows, []string{st.name, wk.Format("2006-01-02"), ff(st.y[t] * st.scale), ff(mean[t] * st.scale), ff(s.Q05), ff(s.Q95)})
		}
	}
	return writeAll(w, rows)
}

// WriteCurves writes curves.csv:
// channel,path,weekly_spend,mean,q05,q95,current_weekly_spend. A curve is the
// steady-state weekly incremental outcome when the channel spends
// weekly_spend every week (normalised adstock then equals the spend), through
// each path, on a grid from zero to twice the channel's largest weekly spend.
func WriteCurves(w io.Writer, in *Inputs, points int) error {
	sc := in.Data
	rows := [][]string{{"channel", "path", "weekly_spend", "mean", "q05", "q95", "current_weekly_spend"}}
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
				rows = append(rows, []string{col, p.name, ff(spend), ff(s.Mean), ff(s.Q05), ff(s.Q95), ff(current)})
			}
		}
	}
	return writeAll(w, rows)
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
