package mediation

import (
	"fmt"
	"io"
	"math"
	"slices"
	"time"
	"unicode/utf8"

	"spillway/funnel/fitfolder"
)

// EffectsTable returns effects.csv: per effect its mean, 5%, 50% and 95%
// quantiles, and the mean per unit of the channel's raw spend in the
// window (NaN for mediated_share, a fraction, and for a window without
// spend).
//
// sup, if not nil, gives each effect's support (Supports): the prior's 90%
// interval, the contraction and the probability of a negligible effect;
// without it those columns are NaN.
func EffectsTable(r *Result, sup map[Key]Support) []fitfolder.Effect {
	var rows []fitfolder.Effect
	for _, e := range r.Effects {
		su, ok := sup[Key{e.Channel, e.Path, e.Window}]
		if !ok {
			su = Support{math.NaN(), math.NaN(), math.NaN(), math.NaN(), math.NaN()}
		}
		s := Summarise(e.Draws)
		pu := math.NaN()
		if e.Path != "mediated_share" && e.Spend > 0 {
			pu = s.Mean / e.Spend
		}
		rows = append(rows, fitfolder.Effect{Channel: e.Channel, Path: e.Path, Window: e.Window,
			Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95, PerUnitSpend: pu,
			PriorQ05: su.PriorQ05, PriorQ95: su.PriorQ95, Contraction: su.Contraction, PNegligible: su.PNegligible})
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
		rows = append(rows, fitfolder.Borrowed{Channel: e.Channel, Measure: e.Path, Window: e.Window, Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95})
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

// Table writes the human-readable split for one window: per upper channel
// the direct, via-search and total effects with 90% intervals and the
// mediated share; per paid-search channel the borrowed share.
func Table(w io.Writer, r *Result, window string, unit string) error {
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
	bk := map[string]Summary{}
	var sch []string
	var whole []fitfolder.Borrowed
	for _, e := range r.Borrowed {
		s := Summarise(e.Draws)
		if e.Window == "all" {
			whole = append(whole, fitfolder.Borrowed{Channel: e.Channel, Measure: e.Path, Window: e.Window, Mean: s.Mean, Q05: s.Q05, Q50: s.Q50, Q95: s.Q95})
		}
		if e.Window != window {
			continue
		}
		if e.Path == "controlled" {
			sch = append(sch, e.Channel)
		}
		bk[e.Channel+"/"+e.Path] = s
	}
	// the channel column is as wide as the longest name (at least 16), the
	// intervals as the widest (at least 26), so long names keep the
	// columns aligned
	cw, iw := 16, 26
	iv := func(s Summary) string { return fmt.Sprintf("%.0f [%.0f, %.0f]", s.Mean, s.Q05, s.Q95) }
	for _, c := range slices.Concat(chans, sch) {
		cw = max(cw, utf8.RuneCountInString(c))
	}
	for _, s := range byKey {
		iw = max(iw, len(iv(s)))
	}
	for _, s := range bk {
		iw = max(iw, len(iv(s)))
	}
	fmt.Fprintf(w, "Effect of each upper-funnel channel, window %s (%s; mean and 90%% interval)\n", window, unit)
	fmt.Fprintf(w, "%-*s %-*s %-*s %-*s %s\n", cw, "channel", iw, "direct", iw, "via search", iw, "total", "share via search")
	for _, c := range chans {
		sh := byKey[c+"/mediated_share"]
		fmt.Fprintf(w, "%-*s %-*s %-*s %-*s %.0f%% [%.0f%%, %.0f%%]\n", cw, c, iw, iv(byKey[c+"/direct"]), iw, iv(byKey[c+"/via_search"]), iw, iv(byKey[c+"/total"]), 100*sh.Mean, 100*sh.Q05, 100*sh.Q95)
	}
	fmt.Fprintf(w, "\nPaid search, window %s (%s)\n", window, unit)
	fmt.Fprintf(w, "%-*s %-*s %-*s %s\n", cw, "channel", iw, "controlled", iw, "apparent", "borrowed share")
	for _, c := range sch {
		b := bk[c+"/borrowed_share"]
		fmt.Fprintf(w, "%-*s %-*s %-*s %.0f%% [%.0f%%, %.0f%%]\n", cw, c, iw, iv(bk[c+"/controlled"]), iw, iv(bk[c+"/apparent"]), 100*b.Mean, 100*b.Q05, 100*b.Q95)
	}
	fmt.Fprintln(w, "borrowed share: per posterior draw, (apparent - controlled) / apparent (divided by controlled where apparent is smaller); its mean and 90% interval.")
	for _, n := range NaiveCheck(whole) {
		fmt.Fprintln(w, n)
	}
	return nil
}
