package nufft

import (
	"fmt"
	"math"
)

// dftBlock is the number of points whose exponential tables DFT1 holds at once.
const dftBlock = 32

// DFT2 evaluates the type-2 sum (grid → points) directly,
//
//	dst[k] = Σ_{i,j} f[j*n+i] exp(s·i·(m1 x[k] + m2 y[k])),   m1 = i − n/2, m2 = j − n/2,
//
// with s = sign (+1 or −1), x and y in radians. The per-point tables of
// exp(s·i·m x) are computed with math.Sincos, so the result is exact to
// rounding. It runs in parallel over the points. If dst is nil a slice of
// len(x) is allocated; otherwise len(dst) must be len(x). DFT2 returns dst.
func DFT2(dst, f []complex128, n int, x, y []float64, sign int) []complex128 {
	checkGrid(n, len(f))
	checkSign(sign)
	dst = checkPoints(dst, x, y)
	parallelRange(len(x), func(_, lo, hi int) {
		ex := make([]complex128, n)
		ey := make([]complex128, n)
		for k := lo; k < hi; k++ {
			expTable(ex, x[k], sign)
			expTable(ey, y[k], sign)
			var sr, si float64
			for j := range n {
				row := f[j*n : j*n+n]
				ex := ex[:len(row)]
				// Two independent pairs of sums (n is even) halve the
				// dependency chain of the additions.
				var rr, ri, rr1, ri1 float64
				for i := 0; i+1 < len(row); i += 2 {
					v, e := row[i], ex[i]
					rr += real(v)*real(e) - imag(v)*imag(e)
					ri += real(v)*imag(e) + imag(v)*real(e)
					v, e = row[i+1], ex[i+1]
					rr1 += real(v)*real(e) - imag(v)*imag(e)
					ri1 += real(v)*imag(e) + imag(v)*real(e)
				}
				rr += rr1
				ri += ri1
				e := ey[j]
				sr += rr*real(e) - ri*imag(e)
				si += rr*imag(e) + ri*real(e)
			}
			dst[k] = complex(sr, si)
		}
	})
	return dst
}

// DFT2Real is DFT2 for a real grid f, about twice as fast.
func DFT2Real(dst []complex128, f []float64, n int, x, y []float64, sign int) []complex128 {
	checkGrid(n, len(f))
	checkSign(sign)
	dst = checkPoints(dst, x, y)
	parallelRange(len(x), func(_, lo, hi int) {
		ex := make([]complex128, n)
		ey := make([]complex128, n)
		for k := lo; k < hi; k++ {
			expTable(ex, x[k], sign)
			expTable(ey, y[k], sign)
			var sr, si float64
			for j := range n {
				row := f[j*n : j*n+n]
				ex := ex[:len(row)]
				var rr, ri, rr1, ri1 float64
				for i := 0; i+1 < len(row); i += 2 {
					e0, e1 := ex[i], ex[i+1]
					rr += row[i] * real(e0)
					ri += row[i] * imag(e0)
					rr1 += row[i+1] * real(e1)
					ri1 += row[i+1] * imag(e1)
				}
				rr += rr1
				ri += ri1
				e := ey[j]
				sr += rr*real(e) - ri*imag(e)
				si += rr*imag(e) + ri*real(e)
			}
			dst[k] = complex(sr, si)
		}
	})
	return dst
}

// DFT1 evaluates the type-1 sum (points → grid) directly,
//
//	dst[j*n+i] = Σ_k c[k] exp(s·i·(m1 x[k] + m2 y[k])),   m1 = i − n/2, m2 = j − n/2,
//
// with s = sign (+1 or −1), x and y in radians. It runs in parallel over rows
// of the grid; each grid value is summed over the points in index order, so
// the result does not depend on the number of cores. If dst is nil a slice of
// n*n is allocated; otherwise len(dst) must be n*n. DFT1 returns dst.
func DFT1(dst, c []complex128, x, y []float64, n int, sign int) []complex128 {
	if n < 2 || n%2 != 0 {
		panic(fmt.Sprintf("nufft: grid size %d is not even and positive", n))
	}
	checkSign(sign)
	if len(x) != len(y) || len(c) != len(x) {
		panic(fmt.Sprintf("nufft: lengths of c, x, y differ (%d, %d, %d)", len(c), len(x), len(y)))
	}
	if dst == nil {
		dst = make([]complex128, n*n)
	} else if len(dst) != n*n {
		panic(fmt.Sprintf("nufft: dst length %d, want %d", len(dst), n*n))
	}
	clear(dst)
	parallelRange(n, func(_, jlo, jhi int) {
		ex := make([]complex128, dftBlock*n)
		ey := make([]complex128, n)
		ay := make([]complex128, dftBlock*(jhi-jlo))
		for k0 := 0; k0 < len(x); k0 += dftBlock {
			nb := min(dftBlock, len(x)-k0)
			for b := range nb {
				k := k0 + b
				expTable(ex[b*n:(b+1)*n], x[k], sign)
				expTable(ey, y[k], sign)
				for j := jlo; j < jhi; j++ {
					ay[(j-jlo)*dftBlock+b] = c[k] * ey[j]
				}
			}
			for j := jlo; j < jhi; j++ {
				row := dst[j*n : j*n+n]
				for b := range nb {
					a := ay[(j-jlo)*dftBlock+b]
					ar, ai := real(a), imag(a)
					e := ex[b*n : b*n+len(row)]
					for i, v := range e {
						row[i] += complex(ar*real(v)-ai*imag(v), ar*imag(v)+ai*real(v))
					}
				}
			}
		}
	})
	return dst
}

// expTable sets e[i] = exp(s·i·(i − n/2)·x), n = len(e), with math.Sincos.
func expTable(e []complex128, x float64, sign int) {
	h := len(e) / 2
	s := float64(sign)
	for i := range e {
		sn, cs := math.Sincos(float64(i-h) * x)
		e[i] = complex(cs, s*sn)
	}
}

func checkGrid(n, length int) {
	if n < 2 || n%2 != 0 {
		panic(fmt.Sprintf("nufft: grid size %d is not even and positive", n))
	}
	if length != n*n {
		panic(fmt.Sprintf("nufft: grid length %d, want %d×%d", length, n, n))
	}
}

func checkSign(sign int) {
	if sign != 1 && sign != -1 {
		panic(fmt.Sprintf("nufft: sign %d is not +1 or -1", sign))
	}
}

func checkPoints(dst []complex128, x, y []float64) []complex128 {
	if len(x) != len(y) {
		panic(fmt.Sprintf("nufft: len(x) = %d, len(y) = %d", len(x), len(y)))
	}
	if dst == nil {
		return make([]complex128, len(x))
	}
	if len(dst) != len(x) {
		panic(fmt.Sprintf("nufft: dst length %d, want %d", len(dst), len(x)))
	}
	return dst
}
