package mediation

import (
	"fmt"

	"spillway/funnel/mcmc"
)

// Draws are posterior draws of one stage: row d is draw d (chains stacked in
// order), columns follow Names.
type Draws struct {
	Names []string
	Rows  [][]float64
}

// FromFit stacks the chains of f into Draws.
func FromFit(f *mcmc.Fit) Draws {
	d := Draws{Names: f.Names}
	for _, c := range f.Chains {
		r, _ := c.Draws.Dims()
		for i := 0; i < r; i++ {
			d.Rows = append(d.Rows, c.Draws.RawRowView(i))
		}
	}
	return d
}

// Point returns Draws holding the single parameter vector given by name
// (for computing true effects from known parameters). Names missing from
// vals are an error.
func Point(names []string, vals map[string]float64) (Draws, error) {
	row := make([]float64, len(names))
	for i, n := range names {
		v, ok := vals[n]
		if !ok {
			return Draws{}, fmt.Errorf("mediation: no value for parameter %s", n)
		}
		row[i] = v
	}
	return Draws{Names: names, Rows: [][]float64{row}}, nil
}

// index returns the column of each name in d, checking that d matches the
// stage's parameter names exactly.
func (d Draws) check(want []string, stage string) error {
	if len(d.Names) != len(want) {
		return fmt.Errorf("mediation: %s draws have %d parameters, the model has %d", stage, len(d.Names), len(want))
	}
	for i := range want {
		if d.Names[i] != want[i] {
			return fmt.Errorf("mediation: %s draws column %d is %s, the model expects %s", stage, i+1, d.Names[i], want[i])
		}
	}
	return nil
}
