package mediation

import "math"

// OmittedControlRho returns the correlation between the errors of the
// demand and outcome stages that leaving one observed control out of both
// stages would induce: with the control z (variance varZ) entering queries
// with coefficient phiQ and the outcome with phiY beside the stages' own
// error sds sigmaQ and sigmaY, the errors of the stages without it are
// phiQ z + eQ and phiY z + eY, whose correlation is
//
//	phiQ phiY varZ / sqrt((sigmaQ² + phiQ² varZ) (sigmaY² + phiY² varZ)).
//
// It benchmarks the break-even rho of the sensitivity analysis: an
// unmeasured common cause as strong as that control, in both stages, would
// make the errors correlate this much. This is the idea of benchmarking by
// observed covariates of Cinelli and Hazlett (2020), "Making sense of
// sensitivity: extending omitted variable bias", JRSS B 82(1):39-67, put
// in terms of the error correlation that spillway's sensitivity uses.
// The result is NaN when both error sds and coefficients are zero.
func OmittedControlRho(phiQ, phiY, sigmaQ, sigmaY, varZ float64) float64 {
	cov := phiQ * phiY * varZ
	return cov / math.Sqrt((sigmaQ*sigmaQ+phiQ*phiQ*varZ)*(sigmaY*sigmaY+phiY*phiY*varZ))
}
