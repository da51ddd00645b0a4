package model

import (
	"fmt"
	"math"

	"spillway/funnel/data"
)

// The spread priors of DESIGN.md's region panel.
var (
	PriorTauMu   = Prior{HalfNormal, 0.5, 0} // spread of the region intercepts
	PriorTauCoef = Prior{HalfNormal, 0.3, 0} // spread of a coefficient's log across regions
)

// Panel is a stage of the region model (DESIGN.md "Region panel"): one
// stage of the national shape per region, each built on that region's data
// scaled by its own means, whose intercept and coefficients of gamma and of
// every media channel vary by region,
//
//	mu[g] ~ Normal(mu, tau_mu),  theta[c,g] = theta[c] exp(tau_theta[c] eta[c,g]),  eta ~ Normal(0, 1),
//
// while trend, seasons, controls, transforms and sigma are shared. With one
// region there is no spread to estimate (only its prior would speak): the
// panel is then the national model on that region.
type Panel struct {
	Name    string
	Regions []string
	// Stages holds region g's stage in the national shape: its data, and the
	// names and priors of the shared parameters and of the hyperparameters
	// (mu, theta[c]), which are the same in every region.
	Stages []*Stage
	// TauMu and TauCoef are the priors of the intercepts' spread and of each
	// coefficient's spread (on the log scale).
	TauMu, TauCoef Prior
	// Coords are the sampling coordinates (panelcoords.go); nil means the
	// ones ChooseCoordinates picks from the data.
	Coords *Coords
}

// hierCoef is a coefficient that varies by region: the query regressor
// (gamma) or a channel's coefficient.
type hierCoef struct {
	name    string // the hyperparameter's name, e.g. "gamma" or "alpha[video]"
	reg     int    // index in Stage.Regressors, -1 for a channel
	channel int    // index in Stage.Channels, -1 for a regressor
}

func (p *Panel) hier() []hierCoef {
	st := p.Stages[0]
	var out []hierCoef
	for i, r := range st.Regressors {
		if r.Name == QueryCoef {
			out = append(out, hierCoef{name: r.Name, reg: i, channel: -1})
		}
	}
	for j, c := range st.Channels {
		out = append(out, hierCoef{name: c.Params[0].Name, reg: -1, channel: j})
	}
	return out
}

// pooled reports whether the panel has one region: no spread parameters.
func (p *Panel) pooled() bool { return len(p.Regions) == 1 }

// Names returns the panel's parameter names in draw order: the national
// stage's names (the intercept and coefficients there are the
// hyperparameters mu and theta[c], the population's median), then, with
// more than one region, tau_MU and MU[region] for every region, and for
// gamma and each channel's coefficient tau_FAMILY[col] (tau_gamma for
// gamma) and FAMILY[col,region] (gamma[region]).
func (p *Panel) Names() []string {
	names := p.Stages[0].Names()
	if p.pooled() {
		return names
	}
	st := p.Stages[0]
	names = append(names, "tau_"+st.Intercept)
	for _, r := range p.Regions {
		names = append(names, st.Intercept+"["+r+"]")
	}
	for _, h := range p.hier() {
		fam, col := SplitName(h.name)
		if col == "" {
			names = append(names, "tau_"+fam)
		} else {
			names = append(names, "tau_"+fam+"["+col+"]")
		}
		for _, r := range p.Regions {
			if col == "" {
				names = append(names, fam+"["+r+"]")
			} else {
				names = append(names, fam+"["+col+","+r+"]")
			}
		}
	}
	return names
}

// PanelLayout is where each parameter of a panel sits in one of its draws.
// Other packages read a panel draw through it: Region turns a draw into
// region g's draw of the national shape, which its Stages[g] reads.
type PanelLayout struct {
	names   []string
	base    *Layout // the national-shaped part, at the start of a draw
	regions []string
	// TauMu and Mu are the intercepts' spread and block; Coefs the
	// coefficients that vary by region. Empty with one region.
	tauMu int
	mu    Block
	coefs []PanelCoef
}

// PanelCoef are the positions of a coefficient that varies by region.
type PanelCoef struct {
	Name  string // the hyperparameter's name, e.g. "alpha[video]" or "gamma"
	Hyper int    // theta[c], the population median
	Tau   int    // its spread on the log scale
	// Block holds theta[c,g] for every region, in region order.
	Block Block
	// Column is the channel's data column ("" for gamma).
	Column string
}

// Layout returns the panel's layout.
func (p *Panel) Layout() *PanelLayout {
	l := &PanelLayout{names: p.Names(), base: p.Stages[0].Layout(), regions: p.Regions, tauMu: -1}
	if p.pooled() {
		return l
	}
	G := len(p.Regions)
	k := l.base.Len()
	l.tauMu = k
	l.mu = Block{Name: p.Stages[0].Intercept, Start: k + 1, Len: G}
	k += 1 + G
	for _, h := range p.hier() {
		c := PanelCoef{Name: h.name, Tau: k, Block: Block{Name: h.name, Start: k + 1, Len: G}}
		if h.channel >= 0 {
			cs := l.base.Channels()[h.channel]
			c.Hyper, c.Column = cs.Coef, cs.Column
		} else {
			c.Hyper = l.base.RegressorSlot(h.reg)
		}
		l.coefs = append(l.coefs, c)
		k += 1 + G
	}
	return l
}

// Names returns the parameter names in draw order (do not modify).
func (l *PanelLayout) Names() []string { return l.names }

// Len returns the number of parameters in a draw.
func (l *PanelLayout) Len() int { return len(l.names) }

// Base returns the layout of the national-shaped part of a draw (its
// first Base().Len() values): the hyperparameters and shared parameters.
func (l *PanelLayout) Base() *Layout { return l.base }

// Regions returns the region names in order (do not modify).
func (l *PanelLayout) Regions() []string { return l.regions }

// TauMu returns the position of the intercepts' spread, -1 with one region.
func (l *PanelLayout) TauMu() int { return l.tauMu }

// Intercepts returns the block of the region intercepts (Len 0 with one
// region).
func (l *PanelLayout) Intercepts() Block { return l.mu }

// Coefs returns the coefficients that vary by region (none with one
// region; do not modify).
func (l *PanelLayout) Coefs() []PanelCoef { return l.coefs }

// Blocks returns the parameter blocks in draw order: the national part's,
// then each spread (length 1) and each per-region block.
func (l *PanelLayout) Blocks() []Block {
	out := append([]Block(nil), l.base.Blocks()...)
	if l.tauMu < 0 {
		return out
	}
	out = append(out, Block{Name: l.names[l.tauMu], Start: l.tauMu, Len: 1}, l.mu)
	for _, c := range l.coefs {
		out = append(out, Block{Name: l.names[c.Tau], Start: c.Tau, Len: 1}, c.Block)
	}
	return out
}

// IsSpread reports whether position i holds a spread parameter (tau).
func (l *PanelLayout) IsSpread(i int) bool {
	if i == l.tauMu && i >= 0 {
		return true
	}
	for _, c := range l.coefs {
		if c.Tau == i {
			return true
		}
	}
	return false
}

// Region writes region g's draw of the national shape into dst (len
// Base().Len()) and returns it: the shared values, the region's intercept
// and the region's coefficients in place of the hyperparameters. A nil dst
// allocates.
func (l *PanelLayout) Region(dst, v []float64, g int) []float64 {
	if len(v) != len(l.names) {
		panic("model: panel draw length does not match the layout")
	}
	n := l.base.Len()
	if dst == nil {
		dst = make([]float64, n)
	}
	copy(dst, v[:n])
	if l.tauMu < 0 {
		return dst
	}
	dst[l.base.InterceptSlot()] = v[l.mu.Start+g]
	for _, c := range l.coefs {
		dst[c.Hyper] = v[c.Block.Start+g]
	}
	return dst
}

// PanelScaled is a region panel in model units: each region's series
// scaled by its own means (DESIGN.md "Region panel"). A channel a region
// never runs has a zero series and scale 0.
type PanelScaled struct {
	Regions []string
	Scaled  []*Scaled
}

// ScalePanel scales each region of d by its own means (ScaleTrain per
// region, with the same training weeks).
func ScalePanel(d *data.Dataset, train []bool) (*PanelScaled, error) {
	ps := &PanelScaled{}
	for _, r := range d.Regions {
		sc := ScaleTrain(r.Series, d.Spec, train)
		for _, group := range [2][][]float64{sc.Upper, sc.Search} {
			for _, x := range group {
				for i, v := range x {
					if math.IsNaN(v) { // 0/0: the region never runs the channel
						x[i] = 0
					}
				}
			}
		}
		if !(sc.QueriesScale > 0) || !(sc.OutcomeScale > 0) {
			return nil, fmt.Errorf("model: region %s has no queries or no outcome in the fitted weeks; its series cannot be scaled by its mean", r.Name)
		}
		ps.Regions = append(ps.Regions, r.Name)
		ps.Scaled = append(ps.Scaled, sc)
	}
	return ps, nil
}

// PanelStages builds the demand, outcome and naive panels of ps: each
// region's stage from build (Demand, Outcome or Naive) with options o.
// A drifting coefficient drifts by one multiplier exp(f(t)) shared by
// every region: each region's stage carries the same drift parameters,
// once in the base layout. The naive panel never drifts, as the national
// naive stage (pipeline.Stages says why). A moving baseline
// (BaselineSmooth) is one smooth function of the week shared by every
// region in place of the shared trend line, in each stage as nationally
// (panel_baseline.go), its parameters once in the base layout.
func PanelStages(ps *PanelScaled, o Options) ([3]*Panel, error) {
	var out [3]*Panel
	if o.Plain {
		return out, fmt.Errorf("model: the region model has no plain coordinates")
	}
	for k, build := range []func(*Scaled, Options) (*Stage, error){Demand, Outcome, Naive} {
		p := &Panel{Regions: ps.Regions, TauMu: PriorTauMu, TauCoef: PriorTauCoef}
		ok := o
		if k == 2 {
			ok.Drift = nil
		}
		for _, sc := range ps.Scaled {
			st, err := build(sc, ok)
			if err != nil {
				return out, err
			}
			p.Stages = append(p.Stages, st)
		}
		p.Name = p.Stages[0].Name
		for name, pr := range o.Priors {
			p.SetPrior(name, pr)
		}
		out[k] = p
	}
	return out, nil
}

// SetPrior replaces the prior of the named parameter, a shared or hyper
// parameter of every region's stage or the intercepts' spread (tau_MU),
// and reports whether the panel has it. The coefficients' spreads share
// TauCoef.
func (p *Panel) SetPrior(name string, pr Prior) bool {
	has := false
	for _, st := range p.Stages {
		has = st.SetPrior(name, pr) || has
	}
	if !p.pooled() && name == "tau_"+p.Stages[0].Intercept {
		p.TauMu = pr
		return true
	}
	return has
}
