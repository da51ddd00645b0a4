package mediation

import (
	"fmt"
	"math/rand/v2"
	"time"

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
	acc := newFittedSum(in.Data.T, len(in.DemandDraws.Rows))
	if err := acc.add(in, [2]*rand.Rand{rand.New(rand.NewPCG(seed, 0)), rand.New(rand.NewPCG(seed, 1))}); err != nil {
		return nil, err
	}
	return acc.rows(in.Data.Weeks), nil
}

// fittedSum adds up, in absolute units, the observed series, the mean
// expected values and the predictive draws of one or more series of the
// same weeks (the regions of a panel, or one national series).
type fittedSum struct {
	actual, mean [2][]float64   // [stage][week]
	pred         [2][][]float64 // [stage][week][draw]
}

func newFittedSum(T, nd int) *fittedSum {
	f := &fittedSum{}
	for k := range 2 {
		f.actual[k], f.mean[k], f.pred[k] = make([]float64, T), make([]float64, T), make([][]float64, T)
		for t := range f.pred[k] {
			f.pred[k][t] = make([]float64, nd)
		}
	}
	return f
}

// add runs in's paired draws through the forward simulator and adds its
// series, the noise of stage k drawn from rngs[k].
func (f *fittedSum) add(in *Inputs, rngs [2]*rand.Rand) error {
	sc := in.Data
	sim, err := forward.New(sc, in.Demand, in.Outcome)
	if err != nil {
		return err
	}
	nd := len(in.DemandDraws.Rows)
	if len(in.OutcomeDraws.Rows) != nd {
		return fmt.Errorf("mediation: %d demand draws but %d outcome draws; the stages pair draws by index", nd, len(in.OutcomeDraws.Rows))
	}
	if len(f.actual[0]) != sc.T || len(f.pred[0][0]) != nd {
		return fmt.Errorf("mediation: %d weeks and %d draws to add to %d weeks and %d draws", sc.T, nd, len(f.actual[0]), len(f.pred[0][0]))
	}
	scale := [2]float64{sc.QueriesScale, sc.OutcomeScale}
	for k, y := range [2][]float64{sc.Queries, sc.Outcome} {
		for t, v := range y {
			f.actual[k][t] += v * scale[k]
		}
	}
	// each series' mean is summed over draws in its own units, then scaled
	// (a national fit's values are then bit for bit those of one series)
	mean := [2][]float64{make([]float64, sc.T), make([]float64, sc.T)}
	var run forward.Run
	for d := 0; d < nd; d++ {
		dr := sim.Draw(in.DemandDraws.Rows[d], in.OutcomeDraws.Rows[d])
		sim.Fit(&run, dr)
		for k, n := range [][]float64{run.Queries, run.Outcome} {
			sigma := dr.Demand.Sigma()
			if k == 1 {
				sigma = dr.Outcome.Sigma()
			}
			for t := range n {
				mean[k][t] += n[t] / float64(nd)
				f.pred[k][t][d] += forward.Predictive(n[t], sigma, rngs[k]) * scale[k]
			}
		}
	}
	for k := range mean {
		for t, m := range mean[k] {
			f.mean[k][t] += m * scale[k]
		}
	}
	return nil
}

// rows returns fitted.csv's rows of the sum.
func (f *fittedSum) rows(weeks []time.Time) []fitfolder.Fitted {
	var out []fitfolder.Fitted
	for k, name := range [2]string{"demand", "outcome"} {
		for t, wk := range weeks {
			s := Summarise(f.pred[k][t])
			out = append(out, fitfolder.Fitted{Stage: name, Week: wk, Actual: f.actual[k][t], Mean: f.mean[k][t], Q05: s.Q05, Q95: s.Q95})
		}
	}
	return out
}
