package mcmc

// Model is a log density on unconstrained R^n, up to a constant.
//
// LogProbGrad returns log p(x) and writes its gradient into grad (len Dim()).
// It must not modify x, must not allocate in steady state, and returns -Inf
// (with any grad) outside the support instead of panicking. A Model keeps
// scratch buffers, so one value must not be shared between goroutines.
type Model interface {
	Dim() int
	LogProbGrad(grad, x []float64) float64
}

// Target is a Model that the multi-chain runner can name, map back to the
// constrained parameters, and copy for each chain.
type Target interface {
	Model
	// Names returns the constrained parameter names, e.g. "alpha[video_spend]".
	Names() []string
	// Constrain writes the constrained values of the unconstrained point x into
	// dst (len(Names())) and returns dst; a nil dst allocates.
	Constrain(dst, x []float64) []float64
	// Clone returns an independent copy with its own scratch buffers.
	Clone() Target
}
