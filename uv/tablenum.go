package uv

import (
	"encoding/binary"
	"math"
	"math/big"
	"math/bits"
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
// same bits strconv returns. Longer mantissas (up to 19 digits, such as
// the 17-digit round-trip output of WriteTable) and larger exponents use the
// Eisel-Lemire algorithm, also exact. Everything else goes to strconv.
//
// References:
//
//	Clinger, W. D. 1990, Proc. ACM SIGPLAN '90 Conf. Programming Language
//	Design and Implementation, p. 92 ("How to read floating point numbers
//	accurately"), the fast path of sec. 5.
//	Lemire, D. 2021, Software: Practice and Experience 51, 1700.
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
		if m != 0 && nd <= 11 && i+8 <= len(b) {
			if v := binary.LittleEndian.Uint64(b[i:]); eightDigits(v) {
				m = m*1e8 + parseEightDigits(v)
				nd += 8
				digits += 8
				i += 7
				continue
			}
		}
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
			if m != 0 && nd <= 11 && i+8 <= len(b) {
				if v := binary.LittleEndian.Uint64(b[i:]); eightDigits(v) {
					m = m*1e8 + parseEightDigits(v)
					nd += 8
					digits += 8
					exp -= 8
					i += 7
					continue
				}
			}
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
	if i != len(b) {
		return 0, false
	}
	if m > 1<<53 {
		return eiselLemire64(m, exp, neg)
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
		return eiselLemire64(m, exp, neg)
	}
	if neg {
		f = -f
	}
	return f, true
}

// Range of the decimal exponents covered by pow10Table.
const (
	pow10MinExp = -348
	pow10MaxExp = 347
)

// pow10Table[e − pow10MinExp] holds the 128-bit mantissa {lo, hi} of 10^e,
// normalised so that hi has its top bit set and rounded down, computed
// exactly with math/big.
var pow10Table = func() [][2]uint64 {
	t := make([][2]uint64, pow10MaxExp-pow10MinExp+1)
	ten := big.NewInt(10)
	mask := new(big.Int).SetUint64(math.MaxUint64)
	for e := pow10MinExp; e <= pow10MaxExp; e++ {
		x := new(big.Int).Exp(ten, big.NewInt(int64(abs(e))), nil)
		if e >= 0 {
			if n := x.BitLen(); n > 128 {
				x.Rsh(x, uint(n-128))
			} else {
				x.Lsh(x, uint(128-n))
			}
		} else {
			// ⌊2^(127+L) / 10^|e|⌋ lies in [2¹²⁷, 2¹²⁸) for L = bitlen(10^|e|).
			num := new(big.Int).Lsh(big.NewInt(1), uint(127+x.BitLen()))
			x.Quo(num, x)
		}
		lo := new(big.Int).And(x, mask).Uint64()
		hi := new(big.Int).Rsh(x, 64).Uint64()
		t[e-pow10MinExp] = [2]uint64{lo, hi}
	}
	return t
}()

func abs(n int) int {
	if n < 0 {
		return -n
	}
	return n
}

// eiselLemire64 returns the float64 nearest to man·10^exp10 (negated when
// neg) for a mantissa of at most 19 digits, or ok = false in the rare cases
// the 128-bit product cannot decide the rounding (then strconv decides).
//
// References:
//
//	Lemire, D. 2021, Software: Practice and Experience 51, 1700 ("Number
//	parsing at a gigabyte per second"), sec. 5 and algorithm 1; the same
//	algorithm as Go's strconv, with its table computed here.
func eiselLemire64(man uint64, exp10 int, neg bool) (float64, bool) {
	if man == 0 {
		if neg {
			return math.Copysign(0, -1), true
		}
		return 0, true
	}
	if exp10 < pow10MinExp || exp10 > pow10MaxExp {
		return 0, false
	}
	clz := bits.LeadingZeros64(man)
	man <<= uint(clz)
	const bias = 1023
	retExp2 := uint64(217706*exp10>>16+64+bias) - uint64(clz)
	p := pow10Table[exp10-pow10MinExp]
	xHi, xLo := bits.Mul64(man, p[1])
	if xHi&0x1FF == 0x1FF && xLo+man < man {
		yHi, yLo := bits.Mul64(man, p[0])
		mergedHi, mergedLo := xHi, xLo+yHi
		if mergedLo < xLo {
			mergedHi++
		}
		if mergedHi&0x1FF == 0x1FF && mergedLo+1 == 0 && yLo+man < man {
			return 0, false
		}
		xHi, xLo = mergedHi, mergedLo
	}
	msb := xHi >> 63
	mant := xHi >> (msb + 9)
	retExp2 -= 1 ^ msb
	if xLo == 0 && xHi&0x1FF == 0 && mant&3 == 1 {
		return 0, false // halfway between two floats: needs the exact digits
	}
	mant += mant & 1
	mant >>= 1
	if mant>>53 > 0 {
		mant >>= 1
		retExp2++
	}
	if retExp2-1 >= 0x7FF-1 {
		return 0, false // subnormal, zero by underflow, or overflow
	}
	b := retExp2<<52 | mant&(1<<52-1)
	if neg {
		b |= 1 << 63
	}
	return math.Float64frombits(b), true
}

// eightDigits reports whether the 8 bytes of v (little-endian) are all
// ASCII digits, and parseEightDigits returns their value: the SWAR forms of
// Lemire (2021, Software: Practice and Experience 51, 1700, sec. 4.2).
func eightDigits(v uint64) bool {
	return ((v+0x4646464646464646)|(v-0x3030303030303030))&0x8080808080808080 == 0
}

func parseEightDigits(v uint64) uint64 {
	const mask = 0x000000FF000000FF
	const mul1 = 100 + 1000000<<32
	const mul2 = 1 + 10000<<32
	v -= 0x3030303030303030
	v = v*10 + v>>8
	v = ((v&mask)*mul1 + (v>>16&mask)*mul2) >> 32
	return uint64(uint32(v))
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
