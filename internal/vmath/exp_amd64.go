//go:build amd64

package vmath

// useAVX selects the kernel of exp_amd64.s; the tests turn it off to compare.
var useAVX = haveAVX

var haveAVX = detectAVX()

// HaveAVX2FMA reports whether the CPU and the operating system support AVX2
// and FMA, the instructions of this package's and lensmodel's vector
// kernels.
func HaveAVX2FMA() bool { return haveAVX }

func detectAVX() bool {
	maxLeaf, _, _, _ := cpuidex(0, 0)
	if maxLeaf < 7 {
		return false
	}
	_, _, c1, _ := cpuidex(1, 0)
	const fma, osxsave, avx = 1 << 12, 1 << 27, 1 << 28
	if c1&fma == 0 || c1&osxsave == 0 || c1&avx == 0 {
		return false
	}
	if xgetbv0()&6 != 6 { // the OS saves XMM and YMM state
		return false
	}
	_, b7, _, _ := cpuidex(7, 0)
	return b7&(1<<5) != 0 // AVX2
}

// cpuidex and xgetbv0 are in exp_amd64.s.
func cpuidex(leaf, sub uint32) (a, b, c, d uint32)
func xgetbv0() (eax uint32)

// expAVX sets dst[i] = e^{x[i]} for 0 ≤ i < n, n a multiple of 4, as Exp
// describes.
//
//go:noescape
func expAVX(dst, x *float64, n int)
