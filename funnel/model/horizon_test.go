package model

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"spillway/funnel/data"
)

// TestContinue checks the regressors past the data's end: the trend and
// the seasons go on exactly as ScaleTrain draws them in weeks forecast
// beyond the training weeks, the control sits at its mean (0) and the
// queries are unknown (NaN); in the data's weeks every series is the data's.
func TestContinue(t *testing.T) {
	T, N := 60, 8
	rng := rand.New(rand.NewPCG(4, 1))
	col := func() []float64 {
		x := make([]float64, T+N)
		for i := range x {
			x[i] = 1 + rng.Float64()
		}
		return x
	}
	long := data.Series{Upper: [][]float64{col()}, Search: [][]float64{col()}, Queries: col(), Outcome: col(), Controls: [][]float64{col()}}
	for i := 0; i < T+N; i++ {
		long.Weeks = append(long.Weeks, time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC).AddDate(0, 0, 7*i))
	}
	spec := data.Spec{Upper: []string{"video"}, Search: []string{"search"}, Controls: []string{"price"}}
	train := make([]bool, T+N)
	for i := 0; i < T; i++ {
		train[i] = true
	}
	want := ScaleTrain(long, spec, train) // weeks T.. forecast beyond the training weeks
	short := data.Series{Weeks: long.Weeks[:T], Upper: [][]float64{long.Upper[0][:T]}, Search: [][]float64{long.Search[0][:T]},
		Queries: long.Queries[:T], Outcome: long.Outcome[:T], Controls: [][]float64{long.Controls[0][:T]}}
	sc := Scale(short, spec)
	st, _ := Outcome(sc, Options{})
	roles, err := sc.Roles(st)
	if err != nil {
		t.Fatal(err)
	}
	kinds := map[RegressorKind]int{}
	for _, r := range roles {
		kinds[r.Kind]++
	}
	if kinds[RoleTrend] != 1 || kinds[RoleSeason] != 4 || kinds[RoleControl] != 1 || kinds[RoleQueries] != 1 {
		t.Errorf("roles %v", kinds)
	}
	regs, err := sc.Continue(st, T+N)
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range st.Regressors {
		for w := 0; w < T+N; w++ {
			got, exp := regs[i][w], 0.0
			switch {
			case w < T:
				exp = r.X[w]
			case roles[i].Kind == RoleTrend:
				exp = want.Tau[w]
			case roles[i].Kind == RoleSeason:
				exp = want.Season[roles[i].Index][w]
			case roles[i].Kind == RoleQueries:
				exp = math.NaN()
			}
			if got != exp && !(math.IsNaN(got) && math.IsNaN(exp)) {
				t.Errorf("%s week %d: %v, want %v", r.Name, w, got, exp)
			}
		}
	}
	if _, err := sc.Continue(st, T-1); err == nil {
		t.Error("continuing to fewer weeks than the data must be an error")
	}
}
