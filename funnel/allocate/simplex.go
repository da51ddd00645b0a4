package allocate

import "math"

// boxSimplex maps R^(m-1) one to one onto the interior of the amounts
// a[0..m-1] with sum a = total and lo[i] <= a[i] <= hi[i] (hi may be
// +Inf): a stick-breaking transform with bounds. With r[0] = total,
//
//	l[i] = max(lo[i], r[i] - sum_{j>i} hi[j]),  u[i] = min(hi[i], r[i] - sum_{j>i} lo[j]),
//	a[i] = l[i] + sigmoid(z[i]) (u[i] - l[i]),  r[i+1] = r[i] - a[i],
//
// for i < m-1, and a[m-1] = r[m-1]. The range [l[i], u[i]] is what channel
// i may take so that the channels after it can still meet their limits,
// so every z gives a feasible plan. Without limits it is the stick-breaking
// transform Stan uses for a simplex (Stan Reference Manual, "Unit simplex",
// from memory), with a logistic rather than a centred logit per stick.
type boxSimplex struct {
	lo, hi       []float64
	total        float64
	sufLo, sufHi []float64 // sum_{j>i} lo[j], hi[j]
}

func newBoxSimplex(lo, hi []float64, total float64) *boxSimplex {
	m := len(lo)
	b := &boxSimplex{lo: lo, hi: hi, total: total, sufLo: make([]float64, m), sufHi: make([]float64, m)}
	for i := m - 2; i >= 0; i-- {
		b.sufLo[i] = b.sufLo[i+1] + lo[i+1]
		b.sufHi[i] = b.sufHi[i+1] + hi[i+1]
	}
	return b
}

// dim returns the number of free coordinates, m-1.
func (b *boxSimplex) dim() int { return len(b.lo) - 1 }

func (b *boxSimplex) stick(i int, r float64) (l, u float64) {
	return math.Max(b.lo[i], r-b.sufHi[i]), math.Min(b.hi[i], r-b.sufLo[i])
}

func sigmoid(z float64) float64 { return 1 / (1 + math.Exp(-z)) }

// amounts writes the plan at z into a.
func (b *boxSimplex) amounts(a, z []float64) {
	r := b.total
	for i, zi := range z {
		l, u := b.stick(i, r)
		a[i] = l + sigmoid(zi)*(u-l)
		r -= a[i]
	}
	a[len(z)] = r
}

// coords writes the coordinates of the plan a (feasible, or nearly: each
// stick's share is kept within [eps, 1-eps]) into z.
func (b *boxSimplex) coords(z, a []float64, eps float64) {
	r := b.total
	for i := range z {
		l, u := b.stick(i, r)
		s := 0.5
		if u > l {
			s = math.Min(math.Max((a[i]-l)/(u-l), eps), 1-eps)
		}
		z[i] = math.Log(s / (1 - s))
		r -= l + s*(u-l)
	}
}

// gradient writes into gz the gradient in z of a function whose gradient
// in the amounts at amounts(z) is ga: gz = J' ga, J[i][j] = da[i]/dz[j],
// by forward-mode differentiation of amounts, one column of J at a time.
func (b *boxSimplex) gradient(gz, z, ga []float64) {
	n := len(z)
	for j := range gz {
		gz[j] = 0
	}
	// column by column: the derivative of every amount in z[j]
	for j := 0; j < n; j++ {
		r := b.total
		drj := 0.0 // d r / d z[j]
		for i := 0; i < n; i++ {
			l, u := b.stick(i, r)
			dl, du := 0.0, 0.0
			if r-b.sufHi[i] > b.lo[i] {
				dl = drj
			}
			if r-b.sufLo[i] < b.hi[i] {
				du = drj
			}
			s := sigmoid(z[i])
			da := dl + s*(du-dl)
			if i == j {
				da += s * (1 - s) * (u - l)
			}
			gz[j] += ga[i] * da
			r -= l + s*(u-l)
			drj -= da
		}
		gz[j] += ga[n] * drj
	}
}
