package model

import "fmt"

// A drift that can jump (Options.DriftShape DriftJumps): the log multiplier
// is the smooth function of smooth.go plus a jump part,
//
//	f(t) = smooth(t) + sum_k w_k (1[t >= t_k] - m_k),  w_k = jsd u_k,
//	u_k ~ Student-t(JumpDF, 0, 1),  jsd ~ HalfNormal(0.1),
//
// the t_k candidate weeks every JumpEvery weeks and m_k the share of the
// fitted weeks at or after t_k, so that the jump part, like the smooth one,
// averages zero over the fitted weeks. It is piecewise constant: a trend
// filter of order zero whose increments have a heavy-tailed shrinkage prior
// (Faulkner and Minin 2018, "Locally adaptive smoothing with Markov random
// fields and shrinkage priors", Bayesian Analysis 13(1), who use the
// horseshoe; Student-t increments are their simpler heavy-tailed case).
//
// Why (issue 13): a smooth multiplier spreads a sudden change (a creative
// refresh) over months, and under a step in video's effects the part of
// the direct effect's step that it misses moves with the queries, so gamma
// takes it (TestStepMissIsTheSmoothDrift: least squares with every
// transform known puts gamma 0.4-0.6 se high with a smooth multiplier and
// on target with a step at the true week). An upper-funnel channel's two
// paths' weights u_k are each t_3 in their own stage and tied across the
// stages week by week (drifttie.go), so a step found in one path makes the
// same week's step in the other plausible.
//
// How it samples: u_k are unit-scale and jsd is their common scale (the
// non-centred form of the smooth weights); the Student-t's tails let one
// or two weights be large (a step of 0.4 in the log is u = 4 at jsd 0.1)
// while the rest stay near zero, without a local scale per candidate week
// that a horseshoe would add (2 x J more coordinates, and the funnel of
// each local scale). The sampler moves each u_k as asinh(2 u_k)
// (HeavyReal): in u_k itself the t_3's polynomial tails took many small
// steps to cross, and the demo's jumps benchmark (BenchmarkFitAlone/jumps,
// 4 x (1000 + 1000)) had least ESS 278 at target acceptance 0.95 (a paid
// search weight); in asinh(2 u_k) the tails are exponential: least ESS
// 1,296, max R-hat 1.005 and no divergent transition at 0.95
// (pipeline.DriftAccept; 15 at 0.9).
// Evaluating it costs O(T + J): a running sum over the weeks forward, and
// a suffix sum of d lp / d f backward.
const (
	// JumpEvery is the spacing of the candidate weeks: about a month. A
	// change between two candidate weeks is taken by the nearer ones; a
	// finer grid adds coordinates that are nearly collinear.
	JumpEvery = 4
	// JumpDF is the Student-t's degrees of freedom: heavy tails with a
	// finite variance.
	JumpDF = 3
)

// PriorJumpSD is the scale of the jump weights: HalfNormal(0.1), median
// 0.067. A jump above 0.5 in the log multiplier (x1.65) at a given
// candidate week then has prior probability 0.005 at the median scale,
// 0.015 at 0.1 and 0.084 at the scale's 95% point, 0.196 (two-sided t_3
// tails, from the closed-form t_3 distribution function): over two years'
// 25 candidate weeks, a sudden change is possible, not expected.
var PriorJumpSD = Prior{HalfNormal, 0.1, 0}

// PriorJump is the prior of each unit-scale jump weight u_k.
var PriorJump = Prior{StudentT, JumpDF, 1}

// DriftJumps is the Options.DriftShape of a drift that can jump.
const DriftJumps = "jumps"

// withJumps adds candidate weeks every JumpEvery weeks (from week
// JumpEvery to the last week but JumpEvery/2, so each side of a candidate
// has weeks) to b and returns it; the shares m_k are taken over the weeks
// not masked.
func (b *Basis) withJumps(mask []bool) *Basis {
	for t := JumpEvery; t <= b.T-1-JumpEvery/2; t += JumpEvery {
		b.jumps = append(b.jumps, t)
	}
	n, after := 0, make([]int, len(b.jumps))
	for t := 0; t < b.T; t++ {
		if mask != nil && mask[t] {
			continue
		}
		n++
		for k, tk := range b.jumps {
			if t >= tk {
				after[k]++
			}
		}
	}
	b.jmean = make([]float64, len(b.jumps))
	for k := range b.jmean {
		b.jmean[k] = float64(after[k]) / float64(max(n, 1))
	}
	return b
}

// J returns the number of candidate weeks of a jump (0: a smooth function
// only).
func (b *Basis) J() int { return len(b.jumps) }

// JumpWeeks returns the candidate weeks of a jump (nil: none).
func (b *Basis) JumpWeeks() []int { return b.jumps }

// jumpLevel returns -sum_k w_k m_k, the jump part before any candidate
// week.
func (b *Basis) jumpLevel(jsd float64, u []float64) float64 {
	s := 0.0
	for k, m := range b.jmean {
		s -= jsd * u[k] * m
	}
	return s
}

// jumpAt returns the jump part in week t.
func (b *Basis) jumpAt(t int, jsd float64, u []float64) float64 {
	v := b.jumpLevel(jsd, u)
	for k, tk := range b.jumps {
		if tk > t {
			break
		}
		v += jsd * u[k]
	}
	return v
}

// addJumps adds the jump part to f[t] for t in [lo, hi).
func (b *Basis) addJumps(f []float64, jsd float64, u []float64, lo, hi int) {
	v, k := b.jumpLevel(jsd, u), 0
	for t := 0; t < hi; t++ {
		for k < len(b.jumps) && b.jumps[k] == t {
			v += jsd * u[k]
			k++
		}
		if t >= lo {
			f[t] += v
		}
	}
}

// jumpGrad writes d lp / d w_k = sum_{t in [lo, hi)} r[t] (1[t >= t_k] -
// m_k) into p (len J) given r[t] = d lp / d f(t).
func (b *Basis) jumpGrad(p, r []float64, lo, hi int) {
	total, after, k := 0.0, 0.0, len(b.jumps)-1
	for t := hi - 1; t >= lo; t-- {
		total += r[t]
	}
	// after holds sum_{t >= t_k, t in [lo, hi)} r[t], walking k down
	for t := hi - 1; k >= 0; t-- {
		for k >= 0 && t < b.jumps[k] {
			p[k] = after
			k--
		}
		if t < lo {
			for ; k >= 0; k-- {
				p[k] = after
			}
			break
		}
		after += r[t]
	}
	for k, m := range b.jmean {
		p[k] -= m * total
	}
}

// jumpParams returns the parameters of the jump part, after the smooth
// function's: its scale and the J unit-scale weights, named like the
// smooth's (jsd "drift_jump_sd_alpha[video_spend]", weights
// "drift_jump_alpha[video_spend,1]"...).
func jumpParams(jsd, u string, J int) []Param {
	p := []Param{{Name: jsd, Prior: PriorJumpSD, Default: PositiveReal}}
	for k := 1; k <= J; k++ {
		var name string
		if n := len(u); n > 0 && u[n-1] == ']' {
			name = fmt.Sprintf("%s,%d]", u[:n-1], k)
		} else {
			name = fmt.Sprintf("%s[%d]", u, k)
		}
		p = append(p, Param{Name: name, Prior: PriorJump, Default: HeavyReal})
	}
	return p
}
