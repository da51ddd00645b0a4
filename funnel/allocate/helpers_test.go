package allocate

import (
	"math"
	"math/rand/v2"
	"testing"

	"spillway/funnel/model"
	"spillway/funnel/scenario"
	"spillway/mediation"
)

// world is a simulated scenario with its true parameters, in the fitted
// model's units: the scaled data, the stages, and the truth as draws.
type world struct {
	sc              *model.Scaled
	demand, outcome *model.Stage
	truth           *scenario.Result
}

// newWorld simulates the named scenario (changed by edit, if not nil) and
// builds its stages with options o.
func newWorld(t testing.TB, name string, seed uint64, o model.Options, edit func(*scenario.Scenario)) *world {
	t.Helper()
	w, err := simulate(name, seed, o, edit)
	if err != nil {
		t.Fatal(err)
	}
	return w
}

func simulate(name string, seed uint64, o model.Options, edit func(*scenario.Scenario)) (*world, error) {
	s, err := scenario.Named(name, seed, 0, 0)
	if err != nil {
		return nil, err
	}
	if edit != nil {
		edit(s)
	}
	res, err := s.Simulate()
	if err != nil {
		return nil, err
	}
	w := &world{truth: res, sc: model.Scale(res.Data.National(), res.Data.Spec)}
	if w.demand, err = model.Demand(w.sc, o); err != nil {
		return nil, err
	}
	if w.outcome, err = model.Outcome(w.sc, o); err != nil {
		return nil, err
	}
	return w, nil
}

// inputs returns the world's truth as n paired draws: the true parameters
// themselves when n is 1, otherwise with every media coefficient and gamma
// multiplied by exp(0.2 e), e standard normal (a stand-in for a posterior,
// with a seeded spread).
func (w *world) inputs(t testing.TB, n int) Inputs {
	t.Helper()
	in, err := w.draws(n)
	if err != nil {
		t.Fatal(err)
	}
	return in
}

func (w *world) draws(n int) (Inputs, error) {
	d1, err := mediation.Point(w.demand.Names(), w.truth.Demand)
	if err != nil {
		return Inputs{}, err
	}
	d2, err := mediation.Point(w.outcome.Names(), w.truth.Outcome)
	if err != nil {
		return Inputs{}, err
	}
	in := Inputs{Data: w.sc, Demand: w.demand, Outcome: w.outcome,
		DemandDraws: mediation.Draws{Names: d1.Names}, OutcomeDraws: mediation.Draws{Names: d2.Names}}
	rng := rand.New(rand.NewPCG(11, 12))
	for d := 0; d < n; d++ {
		for k, st := range []*model.Stage{w.demand, w.outcome} {
			row := append([]float64(nil), [][]float64{d1.Rows[0], d2.Rows[0]}[k]...)
			if n > 1 {
				l := st.Layout()
				for _, c := range l.Channels() {
					row[c.Coef] *= math.Exp(0.2 * rng.NormFloat64())
				}
				if g := l.GammaSlot(); g >= 0 {
					row[g] *= math.Exp(0.2 * rng.NormFloat64())
				}
			}
			if k == 0 {
				in.DemandDraws.Rows = append(in.DemandDraws.Rows, row)
			} else {
				in.OutcomeDraws.Rows = append(in.OutcomeDraws.Rows, row)
			}
		}
	}
	return in, nil
}

func mustNew(t testing.TB, in Inputs, s Settings) *Problem {
	t.Helper()
	p, err := New(in, s)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func mustOptimise(t testing.TB, p *Problem) *Result {
	t.Helper()
	r, err := p.Optimise()
	if err != nil {
		t.Fatal(err)
	}
	return r
}

func plannedOf(r *Result) []float64 {
	out := make([]float64, len(r.Channels))
	for c, ch := range r.Channels {
		out[c] = ch.Planned
	}
	return out
}
