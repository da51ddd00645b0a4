package plots

import (
	"spillway/funnel/fitfolder"
	"spillway/mediation"
)

// Benchmark is the error correlation that leaving one observed control out
// of both stages would induce (mediation.OmittedControlRho), a yardstick
// for the break-even rho of the sensitivity analysis.
type Benchmark struct {
	Control string // the control column
	Rho     float64
}

// ControlBenchmarks returns a Benchmark per control of the fit, computed at
// the posterior means of the control's coefficients in the two stages
// (phi_q, phi_y) and of the stages' error sds (sigma_q, sigma_y) from
// summary.csv; controls are standardised, so their variance is 1. A
// control without those rows is left out.
func ControlBenchmarks(f *fitfolder.Fit) []Benchmark {
	mean := func(name string) (float64, bool) {
		for _, st := range f.Stages {
			if st.Name == "naive" {
				continue
			}
			for _, p := range st.Params {
				if p.Name == name {
					return p.Mean, true
				}
			}
		}
		return 0, false
	}
	sq, ok1 := mean("sigma_q")
	sy, ok2 := mean("sigma_y")
	if !ok1 || !ok2 {
		return nil
	}
	var out []Benchmark
	for _, c := range f.Run.Spec.Controls {
		pq, ok3 := mean("phi_q[" + c + "]")
		py, ok4 := mean("phi_y[" + c + "]")
		if ok3 && ok4 {
			out = append(out, Benchmark{c, mediation.OmittedControlRho(pq, py, sq, sy, 1)})
		}
	}
	return out
}
