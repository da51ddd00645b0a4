package allocate

import (
	"errors"
	"math"
	"reflect"
	"runtime"
	"sort"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"spillway/funnel/forward"
	"spillway/funnel/model"
)

// TestEffectIsWholeModel holds each channel's incremental outcome to the
// whole model run forward (forward.Run) over the data's weeks, the plan's
// and the 52 after: the outcome stage's expected outcome, with the
// expected queries of the plan, summed over the plan's weeks and after,
// minus the same with the channel's spend in the plan's weeks set to zero.
// This takes every path (the lift of queries through gamma, direct, paid
// search's own term) from the model's linear predictor, not from paths.
func TestEffectIsWholeModel(t *testing.T) {
	w := newWorld(t, "demo", 1, model.Options{}, nil)
	in := w.inputs(t, 3)
	p := mustNew(t, in, Settings{})
	amounts := []float64{1.3e6, 4e5, 9e5}
	a := make([]int64, len(amounts))
	for c, v := range amounts {
		a[c] = cents(v)
	}
	x := p.weekly(a, nil)
	got := drawTable(len(a), 3)
	p.eng.effects(got, x, []int{0, 1, 2})

	sc := w.sc
	N, T := len(p.weeks), sc.T
	W := T + N + DefaultAfter
	sim, err := forward.New(sc, w.demand, w.outcome)
	if err != nil {
		t.Fatal(err)
	}
	if sim, err = sim.Extend(W); err != nil {
		t.Fatal(err)
	}
	whole := func(c int, tail []float64) []float64 { // data, then the plan's weeks and after
		data := append(append([][]float64(nil), sc.Upper...), sc.Search...)[c]
		out := append([]float64(nil), data...)
		if tail == nil {
			tail = make([]float64, N+DefaultAfter)
		}
		return append(out, tail...)
	}
	plan := func(on []bool) forward.Plan {
		var pl forward.Plan
		for c := range a {
			var tail []float64
			if on[c] {
				tail = x[c]
			}
			if c < len(sc.UpperNames) {
				pl.Upper = append(pl.Upper, whole(c, tail))
			} else {
				pl.Search = append(pl.Search, whole(c, tail))
			}
		}
		return pl
	}
	var run, cf forward.Run
	for d := 0; d < 3; d++ {
		dr := sim.Draw(in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d])
		all := []bool{true, true, true}
		sim.Run(&run, dr, plan(all), nil)
		for c := range a {
			off := append([]bool(nil), all...)
			off[c] = false
			sim.Run(&cf, dr, plan(off), nil)
			want := 0.0
			for i := T; i < W; i++ {
				want += run.Outcome[i] - cf.Outcome[i]
			}
			want *= sc.OutcomeScale
			if !scalar.EqualWithinAbsOrRel(got[c][d], want, 1e-9, 1e-9) {
				t.Errorf("draw %d, %s: effect %.10g, whole model %.10g", d, p.names[c], got[c][d], want)
			}
			if want <= 0 {
				t.Errorf("draw %d, %s: no effect (%v)", d, p.names[c], want)
			}
		}
	}
}

// TestKnapsack: with linear channels (no carryover, no saturation) each
// channel returns r[c] per unit of currency, and the best plan fills the
// channels in decreasing order of r[c], each up to its maximum, until the
// budget is spent (a fractional knapsack; common practice; Boyd and
// Vandenberghe 2004, section 5.5, with linear f). r[c] is written here from
// DESIGN.md's formulas: mean(y) (gamma alpha[c] + delta[c]) / scale[c] for
// an upper-funnel channel, mean(y) beta / scale for paid search.
func TestKnapsack(t *testing.T) {
	o := model.Options{Linear: map[string]bool{"video_spend": true, "audio_spend": true, "search_spend": true}}
	w := newWorld(t, "demo", 1, o, nil)
	in := w.inputs(t, 1)
	sc, tr := w.sc, w.truth.Outcome
	r := []float64{
		sc.OutcomeScale * (tr["gamma"]*w.truth.Demand["alpha[video_spend]"] + tr["delta[video_spend]"]) / sc.UpperScale[0],
		sc.OutcomeScale * (tr["gamma"]*w.truth.Demand["alpha[audio_spend]"] + tr["delta[audio_spend]"]) / sc.UpperScale[1],
		sc.OutcomeScale * tr["beta[search_spend]"] / sc.SearchScale[0],
	}
	t.Logf("returns per unit: video %.6g, audio %.6g, paid search %.6g", r[0], r[1], r[2])
	for _, c := range []struct {
		name   string
		budget float64
		limits []Limit
	}{
		{"caps", 2.0e6, []Limit{{Channel: "video_spend", Max: 1.5e6}, {Channel: "audio_spend", Max: 3e5}, {Channel: "search_spend", Max: 5e5}}},
		{"budget binds", 1.2e6, []Limit{{Channel: "video_spend", Max: 1e6}, {Channel: "audio_spend", Max: 1e6}, {Channel: "search_spend", Max: 1e6}}},
		{"minimums", 2e6, []Limit{{Channel: "video_spend", Min: 1e5, Max: 9e5}, {Channel: "audio_spend", Min: 2e5, Max: 8e5}, {Channel: "search_spend", Min: 3e5, Max: 1e6}}},
	} {
		p := mustNew(t, in, Settings{Budget: c.budget, Limits: c.limits})
		res := mustOptimise(t, p)
		// the closed form: minimums first, then by return
		want := make([]float64, 3)
		left := c.budget
		for i, l := range c.limits {
			want[i] = l.Min
			left -= l.Min
		}
		order := []int{0, 1, 2}
		sort.Slice(order, func(i, j int) bool { return r[order[i]] > r[order[j]] })
		for _, i := range order {
			add := math.Min(c.limits[i].Max-want[i], left)
			want[i] += add
			left -= add
		}
		got := plannedOf(res)
		for i := range got {
			if math.Abs(got[i]-want[i]) > 0.011 {
				t.Errorf("%s: planned %v, the closed form %v", c.name, got, want)
				break
			}
		}
		if !res.Check.OK() {
			t.Errorf("%s: first-order check failed: %v", c.name, res.Check.Failures)
		}
	}
}

// TestFirstOrder optimises the demo's truth (a spread of draws around it)
// under limits and checks the plan as an optimum from outside the check
// code: moving a small amount from any channel to any other, within the
// limits, lowers the posterior mean of the incremental outcome; and the
// reported first-order check holds.
func TestFirstOrder(t *testing.T) {
	w := newWorld(t, "demo", 1, model.Options{}, nil)
	in := w.inputs(t, 40)
	for _, s := range []Settings{
		{},
		{Limits: []Limit{{Channel: "search_spend", Min: 0, Max: 6e5}}},
		{Limits: []Limit{{Channel: "audio_spend", Min: 5e5, Max: 2e6}}, Budget: 2.2e6},
	} {
		p := mustNew(t, in, s)
		res := mustOptimise(t, p)
		if !res.Check.OK() {
			t.Errorf("%+v: %v", s, res.Check.Failures)
		}
		t.Logf("%+v: planned %v, lambda %.6g, spread %.2g, %d starts, %.1f evaluations", s, plannedOf(res), res.Check.Lambda, res.Check.Spread, res.Stats.Starts, res.Stats.Evaluations)
		base := res.IncrementalPlanned.Mean
		planned := plannedOf(res)
		step := 0.01 * p.Budget()
		for i := range planned {
			for j := range planned {
				if i == j {
					continue
				}
				moved := append([]float64(nil), planned...)
				moved[i] -= step
				moved[j] += step
				if !p.within(moved) {
					continue
				}
				r, err := p.Evaluate(moved)
				if err != nil {
					t.Fatal(err)
				}
				if r.IncrementalPlanned.Mean > base+1e-9*math.Abs(base) {
					t.Errorf("%+v: moving %.0f from %s to %s raises the outcome from %.6f to %.6f", s, step, p.names[i], p.names[j], base, r.IncrementalPlanned.Mean)
				}
			}
		}
	}
}

// within reports whether amounts keep the problem's limits.
func (p *Problem) within(a []float64) bool {
	for c, v := range a {
		cv := cents(v)
		if cv < p.minC[c] || cv > p.maxC[c] {
			return false
		}
	}
	return true
}

// TestGrid holds one channel and searches the split of the rest between
// the other two by brute force on a fine grid: no point of it beats the
// optimiser's plan. The saturation shapes of the demo (S > 1) make the
// responses convex at low spend, where a local search can stop short.
func TestGrid(t *testing.T) {
	w := newWorld(t, "demo", 1, model.Options{}, nil)
	in := w.inputs(t, 20)
	for _, lock := range []string{"search_spend", "video_spend", "audio_spend"} {
		p := mustNew(t, in, Settings{Lock: []string{lock}})
		res := mustOptimise(t, p)
		best := res.IncrementalPlanned.Mean
		l := p.index(lock)
		var free []int
		for c := range p.names {
			if c != l {
				free = append(free, c)
			}
		}
		rest := p.Budget() - p.Current()[l]
		a := append([]float64(nil), p.Current()...)
		const steps = 200
		for k := 0; k <= steps; k++ {
			a[free[0]] = rest * float64(k) / steps
			a[free[1]] = rest - a[free[0]]
			r, err := p.Evaluate(a)
			if err != nil {
				t.Fatal(err)
			}
			if r.IncrementalPlanned.Mean > best+1e-9*math.Abs(best) {
				t.Errorf("locked %s: the grid's %v gives %.6f, above the plan's %.6f (%v)", lock, a, r.IncrementalPlanned.Mean, best, plannedOf(res))
			}
		}
	}
}

// TestLimitsHold checks limits, locks and the budget to the cent: the
// amounts are whole cents, add up to the budget exactly, keep every limit,
// and a locked channel keeps its current amount and weekly spend.
func TestLimitsHold(t *testing.T) {
	w := newWorld(t, "demo", 1, model.Options{}, nil)
	in := w.inputs(t, 10)
	for _, s := range []Settings{
		{Lock: []string{"video_spend"}, Budget: 2.5e6},
		{Limits: []Limit{{Channel: "video_spend", Min: 1e6, Max: 1.1e6}, {Channel: "search_spend", Min: 123456.78, Max: 123456.78}}, Budget: 2777777.77},
		{Limits: []Limit{{Channel: "audio_spend", Max: 0}}, Budget: 1e6, Quantile: 0.1},
	} {
		p := mustNew(t, in, s)
		res := mustOptimise(t, p)
		var sum int64
		for c, ch := range res.Channels {
			pc := cents(ch.Planned)
			if float64(pc)/100 != ch.Planned {
				t.Errorf("%+v: %s planned %v is not whole cents", s, ch.Channel, ch.Planned)
			}
			sum += pc
			if pc < p.minC[c] || pc > p.maxC[c] {
				t.Errorf("%+v: %s planned %v outside [%v, %v]", s, ch.Channel, ch.Planned, ch.Min, ch.Max)
			}
			var week int64
			for _, v := range res.Weekly[c] {
				week += cents(v)
			}
			if week != pc {
				t.Errorf("%+v: %s weekly spend adds up to %d cents, planned %d", s, ch.Channel, week, pc)
			}
			if ch.Locked && (ch.Planned != ch.Min || ch.Planned != ch.Max) {
				t.Errorf("%+v: %s locked by its limits at %v, planned %v", s, ch.Channel, ch.Min, ch.Planned)
			}
			if contains(s.Lock, ch.Channel) {
				if !ch.Locked || ch.Planned != ch.Current {
					t.Errorf("%+v: locked %s moved from %v to %v", s, ch.Channel, ch.Current, ch.Planned)
				}
				cur := p.weeklyCurrent(c)
				if !reflect.DeepEqual(res.Weekly[c], cur) {
					t.Errorf("%+v: locked %s weekly spend %v, current %v", s, ch.Channel, res.Weekly[c], cur)
				}
			}
		}
		if sum != cents(s.Budget) {
			t.Errorf("%+v: the plan adds up to %d cents, the budget is %d", s, sum, cents(s.Budget))
		}
	}
}

func (p *Problem) weeklyCurrent(c int) []float64 {
	out := make([][]float64, len(p.names))
	p.weekly(p.curC, out)
	return out[c]
}

func contains(s []string, v string) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}

// TestLimitErrors checks that impossible limits are refused with the
// channel and field they concern.
func TestLimitErrors(t *testing.T) {
	w := newWorld(t, "demo", 1, model.Options{}, nil)
	in := w.inputs(t, 2)
	for _, c := range []struct {
		s              Settings
		channel, field string
	}{
		{Settings{Limits: []Limit{{Channel: "tv_spend", Max: 1}}}, "tv_spend", "channel"},
		{Settings{Limits: []Limit{{Channel: "audio_spend", Min: 5, Max: 4}}}, "audio_spend", "min"},
		{Settings{Limits: []Limit{{Channel: "audio_spend", Max: 4}, {Channel: "audio_spend", Max: 5}}}, "audio_spend", "channel"},
		{Settings{Budget: 1e6, Limits: []Limit{{Channel: "video_spend", Min: 6e5, Max: 1e7}, {Channel: "audio_spend", Min: 5e5, Max: 1e7}}}, "audio_spend", "min"},
		{Settings{Budget: 1e6, Limits: []Limit{{Channel: "video_spend", Max: 1e5}, {Channel: "audio_spend", Max: 1e5}, {Channel: "search_spend", Max: 1e5}}}, "", "budget"},
		{Settings{Lock: []string{"radio"}}, "radio", "lock"},
		{Settings{Budget: -5}, "", "budget"},
		{Settings{Lock: []string{"video_spend", "audio_spend", "search_spend"}, Budget: 1}, "video_spend", "min"},
	} {
		_, err := New(in, c.s)
		var le *LimitError
		if !errors.As(err, &le) || le.Channel != c.channel || le.Field != c.field {
			t.Errorf("%+v: got %v, want a limit error on %q %s", c.s, err, c.channel, c.field)
		}
	}
}

// TestPatterns checks the plan's shape: the last weeks' flighting (its own
// amount), an even spread of the same amount, and a quarter of the data
// repeated to the plan's length.
func TestPatterns(t *testing.T) {
	w := newWorld(t, "demo", 1, model.Options{}, nil)
	in := w.inputs(t, 1)
	sc := w.sc
	T := sc.T
	last := mustNew(t, in, Settings{Weeks: 8})
	even := mustNew(t, in, Settings{Weeks: 8, Pattern: "even"})
	q := mustNew(t, in, Settings{Weeks: 20, Pattern: "2024Q2"})
	for c := range last.names {
		raw := append(append([][]float64(nil), sc.RawUpper...), sc.RawSearch...)[c]
		want := 0.0
		for _, v := range raw[T-8:] {
			want += v
		}
		if math.Abs(last.Current()[c]-want) > 0.005 || math.Abs(even.Current()[c]-want) > 0.005 {
			t.Errorf("%s: current %v (even %v), the last 8 weeks spent %v", last.names[c], last.Current()[c], even.Current()[c], want)
		}
		wk := last.weeklyCurrent(c)
		for i, v := range wk {
			if math.Abs(v-raw[T-8+i]) > 0.011 {
				t.Errorf("%s week %d: %v, the data's %v", last.names[c], i, v, raw[T-8+i])
			}
		}
		for _, v := range even.weeklyCurrent(c) {
			if math.Abs(v-want/8) > 0.011 {
				t.Errorf("%s even: %v, want %v", last.names[c], v, want/8)
			}
		}
		// 2024Q2: the weeks starting 2024-04-01 to 2024-06-24 (13 weeks)
		var qs []float64
		for i, d := range sc.Weeks {
			if d.Year() == 2024 && d.Month() >= 4 && d.Month() <= 6 {
				qs = append(qs, raw[i])
			}
		}
		if len(qs) != 13 {
			t.Fatalf("2024Q2 has %d weeks", len(qs))
		}
		for i, v := range q.weeklyCurrent(c) {
			if math.Abs(v-qs[i%13]) > 0.011 {
				t.Errorf("%s 2024Q2 week %d: %v, want %v", last.names[c], i, v, qs[i%13])
			}
		}
	}
	if d := last.Weeks()[0].Sub(sc.Weeks[T-1]).Hours(); d != 7*24 {
		t.Errorf("the plan starts %v hours after the data's last week", d)
	}
}

// TestCoresDoNotMatter runs the same plan on one core and on several: the
// results are identical.
func TestCoresDoNotMatter(t *testing.T) {
	w := newWorld(t, "demo", 1, model.Options{}, nil)
	in := w.inputs(t, 30)
	run := func(procs int) *Result {
		defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(procs))
		r := mustOptimise(t, mustNew(t, in, Settings{Limits: []Limit{{Channel: "search_spend", Max: 7e5}}}))
		r.Stats.Seconds = 0
		return r
	}
	one, four := run(1), run(4)
	if !reflect.DeepEqual(one, four) {
		t.Errorf("one core: %+v\nfour: %+v", one, four)
	}
}

// TestCautious checks the cautious objective against the default on the
// same draws: the cautious plan's 10% quantile of the gain over the current
// plan is at least the mean plan's, and the mean plan's posterior mean gain
// at least the cautious plan's (each is best at what it maximises).
func TestCautious(t *testing.T) {
	w := newWorld(t, "demo", 1, model.Options{}, nil)
	in := w.inputs(t, 60)
	s := Settings{Limits: []Limit{{Channel: "search_spend", Max: 9e5}}}
	mean := mustOptimise(t, mustNew(t, in, s))
	s.Quantile = 0.1
	p := mustNew(t, in, s)
	cautious := mustOptimise(t, p)
	q10 := func(r *Result) float64 {
		e, err := p.Evaluate(plannedOf(r))
		if err != nil {
			t.Fatal(err)
		}
		o := newObjective(p, seq(p.Draws()))
		a := make([]float64, len(p.names))
		for c := range a {
			a[c] = e.Channels[c].Planned
		}
		return o.value(a)
	}
	qm, qc := q10(mean), q10(cautious)
	t.Logf("mean plan %v: gain %.2f, q10 %.2f; cautious plan %v: gain %.2f, q10 %.2f", plannedOf(mean), mean.Gain.Mean, qm, plannedOf(cautious), cautious.Gain.Mean, qc)
	if qc < qm-1e-6*math.Abs(qm) {
		t.Errorf("the cautious plan's q10 of the gain %.4f is below the mean plan's %.4f", qc, qm)
	}
	if cautious.Gain.Mean > mean.Gain.Mean+1e-9*math.Abs(mean.Gain.Mean) {
		t.Errorf("the cautious plan's mean gain %.4f is above the mean plan's %.4f", cautious.Gain.Mean, mean.Gain.Mean)
	}
	if cautious.Check != nil || cautious.Objective != "q0.1 of the gain" {
		t.Errorf("cautious plan: check %v, objective %q", cautious.Check, cautious.Objective)
	}
}

func seq(n int) []int {
	out := make([]int, n)
	for i := range out {
		out[i] = i
	}
	return out
}
