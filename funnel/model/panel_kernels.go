package model

// The region panel's passes over a region's weeks, four series at a time:
// each week is loaded once for four terms, and the four sums are
// independent, so they run side by side instead of waiting on one
// another. Every sum keeps the order a loop per series would give it (week
// by week, and for the predictor series by series), so the results are the
// same bits as one pass per series.

// axpys writes n[t] = m + b[0] x[0][t] + b[1] x[1][t] + ..., the terms
// added one after another in that order, as n[t] = m and then one pass
// n[t] += b[j] x[j][t] per series would. Every x[j] has len(n).
func axpys(n []float64, m float64, b []float64, x [][]float64) {
	if len(x) == 0 {
		for t := range n {
			n[t] = m
		}
		return
	}
	j := 0
	switch len(x) % 4 {
	case 1:
		x0 := x[0][:len(n)]
		b0 := b[0]
		for t := range n {
			n[t] = m + b0*x0[t]
		}
		j = 1
	case 2:
		x0, x1 := x[0][:len(n)], x[1][:len(n)]
		b0, b1 := b[0], b[1]
		for t := range n {
			n[t] = m + b0*x0[t] + b1*x1[t]
		}
		j = 2
	case 3:
		x0, x1, x2 := x[0][:len(n)], x[1][:len(n)], x[2][:len(n)]
		b0, b1, b2 := b[0], b[1], b[2]
		for t := range n {
			n[t] = m + b0*x0[t] + b1*x1[t] + b2*x2[t]
		}
		j = 3
	default:
		x0, x1, x2, x3 := x[0][:len(n)], x[1][:len(n)], x[2][:len(n)], x[3][:len(n)]
		b0, b1, b2, b3 := b[0], b[1], b[2], b[3]
		for t := range n {
			n[t] = m + b0*x0[t] + b1*x1[t] + b2*x2[t] + b3*x3[t]
		}
		j = 4
	}
	for ; j < len(x); j += 4 {
		x0, x1, x2, x3 := x[j][:len(n)], x[j+1][:len(n)], x[j+2][:len(n)], x[j+3][:len(n)]
		b0, b1, b2, b3 := b[j], b[j+1], b[j+2], b[j+3]
		for t := range n {
			n[t] = n[t] + b0*x0[t] + b1*x1[t] + b2*x2[t] + b3*x3[t]
		}
	}
}

// dots adds sum_t w[t] x[j][t] to s[j] for every series j, each sum taken
// week by week from s[j]'s value, as s[j] += w[t] x[j][t] in a loop over t
// would. Every x[j] has len(w).
func dots(s, w []float64, x [][]float64) {
	j := 0
	for ; j+4 <= len(x); j += 4 {
		x0, x1, x2, x3 := x[j][:len(w)], x[j+1][:len(w)], x[j+2][:len(w)], x[j+3][:len(w)]
		s0, s1, s2, s3 := s[j], s[j+1], s[j+2], s[j+3]
		for t, v := range w {
			s0 += v * x0[t]
			s1 += v * x1[t]
			s2 += v * x2[t]
			s3 += v * x3[t]
		}
		s[j], s[j+1], s[j+2], s[j+3] = s0, s1, s2, s3
	}
	switch len(x) - j {
	case 3:
		x0, x1, x2 := x[j][:len(w)], x[j+1][:len(w)], x[j+2][:len(w)]
		s0, s1, s2 := s[j], s[j+1], s[j+2]
		for t, v := range w {
			s0 += v * x0[t]
			s1 += v * x1[t]
			s2 += v * x2[t]
		}
		s[j], s[j+1], s[j+2] = s0, s1, s2
	case 2:
		x0, x1 := x[j][:len(w)], x[j+1][:len(w)]
		s0, s1 := s[j], s[j+1]
		for t, v := range w {
			s0 += v * x0[t]
			s1 += v * x1[t]
		}
		s[j], s[j+1] = s0, s1
	case 1:
		x0 := x[j][:len(w)]
		s0 := s[j]
		for t, v := range w {
			s0 += v * x0[t]
		}
		s[j] = s0
	}
}
