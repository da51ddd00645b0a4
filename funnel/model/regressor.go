package model

// regressorTerm is coef * x[t]: trend, a season, a control or gamma * q~.
type regressorTerm struct {
	k   int // position of coef
	x   []float64
	bar float64 // centring constant, mean(x) (0 when not centred)
}

func (r *regressorTerm) prepare([]float64, bool) bool { return true }

func (r *regressorTerm) forward(n, nat []float64) float64 {
	b := nat[r.k]
	for i, v := range r.x {
		n[i] += b * (v - r.bar)
	}
	return b * r.bar
}

func (r *regressorTerm) shift(nat []float64) float64 { return nat[r.k] * r.bar }

func (r *regressorTerm) backward(g, nat, w []float64, sw, gmu float64) {
	s := 0.0
	for i, v := range r.x {
		s += w[i] * (v - r.bar)
	}
	g[r.k] += s - gmu*r.bar
}

func (r *regressorTerm) pullback(_, _, _ []float64, lp float64) float64 { return lp }

func (r *regressorTerm) unconstrain(_, v []float64, _ []param) float64 { return v[r.k] * r.bar }

func (r *regressorTerm) clone() predictor { c := *r; return &c }
