package model

import (
	"fmt"
	"math"
)

// SeasonAt returns the seasonal regressors of week index i (0-based, week
// t = i+1 of DESIGN.md): cos(2 pi t/P), cos(4 pi t/P), sin(2 pi t/P),
// sin(4 pi t/P), the regressors of c[1], c[2], d[1], d[2].
func SeasonAt(i int) [4]float64 {
	t := float64(i + 1)
	w := 2 * math.Pi * t / SeasonPeriod
	return [4]float64{math.Cos(w), math.Cos(2 * w), math.Sin(w), math.Sin(2 * w)}
}

// RegressorKind says what a stage's regressor is.
type RegressorKind int

const (
	RoleTrend   RegressorKind = iota // tau
	RoleSeason                       // Scaled.Season[Index]
	RoleControl                      // Scaled.Controls[Index]
	RoleQueries                      // q~, the outcome stage's query term
)

// Role is what one regressor of a stage is.
type Role struct {
	Kind  RegressorKind
	Index int // which season or control
}

// Roles returns the role of each of st's regressors, st built from sc: the
// stages hold the scaled data's own series as their regressors.
func (sc *Scaled) Roles(st *Stage) ([]Role, error) {
	out := make([]Role, len(st.Regressors))
	for i, r := range st.Regressors {
		found := true
		switch {
		case same(r.X, sc.Tau):
			out[i] = Role{Kind: RoleTrend}
		case same(r.X, sc.Queries):
			out[i] = Role{Kind: RoleQueries}
		default:
			found = false
			for k := range sc.Season {
				if same(r.X, sc.Season[k]) {
					out[i], found = Role{Kind: RoleSeason, Index: k}, true
				}
			}
			for k := range sc.Controls {
				if same(r.X, sc.Controls[k]) {
					out[i], found = Role{Kind: RoleControl, Index: k}, true
				}
			}
		}
		if !found {
			return nil, fmt.Errorf("model: regressor %s of the %s stage is not a series of the data", r.Name, st.Name)
		}
	}
	return out, nil
}

// Continue returns the series of st's regressors over weeks 0..weeks-1
// (weeks >= sc.T), st built from sc. In the data's weeks each is the data's
// own series (not copied when weeks == sc.T). Past the data's last week
// the trend continues on the line ScaleTrain drew (tau is 1 at the last
// training week), the seasons continue, every control sits at its mean (0
// standardised) and the queries are NaN: they are unknown there, and
// whoever runs the model forward supplies them.
func (sc *Scaled) Continue(st *Stage, weeks int) ([][]float64, error) {
	if weeks < sc.T {
		return nil, fmt.Errorf("model: cannot continue %d weeks of data to %d", sc.T, weeks)
	}
	roles, err := sc.Roles(st)
	if err != nil {
		return nil, err
	}
	last := sc.T - 1 // the last training week: tau is 1 there
	if sc.Mask != nil {
		for i, m := range sc.Mask {
			if !m {
				last = i
			}
		}
	}
	out := make([][]float64, len(st.Regressors))
	for i, r := range st.Regressors {
		if weeks == sc.T {
			out[i] = r.X
			continue
		}
		x := make([]float64, weeks)
		copy(x, r.X)
		for t := sc.T; t < weeks; t++ {
			switch roles[i].Kind {
			case RoleTrend:
				if last > 0 {
					x[t] = float64(t) / float64(last)
				}
			case RoleSeason:
				x[t] = SeasonAt(t)[roles[i].Index]
			case RoleControl:
				x[t] = 0
			case RoleQueries:
				x[t] = math.NaN()
			}
		}
		out[i] = x
	}
	return out, nil
}

// same reports whether a and b are the same series (one backing array).
func same(a, b []float64) bool {
	return len(a) > 0 && len(a) == len(b) && &a[0] == &b[0]
}
