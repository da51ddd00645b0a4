package mediation

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"
	"time"
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
	weeks, err := Fitted(in, seed)
	if err != nil {
		return err
	}
	rows := [][]string{{"stage", "week", "actual", "mean", "q05", "q95"}}
	for _, f := range weeks {
		rows = append(rows, []string{f.Stage, f.Week.Format("2006-01-02"), ff(f.Actual), ff(f.Mean), ff(f.Q05), ff(f.Q95)})
	}
	return writeAll(w, rows)
}

// WriteCurves writes curves.csv:
// channel,path,weekly_spend,mean,q05,q95,current_weekly_spend. A curve is the
// steady-state weekly incremental outcome when the channel spends
// weekly_spend every week (normalised adstock then equals the spend), through
// each path, on a grid from zero to twice the channel's largest weekly spend.
func WriteCurves(w io.Writer, in *Inputs, points int) error {
	curves, err := Curves(in, points)
	if err != nil {
		return err
	}
	rows := [][]string{{"channel", "path", "weekly_spend", "mean", "q05", "q95", "current_weekly_spend"}}
	for _, p := range curves {
		rows = append(rows, []string{p.Channel, p.Path, ff(p.WeeklySpend), ff(p.Mean), ff(p.Q05), ff(p.Q95), ff(p.CurrentWeeklySpend)})
	}
	return writeAll(w, rows)
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
