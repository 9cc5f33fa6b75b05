package uv

import (
	"math"
	"strconv"
)

// float64pow10 holds the powers of ten that float64 represents exactly.
var float64pow10 = [...]float64{
	1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
	1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
}

// parseFloat parses a decimal number from b with the same result as
// strconv.ParseFloat(string(b), 64), including its error for bad syntax and
// ±Inf for out-of-range values.
//
// Most fields in a visibility table are short decimals. For those, the
// mantissa m is an integer below 2⁵³ and the decimal exponent e satisfies
// |e| ≤ 22, so m and 10^|e| are exact in float64 and one multiplication or
// division gives the correctly rounded result (Clinger's fast path), the
// same bits strconv returns. Everything else, including 16- and 17-digit
// round-trip output, goes to strconv.
//
// References:
//
//	Clinger, W. D. 1990, Proc. ACM SIGPLAN '90 Conf. Programming Language
//	Design and Implementation, p. 92 ("How to read floating point numbers
//	accurately"), the fast path of sec. 5.
func parseFloat(b []byte) (float64, error) {
	if f, ok := fastFloat(b); ok {
		return f, nil
	}
	// A []byte → string conversion that does not escape uses a stack buffer
	// for short fields, so this allocates only for fields over 32 bytes.
	return strconv.ParseFloat(string(b), 64)
}

// fastFloat is the exact fast path of parseFloat; ok is false when it does
// not apply.
func fastFloat(b []byte) (f float64, ok bool) {
	i := 0
	neg := false
	if i < len(b) && (b[i] == '-' || b[i] == '+') {
		neg = b[i] == '-'
		i++
	}
	var m uint64
	nd := 0     // significant digits accumulated into m
	exp := 0    // decimal exponent adjustment from the fraction
	digits := 0 // digits seen, including leading zeros
	for ; i < len(b) && '0' <= b[i] && b[i] <= '9'; i++ {
		digits++
		if m == 0 && b[i] == '0' {
			continue
		}
		if nd >= 19 {
			return 0, false
		}
		m = m*10 + uint64(b[i]-'0')
		nd++
	}
	if i < len(b) && b[i] == '.' {
		i++
		for ; i < len(b) && '0' <= b[i] && b[i] <= '9'; i++ {
			digits++
			exp--
			if m == 0 && b[i] == '0' {
				continue
			}
			if nd >= 19 {
				return 0, false
			}
			m = m*10 + uint64(b[i]-'0')
			nd++
		}
	}
	if digits == 0 {
		return 0, false
	}
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		i++
		eneg := false
		if i < len(b) && (b[i] == '-' || b[i] == '+') {
			eneg = b[i] == '-'
			i++
		}
		start, e := i, 0
		for ; i < len(b) && '0' <= b[i] && b[i] <= '9'; i++ {
			if e > 1000 {
				return 0, false
			}
			e = e*10 + int(b[i]-'0')
		}
		if i == start {
			return 0, false
		}
		if eneg {
			e = -e
		}
		exp += e
	}
	if i != len(b) || m > 1<<53 {
		return 0, false
	}
	f = float64(m)
	switch {
	case m == 0:
	case exp == 0:
	case exp > 0 && exp <= 22:
		f *= float64pow10[exp]
	case exp < 0 && exp >= -22:
		f /= float64pow10[-exp]
	default:
		return 0, false
	}
	if neg {
		f = -f
	}
	return f, true
}

// parseUint parses a non-negative decimal integer no larger than max.
func parseUint(b []byte, max int64) (int64, bool) {
	if len(b) == 0 || len(b) > 18 {
		return 0, false
	}
	i := 0
	if b[0] == '+' {
		i++
		if len(b) == 1 {
			return 0, false
		}
	}
	var n int64
	for ; i < len(b); i++ {
		c := b[i]
		if c < '0' || c > '9' {
			return 0, false
		}
		n = n*10 + int64(c-'0')
	}
	return n, n <= max
}

// parseFlag parses 0, 1, true or false (any case, or t and f).
func parseFlag(b []byte) (flag, ok bool) {
	switch len(b) {
	case 1:
		switch b[0] {
		case '0', 'f', 'F':
			return false, true
		case '1', 't', 'T':
			return true, true
		}
	case 4:
		if eqFold(b, "true") {
			return true, true
		}
	case 5:
		if eqFold(b, "false") {
			return false, true
		}
	}
	return false, false
}

// eqFold reports whether b equals the lower-case ASCII word s, ignoring case.
func eqFold(b []byte, s string) bool {
	if len(b) != len(s) {
		return false
	}
	for i := range b {
		c := b[i]
		if 'A' <= c && c <= 'Z' {
			c += 'a' - 'A'
		}
		if c != s[i] {
			return false
		}
	}
	return true
}

// finite reports whether x is neither infinite nor NaN.
func finite(x float64) bool { return !math.IsInf(x, 0) && !math.IsNaN(x) }
