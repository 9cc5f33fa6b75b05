package lensmodel

// Batch deflection kernels. On amd64 CPUs with AVX2 and FMA the isothermal
// ellipsoid (q < 1, e = √(1 − q²) ≥ sieLogE), the NFW halo inside
// R < 0.8 r_s and the external shear are evaluated by the assembly of
// fast_amd64.s (written by gen_fast.go), eight points per loop iteration in
// two interleaved groups of four; elsewhere the per-point formulas are used.
// The SIE and NFW kernels take the points in blocks of 128 and make several
// passes over each block (loop fission), handing values on through scratch
// arrays in the kernel's frame (10 and 15 KiB, in the first-level cache). In
// one pass, the dependency chain of a group of four points (a square root
// and several divisions in sequence) is longer than the floating-point
// scheduler can hold, and the loop waits on latencies; each pass is a short
// chain, or one that ends at its square root or division, so that the
// processor overlaps the iterations. SIE: the rotation and ξ; the log's
// ratio; the atan's reduced argument; the log's reduction; the atan's
// rational function and α_x'; the log's polynomial, α_y', the rotation back
// and the sum. NFW: the rotation, R and the domain check (the block ends
// at the first group of eight outside it); the log's ratio; √(1 − x²); the
// log's reduction; 1/(s p d) beside the log's polynomial; the series S;
// the combination, the rotation back and the sum. Each value is computed by
// the same operations in the same order as in one pass.
//
// With the kernels, the per-point deflection methods of the SIE and NFW
// use the kernels' one-point Go forms (fast_mirror.go), which give the same
// values bit for bit, so that batch and per-point values stay equal; the
// last len%8 points of a batch are evaluated so. The shear kernel repeats the per-point
// arithmetic exactly. The SIE and NFW kernels follow the formulas of sie.go
// and nfw.go with the elementary functions written out:
//
//   - atan: the range reduction and rational approximation of Go's
//     math.Atan (Cephes), the reduced argument formed as one quotient;
//   - ln(A/B): r = max(A/B, 1) (the SIE's ratio is ≥ 1 but for rounding,
//     the NFW's > 4) split as 2^k m, m in [1/√2, √2], and
//     ln m = 2 atanh(s), s = (m − 1)/(m + 1), with the polynomial of Go's
//     math.Log (FreeBSD e_log.c);
//   - NFW, x = R/r_s < 0.8: 4h(x)/x² = (4/s) [ln(2/x)/p − 2S/d] with
//     s = √(1 − x²), p = 1 + s, d = 4p − x², S = Σ_j z^{2j}/(2j + 1),
//     z = x²/d ≤ 0.111 (nine terms), from ln1p(w) = 2 atanh(w/(2 + w)),
//     w = −x²/(2p), in the small-x form of nfwH.
//
// fast_test.go bounds the difference between the kernels and the portable
// formulas (4e-15 |α| plus 1e-15 of the profile's deflection scale). Each
// point's value depends only on the point.
//
// References:
//   - Moshier S. L., 1989, Methods and Programs for Mathematical Functions
//     (Prentice Hall), the Cephes library: atan's reduction at tan(3π/8)
//     and 0.66 and its P/Q coefficients, as in Go's math/atan.go.
//   - Sun Microsystems, 1993, FreeBSD msun e_log.c: ln(1 + f) = 2 atanh(s)
//     with the polynomial L1…L7, as in Go's math/log.go.

// useAVX selects the assembly kernels; the tests turn it off to compare.
var useAVX = haveAVX

// sieParams are the constants of sieDeflectAVX, in the order of
// gen_fast.go: x0, y0, sin PA, cos PA, q², s², s, q² s, e, e², b/e, b/(2e).
type sieParams [12]float64

// fastParams sets e.fast and e.kp.
func (e *sieEval) fastParams() {
	e.fast = !e.sphere && e.e >= sieLogE
	e.kp = sieParams{e.f.x0, e.f.y0, e.f.s, e.f.c, e.q2, e.s * e.s,
		e.s, e.q2s, e.e, e.e * e.e, e.be, 0.5 * e.be}
}

// nfwParams are the constants of nfwDeflectAVX: x0, y0, sin PA, cos PA,
// a1 = 1 − ε, a2 = 1 + ε, 1/r_s, 2 r_s, 4κ_s.
type nfwParams [9]float64

func (e *nfwEval) fastParams() {
	g := &e.g
	e.kp = nfwParams{g.f.x0, g.f.y0, g.f.s, g.f.c, g.a1, g.a2,
		e.invRs, 2 / e.invRs, 4 * e.ks}
}

// shearParams are the constants of shearDeflectAVX: x0, y0, γ cos 2φ_γ,
// γ sin 2φ_γ.
type shearParams [4]float64

// shearFastEval is the evaluator of an external shear whose batch
// deflection goes through shearFast; its values are those of shearEval.
type shearFastEval struct{ *shearEval }

func (e shearFastEval) addDeflect(ax, ay, x, y []float64) {
	ax, ay, y = ax[:len(x)], ay[:len(x)], y[:len(x)]
	i := 0
	if useAVX {
		i = shearFast(e.shearEval, ax, ay, x, y)
	}
	e.shearEval.addDeflect(ax[i:], ay[i:], x[i:], y[i:])
}

// withFastKernels returns e, or its replacement with batch kernels of the
// same values.
func withFastKernels(e evaluator) evaluator {
	if s, ok := e.(*shearEval); ok {
		return shearFastEval{s}
	}
	return e
}
