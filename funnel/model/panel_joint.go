package model

import (
	"fmt"
	"math"

	"spillway/funnel/mcmc"
)

// PanelJoint fits region panels tied by lift tests as one target, as Joint
// does for national stages: its parameter vector is the panels' vectors one
// after another, its log density the sum of theirs plus the tests'. A test
// of the outcome ties the demand and the outcome panel (region g's via
// search needs alpha[c,g] and gamma[g]); tests of the queries alone need
// the demand panel only.
type PanelJoint struct {
	parts []*PanelTarget
	off   []int // parts[k] holds x[off[k]:off[k+1]]
	voff  []int // and constrained values dst[voff[k]:voff[k+1]]
	tests []*PanelLiftTest
	ties  []*DriftTie
	pts   []Point // each panel's shared part, as its ties see it
	lp    []float64
	names []string
}

var _ mcmc.Target = (*PanelJoint)(nil)

// NewPanelJoint compiles the panels into one target with the lift tests,
// which it binds. Parameter names must differ between panels.
func NewPanelJoint(panels []*Panel, tests ...*PanelLiftTest) (*PanelJoint, error) {
	j := &PanelJoint{off: []int{0}, voff: []int{0}}
	seen := map[string]string{}
	for _, p := range panels {
		t, err := p.Target()
		if err != nil {
			return nil, fmt.Errorf("%s stage: %w", p.Name, err)
		}
		for _, n := range t.Names() {
			if other, dup := seen[n]; dup {
				return nil, fmt.Errorf("model: parameter %s is in both the %s and the %s panel", n, other, p.Name)
			}
			seen[n] = p.Name
			j.names = append(j.names, n)
		}
		j.parts = append(j.parts, t)
		j.off = append(j.off, j.off[len(j.off)-1]+t.Dim())
		j.voff = append(j.voff, j.voff[len(j.voff)-1]+len(t.Names()))
	}
	for _, l := range tests {
		if err := l.bindPanel(j.parts); err != nil {
			return nil, err
		}
	}
	j.tests = tests
	j.lp = make([]float64, len(j.parts))
	j.points()
	return j, nil
}

// points sets each panel's Point for the ties: its first region's stage
// and the base layout, whose slots lead the panel's natural values and
// their gradients (the drifts every region shares).
func (j *PanelJoint) points() {
	j.pts = make([]Point, len(j.parts))
	for k, t := range j.parts {
		j.pts[k] = Point{Stage: t.p.Stages[0], Layout: t.lay.base, Values: t.nat, Grad: t.gn}
	}
}

// Tie binds the drift ties of upper-funnel channels (DriftTie, its Demand
// and Outcome the panels' places) and adds them to the target: the drift
// of the multiplier every region shares, tied across the two panels as
// nationally.
func (j *PanelJoint) Tie(ties ...*DriftTie) error {
	for _, c := range ties {
		if err := c.Bind(j.pts); err != nil {
			return err
		}
	}
	j.ties = append(j.ties, ties...)
	return nil
}

// Dim returns the number of free parameters of all panels.
func (j *PanelJoint) Dim() int { return j.off[len(j.off)-1] }

// Names returns the panels' constrained parameter names one panel after
// another.
func (j *PanelJoint) Names() []string { return j.names }

// Offset returns where panel k's constrained values start in a draw.
func (j *PanelJoint) Offset(k int) int { return j.voff[k] }

// Clone returns an independent copy with its own scratch buffers.
func (j *PanelJoint) Clone() mcmc.Target {
	c := *j
	c.parts = make([]*PanelTarget, len(j.parts))
	for k, t := range j.parts {
		c.parts[k] = t.Clone().(*PanelTarget)
	}
	c.tests = make([]*PanelLiftTest, len(j.tests))
	for k, l := range j.tests {
		c.tests[k] = l.clonePanel()
	}
	c.lp = make([]float64, len(j.parts))
	c.points()
	c.ties = make([]*DriftTie, len(j.ties))
	for k, t := range j.ties {
		c.ties[k] = t.Clone().(*DriftTie)
	}
	return &c
}

// Constrain writes the DESIGN.md parameter values of every panel at the
// unconstrained x into dst (len(Names())) and returns it.
func (j *PanelJoint) Constrain(dst, x []float64) []float64 {
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
func (j *PanelJoint) LogProbGrad(grad, x []float64) float64 {
	if len(x) != j.Dim() || len(grad) != j.Dim() {
		panic("model: dimension mismatch")
	}
	return j.logProb(grad, x)
}

// LogProb returns the joint log posterior density at x without its
// gradient.
func (j *PanelJoint) LogProb(x []float64) float64 {
	if len(x) != j.Dim() {
		panic("model: dimension mismatch")
	}
	return j.logProb(nil, x)
}

func (j *PanelJoint) logProb(grad, x []float64) float64 {
	for k, t := range j.parts {
		var g []float64
		if grad != nil {
			g = grad[j.off[k]:j.off[k+1]]
		}
		lp, ok := t.evalData(g, x[j.off[k]:j.off[k+1]])
		if !ok {
			return math.Inf(-1)
		}
		j.lp[k] = lp
	}
	tie := 0.0
	for _, l := range j.tests {
		tie += l.logDensity(j.parts, grad != nil)
	}
	for _, c := range j.ties {
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
		l := t.evalFinish(g, j.lp[k])
		if math.IsInf(l, -1) {
			return l
		}
		lp += l
	}
	return lp + tie
}

// StartMetric returns the panels' start metrics one after another
// (PanelTarget.StartMetric), or nil when a panel has none.
func (j *PanelJoint) StartMetric() []float64 {
	var m []float64
	for _, t := range j.parts {
		mk := t.StartMetric()
		if mk == nil {
			return nil
		}
		m = append(m, mk...)
	}
	return m
}

// StartPoint writes each panel's start point into its part of dst
// (PanelTarget.StartPoint) and reports whether every panel has one. The
// lift tests do not move it: the start only has to be near the bulk.
func (j *PanelJoint) StartPoint(dst []float64) bool {
	for k, t := range j.parts {
		if !t.StartPoint(dst[j.off[k]:j.off[k+1]]) {
			return false
		}
	}
	return true
}
