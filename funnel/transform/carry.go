package transform

// AdstockFrom writes into dst the normalised geometric adstock of x when x
// follows weeks whose adstock ended at a0, and returns it:
//
//	a[0] = (1-lam) x[0] + lam a0,  a[t] = (1-lam) x[t] + lam a[t-1].
//
// Adstock is AdstockFrom with a0 = 0, and for any split of a series into
// past and x, AdstockFrom(x, lam, AdstockEnd(past, lam, 0)) equals the tail
// of Adstock(past then x) bit for bit: the same operations in the same
// order. If dst is nil a new slice is allocated; a non-nil dst must have
// len(x).
func AdstockFrom(dst, x []float64, lam, a0 float64) []float64 {
	dst = resize(dst, len(x))
	prev := a0
	for t, v := range x {
		prev = (1-lam)*v + lam*prev
		dst[t] = prev
	}
	return dst
}

// AdstockEnd returns the adstock of x in its last week when x follows weeks
// whose adstock ended at a0 (a0 itself when x is empty): the state from
// which AdstockFrom continues.
func AdstockEnd(x []float64, lam, a0 float64) float64 {
	prev := a0
	for _, v := range x {
		prev = (1-lam)*v + lam*prev
	}
	return prev
}
