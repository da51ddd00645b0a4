package model

import (
	"fmt"
	"math"

	"spillway/funnel/mcmc"
)

// Joint fits several stages as one target when a term ties them (a lift
// test on the outcome involves the demand stage's alpha and the outcome
// stage's gamma). Its parameter vector is the stages' vectors one after
// another, and its log density is the sum of theirs plus the cross terms.
// Stages that nothing ties are better fitted separately: the posterior
// factorises, so that is exact, and it is faster.
type Joint struct {
	parts []*Target
	off   []int // parts[k] holds x[off[k]:off[k+1]]
	voff  []int // and constrained values dst[voff[k]:voff[k+1]]
	cross []CrossTerm
	pts   []Point
	lp    []float64 // scratch: each part's first half
	names []string
}

// CrossTerm is a term of a Joint target's log density that depends on the
// parameters of more than one stage.
type CrossTerm interface {
	// Bind checks that the term fits the stages of the points (in the
	// joint target's order) and resolves what it reads; NewJoint calls it
	// once, before any point holds values.
	Bind(pts []Point) error
	// LogDensity returns the term's log density at the points' Values and,
	// when grad is true, adds its gradient with respect to them to their
	// Grad. It must not allocate.
	LogDensity(pts []Point, grad bool) float64
	// Clone returns a bound copy with its own scratch buffers.
	Clone() CrossTerm
}

// Point is one stage's state while a Joint target is evaluated, as its
// cross terms see it.
type Point struct {
	Stage  *Stage
	Layout *Layout
	// Values are the stage's natural parameter values in Layout order
	// (do not modify), except the intercept's slot: it holds the centred
	// intercept, the mean of the linear predictor, not mu.
	Values []float64
	// Grad is the gradient of the log density with respect to Values; a
	// cross term adds its part (never to the intercept's slot).
	Grad []float64
}

var _ mcmc.Target = (*Joint)(nil)

// NewJoint compiles the stages into one target tied by the cross terms,
// which it binds. Parameter names must differ between stages.
func NewJoint(stages []*Stage, cross ...CrossTerm) (*Joint, error) {
	j := &Joint{off: []int{0}, voff: []int{0}}
	seen := map[string]string{}
	for _, st := range stages {
		t, err := st.Target()
		if err != nil {
			return nil, fmt.Errorf("%s stage: %w", st.Name, err)
		}
		for _, n := range st.Names() {
			if other, dup := seen[n]; dup {
				return nil, fmt.Errorf("model: parameter %s is in both the %s and the %s stage", n, other, st.Name)
			}
			seen[n] = st.Name
			j.names = append(j.names, n)
		}
		j.parts = append(j.parts, t)
		j.off = append(j.off, j.off[len(j.off)-1]+t.Dim())
		j.voff = append(j.voff, j.voff[len(j.voff)-1]+len(t.par))
	}
	j.points()
	for _, c := range cross {
		if err := c.Bind(j.pts); err != nil {
			return nil, err
		}
	}
	j.cross = cross
	return j, nil
}

func (j *Joint) points() {
	j.pts = make([]Point, len(j.parts))
	for k, t := range j.parts {
		j.pts[k] = Point{Stage: t.st, Layout: t.st.Layout(), Values: t.nat, Grad: t.gnat}
	}
	j.lp = make([]float64, len(j.parts))
}

// Dim returns the number of free parameters of all stages.
func (j *Joint) Dim() int { return j.off[len(j.off)-1] }

// Names returns the stages' constrained parameter names one stage after
// another.
func (j *Joint) Names() []string { return j.names }

// Offset returns where stage k's unconstrained parameters start in the
// joint vector.
func (j *Joint) Offset(k int) int { return j.off[k] }

// Clone returns an independent copy with its own scratch buffers.
func (j *Joint) Clone() mcmc.Target {
	c := *j
	c.parts = make([]*Target, len(j.parts))
	for k, t := range j.parts {
		c.parts[k] = t.clone()
	}
	c.points()
	c.cross = make([]CrossTerm, len(j.cross))
	for k, t := range j.cross {
		c.cross[k] = t.Clone()
	}
	return &c
}

// Constrain writes the DESIGN.md parameter values of every stage at the
// unconstrained x into dst (len(Names())) and returns it.
func (j *Joint) Constrain(dst, x []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(j.names))
	}
	for k, t := range j.parts {
		t.Constrain(dst[j.voff[k]:j.voff[k+1]], x[j.off[k]:j.off[k+1]])
	}
	return dst
}

// LogProbGrad returns the joint log posterior density at x (up to a
// constant) and writes its gradient into grad.
func (j *Joint) LogProbGrad(grad, x []float64) float64 {
	if len(x) != j.Dim() || len(grad) != j.Dim() {
		panic("model: dimension mismatch")
	}
	return j.logProb(grad, x)
}

// LogProb returns the joint log posterior density at x without its
// gradient.
func (j *Joint) LogProb(x []float64) float64 {
	if len(x) != j.Dim() {
		panic("model: dimension mismatch")
	}
	return j.logProb(nil, x)
}

func (j *Joint) logProb(grad, x []float64) float64 {
	for k, t := range j.parts {
		lp, ok := t.eval(x[j.off[k]:j.off[k+1]], grad != nil)
		if !ok {
			return math.Inf(-1)
		}
		j.lp[k] = lp
	}
	tie := 0.0
	for _, c := range j.cross {
		tie += c.LogDensity(j.pts, grad != nil)
	}
	if notFinite(tie) {
		return math.Inf(-1)
	}
	lp := 0.0
	for k, t := range j.parts {
		var g []float64
		if grad != nil {
			g = grad[j.off[k]:j.off[k+1]]
		}
		l := t.finish(g, j.lp[k])
		if math.IsInf(l, -1) {
			return l
		}
		lp += l
	}
	return lp + tie
}
