package mediation

import (
	"fmt"
	"math/rand/v2"
	"spillway/funnel/fitfolder"

	"spillway/funnel/forward"
)

// Fitted returns each stage's fit week by week, the demand stage's weeks
// first: the data's spend and observed queries run through every paired
// draw, the posterior mean of the expected value, and the 90% band of the
// posterior predictive (each draw's expected value plus its own noise). The
// noise of stage k comes from the PCG stream (seed, k), so the result is
// reproducible.
func Fitted(in *Inputs, seed uint64) ([]fitfolder.Fitted, error) {
	sc := in.Data
	sim, err := forward.New(sc, in.Demand, in.Outcome)
	if err != nil {
		return nil, err
	}
	nd := len(in.DemandDraws.Rows)
	if len(in.OutcomeDraws.Rows) != nd {
		return nil, fmt.Errorf("mediation: %d demand draws but %d outcome draws; the stages pair draws by index", nd, len(in.OutcomeDraws.Rows))
	}
	stages := []struct {
		name  string
		scale float64
		y     []float64
		rng   *rand.Rand
		pred  [][]float64 // [week][draw]
		mean  []float64
	}{{name: "demand", scale: sc.QueriesScale, y: sc.Queries}, {name: "outcome", scale: sc.OutcomeScale, y: sc.Outcome}}
	for k := range stages {
		st := &stages[k]
		st.rng = rand.New(rand.NewPCG(seed, uint64(k)))
		st.pred = make([][]float64, sc.T)
		for t := range st.pred {
			st.pred[t] = make([]float64, nd)
		}
		st.mean = make([]float64, sc.T)
	}
	var run forward.Run
	for d := 0; d < nd; d++ {
		dr := sim.Draw(in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d])
		sim.Fit(&run, dr)
		for k, n := range [][]float64{run.Queries, run.Outcome} {
			st, sigma := &stages[k], dr.Demand.Sigma()
			if k == 1 {
				sigma = dr.Outcome.Sigma()
			}
			for t := range n {
				st.mean[t] += n[t] / float64(nd)
				st.pred[t][d] = forward.Predictive(n[t], sigma, st.rng) * st.scale
			}
		}
	}
	var out []fitfolder.Fitted
	for _, st := range stages {
		for t, wk := range sc.Weeks {
			s := Summarise(st.pred[t])
			out = append(out, fitfolder.Fitted{Stage: st.name, Week: wk, Actual: st.y[t] * st.scale, Mean: st.mean[t] * st.scale, Q05: s.Q05, Q95: s.Q95})
		}
	}
	return out, nil
}
