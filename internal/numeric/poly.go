package numeric

// PolyMul writes the coefficients of the product of the polynomials a and b
// (coefficient of B^i at index i) into dst and returns it. dst must have
// length len(a)+len(b)-1 and must not alias a or b.
func PolyMul(dst, a, b []float64) []float64 {
	if len(a) == 0 || len(b) == 0 {
		return dst[:0]
	}
	if len(dst) != len(a)+len(b)-1 {
		panic("numeric: PolyMul destination has the wrong length")
	}
	for i := range dst {
		dst[i] = 0
	}
	for i, ai := range a {
		if ai == 0 {
			continue
		}
		for j, bj := range b {
			dst[i+j] += ai * bj
		}
	}
	return dst
}
