package vmath

import "math"

// Range of Exp: below expLo it gives 0, above expHi +Inf. The bounds keep
// the scaling 2^k of the vector kernel within the normal numbers
// (k ≥ −1021 for a reduced factor e^r ≥ 1/√2).
const (
	expLo = -707.7
	expHi = 709.0
)

// Exp sets dst[i] = e^{x[i]} for every i < len(x), within two units in the
// last place for expLo ≤ x ≤ expHi; it gives 0 for x < expLo (where
// e^x < 4e-308), +Inf for x > expHi and NaN for NaN. dst must be at least as
// long as x and may be x itself.
//
// The method is Cody & Waite's: x = k ln 2 + r with k = round(x/ln 2) and
// |r| ≤ ln 2/2, r formed with a fused multiply–add so that it is exact, and
// e^r from its Taylor series to r^13 (truncation below 4e-18 of e^r), scaled
// by 2^k through the exponent bits.
//
// References:
//   - Cody, W. J. & Waite, W. 1980, Software Manual for the Elementary
//     Functions (Prentice-Hall), ch. 6 (the argument reduction; from
//     memory).
func Exp(dst, x []float64) {
	n := len(x)
	dst = dst[:n]
	i := 0
	if useAVX && n >= 4 {
		i = n &^ 3
		expAVX(&dst[0], &x[0], i)
	}
	for ; i < n; i++ {
		dst[i] = expOne(x[i])
	}
}

// expOne is Exp for one value.
func expOne(x float64) float64 {
	switch {
	case x < expLo:
		return 0
	case x > expHi:
		return math.Inf(1)
	}
	return math.Exp(x)
}
