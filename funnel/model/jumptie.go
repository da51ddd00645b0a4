package model

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/stat/distuv"
)

// JumpTie is the prior that a channel's two paths tend to jump in the same
// week, a CrossTerm of a Joint target of the demand and the outcome stage.
// An upper-funnel channel whose coefficients drift with jumps (jump.go) has
// unit-scale jump weights u_k on its lift of the queries (alpha, demand
// stage) and on its direct effect (delta, outcome stage), each Student-t(nu,
// 0, s) in its own stage. The tie gives each candidate week's pair
// (ua_k, ud_k) the bivariate Student-t(nu) with scale s I instead: the two
// weights share one gamma mixing variable,
//
//	log p(ua, ud) = c - (nu+2)/2 log(1 + (ua^2 + ud^2) / (nu s^2)),
//
// whose marginals are the stages' own t_nu, so each path's prior alone is
// unchanged; jointly, a large jump in one path makes one in the other at the
// same week far less penalised: given ua, ud is t_{nu+1} with scale
// s sqrt((nu + ua^2/s^2) / (nu + 1)). The term is that density divided by
// the two marginals the stages already carry, so the stages themselves stay
// as they are:
//
//	log p(ua, ud) - log t_nu(ua; s) - log t_nu(ud; s)
//
// with every normalising constant, so it is the exact log ratio.
//
// Why (issue 13): a creative refresh moves both paths at once. With
// independent weights the demand stage finds the step in the queries but
// the sparse prior shrinks away the direct effect's step in the outcome
// stage, and gamma, the outcome's coefficient on the queries that carry the
// step, takes what the direct path misses.
type JumpTie struct {
	Column string
	// Demand and Outcome are the joint target's parts holding the demand
	// and the outcome stage.
	Demand, Outcome int

	a, d  int     // the first jump weight's position in each stage's values
	n     int     // the candidate weeks
	nu, s float64 // the weights' Student-t
	c     float64 // the log ratio's constant
}

var _ CrossTerm = (*JumpTie)(nil)

// JumpTies returns a tie (not bound) for every channel whose coefficient
// drifts with jumps in both demand and outcome, the stages that are parts
// d and o of a Joint target; none when no channel does (no drift, a smooth
// drift, or paid search alone: it has one path).
func JumpTies(demand, outcome *Stage, d, o int) []*JumpTie {
	var out []*JumpTie
	ly := outcome.Layout()
	for _, c := range demand.Layout().Channels() {
		if c.Drift.Jump < 0 {
			continue
		}
		if y, ok := ly.Channel(c.Column); ok && y.Drift.Jump >= 0 {
			out = append(out, &JumpTie{Column: c.Column, Demand: d, Outcome: o})
		}
	}
	return out
}

// Bind finds the channel's jump weights in the two stages by their layouts
// and checks that both carry the same Student-t prior on every weight.
func (j *JumpTie) Bind(pts []Point) error {
	bad := func(f string, args ...any) error {
		return fmt.Errorf("jump tie of %s: "+f, append([]any{j.Column}, args...)...)
	}
	if j.Demand < 0 || j.Demand >= len(pts) || j.Outcome < 0 || j.Outcome >= len(pts) || j.Demand == j.Outcome {
		return bad("stages %d and %d of %d", j.Demand, j.Outcome, len(pts))
	}
	weights := func(pt Point) (slot, n int, err error) {
		c, ok := pt.Layout.Channel(j.Column)
		if !ok || c.Drift.Jump < 0 {
			return 0, 0, bad("the %s stage has no such channel drifting with jumps", pt.Stage.Name)
		}
		return c.Drift.Jump + 1, c.Drift.Basis.J(), nil
	}
	a, na, err := weights(pts[j.Demand])
	if err != nil {
		return err
	}
	d, nd, err := weights(pts[j.Outcome])
	if err != nil {
		return err
	}
	if na != nd || !slices.Equal(pts[j.Demand].Layout.channelJumps(j.Column), pts[j.Outcome].Layout.channelJumps(j.Column)) {
		return bad("the stages' candidate weeks differ")
	}
	var first Prior
	for k := 0; k < na; k++ {
		for _, w := range []struct {
			pt   Point
			slot int
		}{{pts[j.Demand], a + k}, {pts[j.Outcome], d + k}} {
			name := w.pt.Layout.Names()[w.slot]
			p := w.pt.Stage.prior(name)
			switch {
			case p == nil:
				return bad("the %s stage has no parameter %s", w.pt.Stage.Name, name)
			case p.Family != StudentT || !(p.P1 > 0) || !(p.P2 > 0):
				return bad("%s has the prior %v; tying the two paths' jumps needs a Student-t on every jump weight", name, *p)
			case k == 0 && w.slot == a:
				first = *p
			case *p != first:
				return bad("%s has the prior %v and %s %v; tying the two paths' jumps needs one Student-t on all of them", name, *p, pts[j.Demand].Layout.Names()[a], first)
			}
		}
	}
	j.a, j.d, j.n, j.nu, j.s = a, d, na, first.P1, first.P2
	// log of Gamma((nu+2)/2) / (Gamma(nu/2) nu pi s^2) over the square of
	// Gamma((nu+1)/2) / (Gamma(nu/2) sqrt(nu pi) s): nu, pi and s cancel
	l2, _ := math.Lgamma(j.nu/2 + 1)
	l0, _ := math.Lgamma(j.nu / 2)
	l1, _ := math.Lgamma((j.nu + 1) / 2)
	j.c = l2 + l0 - 2*l1
	return nil
}

// channelJumps returns the candidate weeks of the drift of column col's
// coefficient (nil when it does not jump).
func (l *Layout) channelJumps(col string) []int {
	c, ok := l.Channel(col)
	if !ok || c.Drift.Jump < 0 {
		return nil
	}
	return c.Drift.Basis.JumpWeeks()
}

// LogDensity returns the tie's log density at the points' values and, with
// grad, adds its gradient to the two stages' Grad.
func (j *JumpTie) LogDensity(pts []Point, grad bool) float64 {
	pa, pd := pts[j.Demand], pts[j.Outcome]
	ua, ud := pa.Values[j.a:j.a+j.n], pd.Values[j.d:j.d+j.n]
	nu, s2 := j.nu, j.s*j.s
	lp := 0.0
	for k := range ua {
		a, d := ua[k]*ua[k]/s2, ud[k]*ud[k]/s2
		qa, qd, q := nu+a, nu+d, nu+a+d
		lp += j.c - 0.5*(nu+2)*math.Log(q/nu) + 0.5*(nu+1)*(math.Log(qa/nu)+math.Log(qd/nu))
		if grad {
			// d/du of -(nu+2)/2 log q + (nu+1)/2 log q_u, with d(u^2/s^2)/du = 2u/s^2
			pa.Grad[j.a+k] += ua[k] / s2 * ((nu+1)/qa - (nu+2)/q)
			pd.Grad[j.d+k] += ud[k] / s2 * ((nu+1)/qd - (nu+2)/q)
		}
	}
	return lp
}

// JumpTieDraws binds the jump ties of the demand and the outcome stage
// (JumpTies) for Draw, outside a Joint target; nil when there are none.
func JumpTieDraws(demand, outcome *Stage) ([]*JumpTie, error) {
	pts := []Point{{Stage: demand, Layout: demand.Layout()}, {Stage: outcome, Layout: outcome.Layout()}}
	ties := JumpTies(demand, outcome, 0, 1)
	for _, t := range ties {
		if err := t.Bind(pts); err != nil {
			return nil, err
		}
	}
	return ties, nil
}

// Draw replaces the tied jump weights in a pair of prior draws (vd of the
// demand stage, vy of the outcome stage, each in its stage's Names order)
// by a draw from the tie's bivariate Student-t: each week's two normals
// times s over the square root of their one Gamma(nu/2, rate nu/2) mixing
// variable.
func (j *JumpTie) Draw(vd, vy []float64, rng *rand.Rand) {
	g := distuv.Gamma{Alpha: j.nu / 2, Beta: j.nu / 2, Src: rng}
	for k := 0; k < j.n; k++ {
		r := j.s / math.Sqrt(g.Rand())
		vd[j.a+k], vy[j.d+k] = r*rng.NormFloat64(), r*rng.NormFloat64()
	}
}

// Clone returns a copy: the tie keeps no scratch, so the copy is the same.
func (j *JumpTie) Clone() CrossTerm {
	c := *j
	return &c
}
