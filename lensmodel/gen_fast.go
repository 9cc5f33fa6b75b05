//go:build ignore

// gen_fast writes fast_amd64.s: the batch deflection kernels of the
// isothermal ellipsoid (SIE, singular or cored, q < 1), of the NFW halo
// with an elliptical potential (inside R < 0.8 r_s) and of the external
// shear, eight points per loop iteration, four per 256-bit register, with
// AVX2 and FMA. Run with `go run gen_fast.go` in this directory (go
// generate does). The algorithms are described in fast.go; fast_test.go
// checks the kernels against the per-point formulas.
package main

import (
	"bytes"
	"fmt"
	"log"
	"math"
	"os"
)

var b bytes.Buffer

// cur collects the instructions of one group of four points; the kernels
// interleave two groups, on disjoint registers and frame slots, so that
// the processor overlaps their long dependency chains.
var cur *[]string

// op writes one instruction. Operands are given in Go assembler order
// (sources first, destination last).
func op(name string, args ...string) {
	line := "\t" + name
	for i, a := range args {
		if i == 0 {
			line += " "
		} else {
			line += ", "
		}
		line += a
	}
	if cur != nil {
		*cur = append(*cur, line)
		return
	}
	b.WriteString(line + "\n")
}

// interleave writes the instruction lists of two groups alternately.
func interleave(g0, g1 func()) {
	var l0, l1 []string
	cur = &l0
	g0()
	cur = &l1
	g1()
	cur = nil
	for i := 0; i < max(len(l0), len(l1)); i++ {
		if i < len(l0) {
			b.WriteString(l0[i] + "\n")
		}
		if i < len(l1) {
			b.WriteString(l1[i] + "\n")
		}
	}
}

// group is one of the two groups of four points of a loop iteration: its
// eight registers and the byte offset of its points from index BX.
type group struct {
	r   [8]string
	off int
}

func newGroup(g int) group {
	var gr group
	for i := range gr.r {
		gr.r[i] = fmt.Sprintf("Y%d", 8*g+i)
	}
	gr.off = 32 * g
	return gr
}

// at returns the operand of the group's four values at base register reg.
func (g group) at(reg string) string { return fmt.Sprintf("%d(%s)(BX*8)", g.off, reg) }

// Intel-order helpers: dst = a OP b, with b possibly a memory operand.
func mul(dst, a, bb string) { op("VMULPD", bb, a, dst) }
func add(dst, a, bb string) { op("VADDPD", bb, a, dst) }
func sub(dst, a, bb string) { op("VSUBPD", bb, a, dst) }
func div(dst, a, bb string) { op("VDIVPD", bb, a, dst) }
func and(dst, a, bb string) { op("VANDPD", bb, a, dst) }
func or(dst, a, bb string)  { op("VORPD", bb, a, dst) }
func xor(dst, a, bb string) { op("VXORPD", bb, a, dst) }

// fma231: dst += a·b. fnma231: dst −= a·b. fma213: dst = dst·a + b.
func fma231(dst, a, bb string)  { op("VFMADD231PD", bb, a, dst) }
func fnma231(dst, a, bb string) { op("VFNMADD231PD", bb, a, dst) }
func fma213(dst, a, bb string)  { op("VFMADD213PD", bb, a, dst) }

// cmp: dst = a PRED b (all ones or zero per lane).
func cmp(dst, a, bb string, pred int) { op("VCMPPD", fmt.Sprintf("$%#x", pred), bb, a, dst) }

// blend: dst = mask ? bb : a.
func blend(dst, a, bb, mask string) { op("VBLENDVPD", mask, bb, a, dst) }

// nfwFastMax is the NFW kernel's domain x = R/r_s < nfwFastMax (fast.go).
const nfwFastMax = 0.8

const (
	predLT  = 0x11 // LT_OQ
	predGT  = 0x1e // GT_OQ
	predNEQ = 0x0c // NEQ_OQ
)

// Constants, each stored four times (one 256-bit row).
var (
	consts []uint64
	index  = map[string]int{}
)

func k(name string) string {
	i, ok := index[name]
	if !ok {
		log.Fatalf("unknown constant %s", name)
	}
	return fmt.Sprintf("lmk<>+%d(SB)", 32*i)
}

func defConst(name string, bits uint64) {
	index[name] = len(consts)
	consts = append(consts, bits)
}

func defFloat(name string, v float64) { defConst(name, math.Float64bits(v)) }

// Parameter rows: the kernel's prologue broadcasts the parameters (arrays
// sieParams and nfwParams of fast.go) into 32-byte rows of its frame,
// followed by the slots of the two groups.
func p(row int) string { return fmt.Sprintf("%d(SP)", 32*row) }

func main() {
	defConst("abs", 0x7fffffffffffffff)
	defConst("sign", 0x8000000000000000)
	defConst("mant", 0x000fffffffffffff)
	defConst("two52", 0x4330000000000000)
	defFloat("two52bias", 1<<52+1023)
	defFloat("tiny", 0x1p-1022)
	defFloat("one", 1)
	defFloat("four", 4)
	defFloat("half", 0.5)
	defFloat("sqrt2", math.Sqrt2)
	defFloat("tan3pio8", 2.41421356237309504880)
	defFloat("p66", 0.66)
	defFloat("pio2", math.Pi/2)
	defFloat("pio4", math.Pi/4)
	defFloat("morebits", 6.123233995736765886130e-17)
	defFloat("hmorebits", 0.5*6.123233995736765886130e-17)
	for i, v := range []float64{
		-8.750608600031904122785e-01, -1.615753718733365076637e+01,
		-7.500855792314704667340e+01, -1.228866684490136173410e+02,
		-6.485021904942025371773e+01,
	} {
		defFloat(fmt.Sprintf("P%d", i), v)
	}
	for i, v := range []float64{
		+2.485846490142306297962e+01, +1.650270098316988542046e+02,
		+4.328810604912902668951e+02, +4.853903996359136964868e+02,
		+1.945506571482613964425e+02,
	} {
		defFloat(fmt.Sprintf("Q%d", i), v)
	}
	for i, v := range []float64{
		6.666666666666735130e-01, 3.999999999940941908e-01,
		2.857142874366239149e-01, 2.222219843214978396e-01,
		1.818357216161805012e-01, 1.531383769920937332e-01,
		1.479819860511658591e-01,
	} {
		defFloat(fmt.Sprintf("L%d", i+1), v)
	}
	defFloat("ln2hi", 6.93147180369123816490e-01)
	defFloat("ln2lo", 1.90821492927058770002e-10)
	defFloat("nfwmax", nfwFastMax)
	for j := 0; j <= 8; j++ {
		defFloat(fmt.Sprintf("inv%d", 2*j+1), 1/float64(2*j+1))
	}

	b.WriteString("// Code generated by gen_fast.go; DO NOT EDIT.\n\n//go:build amd64\n\n#include \"textflag.h\"\n\n")
	for i, c := range consts {
		for l := range 4 {
			fmt.Fprintf(&b, "DATA lmk<>+%d(SB)/8, $%#016x\n", 32*i+8*l, c)
		}
	}
	fmt.Fprintf(&b, "GLOBL lmk<>(SB), RODATA|NOPTR, $%d\n\n", 32*len(consts))
	sie()
	nfw()
	shear()
	if err := os.WriteFile("fast_amd64.s", b.Bytes(), 0o644); err != nil {
		log.Fatal(err)
	}
}

// local loads the group's four points and rotates them into the frame
// (rows 0–3: x0, y0, sin PA, cos PA): x' in r2, y' in r3 (r0, r1 clobbered).
func local(g group) {
	r := g.r
	op("VMOVUPD", g.at("SI"), r[0])
	op("VMOVUPD", g.at("DI"), r[1])
	sub(r[0], r[0], p(0))
	sub(r[1], r[1], p(1))
	mul(r[2], r[0], p(2))
	fma231(r[2], r[1], p(3))
	mul(r[3], r[1], p(2))
	fnma231(r[3], r[0], p(3))
}

// accumulate rotates the local deflection (a1, a2) back to the sky and adds
// it to ax, ay, using the temporaries t0, t1.
func accumulate(g group, a1, a2, t0, t1 string) {
	mul(t0, a1, p(2))
	fnma231(t0, a2, p(3))
	add(t0, t0, g.at("R9"))
	op("VMOVUPD", t0, g.at("R9"))
	mul(t1, a1, p(3))
	fma231(t1, a2, p(2))
	add(t1, t1, g.at("R10"))
	op("VMOVUPD", t1, g.at("R10"))
}

// logRatio writes ln(A/B) to out for A, B > 0 with A/B normal or +Inf,
// clobbering A, B and the temporaries kk, t1, t2, t3. The ratio is clamped
// to r = max(A/B, 1) (the SIE's ratio is ≥ 1 but for rounding, the NFW's
// > 4; 0/0 at the centre of the singular SIE becomes 1). With r = 2^k m,
// m in [1, 2), halved (k + 1) when above √2, ln r = k ln 2 + 2 atanh(s),
// s = (m − 1)/(m + 1), |s| ≤ 0.1716, and 2 atanh(s) = 2s + s R(s²) with
// the polynomial R of Go's math.Log (after FreeBSD e_log.c); m − 1 is
// exact (Sterbenz). Its steps after the division, logReduce and logPoly,
// are also used apart, in the stages of the SIE kernel.
func logRatio(out, A, B, kk, t1, t2, t3 string) {
	div(A, A, B)
	logReduce(A, kk, t1, t2)
	logPoly(out, A, B, kk, t1, t2, t3)
}

// logReduce turns the ratio r in A into k in kk and s = (m − 1)/(m + 1)
// in t1, clobbering A and t2.
func logReduce(A, kk, t1, t2 string) {
	op("VMAXPD", k("one"), A, A) // max(r, 1), 1 for NaN
	op("VPSRLQ", "$52", A, kk)
	op("VPOR", k("two52"), kk, kk)
	sub(kk, kk, k("two52bias")) // k = E − 1023, exact
	and(A, A, k("mant"))
	or(A, A, k("one")) // m
	cmp(t2, A, k("sqrt2"), predGT)
	mul(t1, A, k("half"))
	blend(A, A, t1, t2)
	and(t2, t2, k("one"))
	add(kk, kk, t2)
	sub(t1, A, k("one"))
	add(t2, A, k("one"))
	div(t1, t1, t2)
}

// logPoly writes k ln 2 + 2 atanh(s) to out for s in t1 and k in kk,
// clobbering A, B, t2 and t3.
func logPoly(out, A, B, kk, t1, t2, t3 string) {
	// s² in t2, s⁴ in t3.
	mul(t2, t1, t1)
	mul(t3, t2, t2)
	// R = s²(L1 + s⁴(L3 + s⁴(L5 + s⁴ L7))) + s⁴(L2 + s⁴(L4 + s⁴ L6)).
	op("VMOVUPD", k("L7"), A)
	fma213(A, t3, k("L5"))
	fma213(A, t3, k("L3"))
	fma213(A, t3, k("L1"))
	mul(A, A, t2)
	op("VMOVUPD", k("L6"), B)
	fma213(B, t3, k("L4"))
	fma213(B, t3, k("L2"))
	fma231(A, B, t3)
	add(out, t1, t1)
	fma231(out, t1, A)
	fma231(out, kk, k("ln2lo"))
	fma231(out, kk, k("ln2hi"))
}

// block is the number of points of the SIE and NFW kernels' blocks: each
// makes several passes over a block (loop fission), eight points per
// iteration, handing values from pass to pass through scratch arrays of
// block values each in its frame. Done in one pass, the dependency chain of
// a group of four points (a square root and several divisions in sequence,
// some hundred instructions) is longer than the processor's floating-point
// scheduler holds, and the loop waits on latencies; each pass is a short
// chain or one that ends at its square root or division, so that the
// processor overlaps the iterations. Each value is computed by the same
// operations in the same order as in one pass (fast_mirror.go).
const block = 128

// sc returns the operand of the group's four values in scratch array i
// (base register R11, index BX).
func (g group) sc(i int) string {
	return fmt.Sprintf("%d(R11)(BX*8)", 8*block*i+g.off)
}

// prologue starts a kernel with rows parameters and slots scratch arrays:
// it broadcasts the parameters at p into rows of its frame, loads the
// pointers ax, ay, x, y into R9, R10, SI, DI, n into R12 and the 32-byte
// aligned address of the scratch arrays into R11. The frame is too large
// for NOSPLIT.
func prologue(name, sig string, rows, slots, argBytes int) {
	frame := 32*rows + 8*block*slots + 32
	fmt.Fprintf(&b, "// func %s%s\nTEXT ·%s(SB), $%d-%d\n", name, sig, name, frame, argBytes)
	op("MOVQ", "p+0(FP)", "R8")
	for i := range rows {
		op("VBROADCASTSD", fmt.Sprintf("%d(R8)", 8*i), "Y0")
		op("VMOVUPD", "Y0", p(i))
	}
	for i, a := range []string{"ax", "ay", "x", "y"} {
		op("MOVQ", fmt.Sprintf("%s+%d(FP)", a, 8*(i+1)), []string{"R9", "R10", "SI", "DI"}[i])
	}
	op("MOVQ", "n+40(FP)", "R12")
	op("LEAQ", fmt.Sprintf("%d(SP)", 32*rows+31), "R11")
	op("ANDQ", "$-32", "R11")
}

// blockStart opens the loop over blocks (to label) with CX = min(R12,
// block) points in the block.
func blockStart(label string) {
	fmt.Fprintf(&b, "%s:\n", label)
	op("MOVQ", fmt.Sprintf("$%d", block), "CX")
	op("CMPQ", "R12", "CX")
	op("CMOVQLT", "R12", "CX")
}

// blockEnd advances the pointers by the CX points of the block, subtracts
// them from R12 and loops to label while points remain.
func blockEnd(label string) {
	for _, r := range []string{"SI", "DI", "R9", "R10"} {
		op("LEAQ", fmt.Sprintf("(%s)(CX*8)", r), r)
	}
	op("SUBQ", "CX", "R12")
	fmt.Fprintf(&b, "\tJG %s\n", label)
}

// pass writes one pass over the CX points of the block, the steps on two
// interleaved groups of four points per iteration.
func pass(label string, steps []func(group)) {
	op("XORQ", "BX", "BX")
	fmt.Fprintf(&b, "%s:\n", label)
	passBody(steps)
	op("ADDQ", "$8", "BX")
	op("CMPQ", "BX", "CX")
	fmt.Fprintf(&b, "\tJLT %s\n", label)
}

func passBody(steps []func(group)) {
	run := func(g group) {
		for _, s := range steps {
			s(g)
		}
	}
	interleave(func() { run(newGroup(0)) }, func() { run(newGroup(1)) })
}

// The SIE kernel's scratch arrays.
const (
	sieSlotX     = iota // x'
	sieSlotY            // y'
	sieSlotXi           // ξ
	sieSlotRatio        // the log's ratio A/B
	sieSlotXr           // the atan's reduced argument
	sieSlotBase         // the atan's base: 0, π/4 or π/2
	sieSlotCorr         // the atan's correction: 0, Morebits/2 or Morebits
	sieSlotA1           // α_x'
	sieSlotS            // the log's s
	sieSlotK            // the log's k
	sieSlots
)

// siePasses are the passes of the SIE kernel over each block, in order.
var siePasses = [][]func(group){
	{sieXi},
	{sieRatio},
	{sieAtanArg},
	{sieLogReduce},
	{sieAtan},
	{sieLogPoly},
}

// sie writes sieDeflectAVX: rows of sieParams: 0 x0, 1 y0, 2 sin PA,
// 3 cos PA, 4 q², 5 s², 6 s, 7 q² s, 8 e, 9 e², 10 b/e, 11 b/(2e); the
// passes siePasses over each block.
func sie() {
	const name, rows = "sieDeflectAVX", 12
	prologue(name, "(p *sieParams, ax, ay, x, y *float64, n int)", rows, sieSlots, 48)
	op("TESTQ", "R12", "R12")
	fmt.Fprintf(&b, "\tJLE %s_done\n", name)
	blockStart(name + "_block")
	for i, steps := range siePasses {
		pass(fmt.Sprintf("%s_p%d", name, i), steps)
	}
	blockEnd(name + "_block")
	fmt.Fprintf(&b, "%s_done:\n", name)
	op("VZEROUPPER")
	op("RET")
	b.WriteString("\n")
}

// sieXi: rotation and ξ = √(q² (s² + x'²) + y'²).
func sieXi(g group) {
	r := g.r
	local(g)
	op("VMOVUPD", r[2], g.sc(sieSlotX))
	op("VMOVUPD", r[3], g.sc(sieSlotY))
	op("VMOVUPD", p(5), r[4])
	fma231(r[4], r[2], r[2])
	mul(r[4], r[4], p(4))
	fma231(r[4], r[3], r[3])
	op("VSQRTPD", r[4], r[4])
	op("VMOVUPD", r[4], g.sc(sieSlotXi))
}

// sieRatio: the ratio A/B of α_y' = (b/2e) ln(A/B), A = num²,
// num = ξ + q² s + e|y'|, B = q² (ps² + e² x'²), ps = ξ + s.
func sieRatio(g group) {
	r := g.r
	op("VMOVUPD", g.sc(sieSlotXi), r[4])
	op("VMOVUPD", g.sc(sieSlotY), r[3])
	op("VMOVUPD", g.sc(sieSlotX), r[2])
	add(r[5], r[4], p(6))
	and(r[0], r[3], k("abs"))
	add(r[1], r[4], p(7))
	fma231(r[1], r[0], p(8))
	mul(r[1], r[1], r[1]) // A
	mul(r[0], r[2], r[2])
	mul(r[0], r[0], p(9))
	fma231(r[0], r[5], r[5])
	mul(r[0], r[0], p(4)) // B
	div(r[1], r[1], r[0])
	op("VMOVUPD", r[1], g.sc(sieSlotRatio))
}

// sieAtanArg: atan(u/v), u = e|x'|, v = ps, reduced as in Go's math.Atan
// (Cephes): u > tan(3π/8) v: π/2 + atan(−v/u) + Morebits;
// u > 0.66 v: π/4 + atan((u − v)/(u + v)) + Morebits/2; else atan(u/v).
func sieAtanArg(g group) {
	r := g.r
	op("VMOVUPD", g.sc(sieSlotXi), r[4])
	op("VMOVUPD", g.sc(sieSlotX), r[2])
	add(r[5], r[4], p(6))
	and(r[6], r[2], k("abs"))
	mul(r[6], r[6], p(8))
	mul(r[0], r[5], k("tan3pio8"))
	cmp(r[7], r[6], r[0], predGT) // m3
	mul(r[1], r[5], k("p66"))
	cmp(r[3], r[6], r[1], predGT) // m66
	sub(r[0], r[6], r[5])
	add(r[1], r[6], r[5])
	blend(r[4], r[6], r[0], r[3]) // N
	blend(r[2], r[5], r[1], r[3]) // D
	xor(r[0], r[5], k("sign"))
	blend(r[4], r[4], r[0], r[7])
	blend(r[2], r[2], r[6], r[7])
	// At the centre of the singular ellipsoid N = D = 0: the quotient
	// 0/max(D, tiny) is 0.
	op("VMAXPD", k("tiny"), r[2], r[2])
	div(r[4], r[4], r[2])
	op("VMOVUPD", r[4], g.sc(sieSlotXr))
	and(r[0], r[3], k("pio4"))
	blend(r[0], r[0], k("pio2"), r[7])
	op("VMOVUPD", r[0], g.sc(sieSlotBase))
	and(r[1], r[3], k("hmorebits"))
	blend(r[1], r[1], k("morebits"), r[7])
	op("VMOVUPD", r[1], g.sc(sieSlotCorr))
}

// sieLogReduce: the log's reduction of A/B to k and s.
func sieLogReduce(g group) {
	r := g.r
	op("VMOVUPD", g.sc(sieSlotRatio), r[5])
	logReduce(r[5], r[6], r[7], r[3])
	op("VMOVUPD", r[6], g.sc(sieSlotK))
	op("VMOVUPD", r[7], g.sc(sieSlotS))
}

// sieAtan: the atan's rational function, x + x z P(z)/Q(z), z = x², and
// α_x' = (b/e) atan(e x'/(ξ + s)).
func sieAtan(g group) {
	r := g.r
	op("VMOVUPD", g.sc(sieSlotXr), r[4])
	mul(r[0], r[4], r[4])
	op("VMOVUPD", k("P0"), r[1])
	for i := 1; i <= 4; i++ {
		fma213(r[1], r[0], k(fmt.Sprintf("P%d", i)))
	}
	add(r[2], r[0], k("Q0"))
	for i := 1; i <= 4; i++ {
		fma213(r[2], r[0], k(fmt.Sprintf("Q%d", i)))
	}
	mul(r[1], r[1], r[0])
	div(r[1], r[1], r[2])
	fma213(r[1], r[4], r[4])
	add(r[1], r[1], g.sc(sieSlotBase))
	add(r[1], r[1], g.sc(sieSlotCorr))
	op("VMOVUPD", g.sc(sieSlotX), r[0])
	and(r[0], r[0], k("sign"))
	xor(r[1], r[1], r[0])
	mul(r[1], r[1], p(10))
	op("VMOVUPD", r[1], g.sc(sieSlotA1))
}

// sieLogPoly: the log's polynomial, α_y', the rotation back and the sum.
func sieLogPoly(g group) {
	r := g.r
	op("VMOVUPD", g.sc(sieSlotS), r[1])
	op("VMOVUPD", g.sc(sieSlotK), r[0])
	logPoly(r[6], r[2], r[3], r[0], r[1], r[4], r[5])
	mul(r[6], r[6], p(11))
	op("VMOVUPD", g.sc(sieSlotY), r[0])
	and(r[0], r[0], k("sign"))
	xor(r[6], r[6], r[0])
	op("VMOVUPD", g.sc(sieSlotA1), r[1])
	accumulate(g, r[1], r[6], r[0], r[2])
}

// The NFW kernel's scratch arrays.
const (
	nfwSlotX     = iota // x'
	nfwSlotY            // y'
	nfwSlotR            // R
	nfwSlotXx           // x = R/r_s
	nfwSlotRatio        // the log's ratio 2 r_s/R
	nfwSlotSq           // s = √(1 − x²)
	nfwSlotK            // the log's k
	nfwSlotLs           // the log's s
	nfwSlotInv          // 1/(s p d)
	nfwSlotX2           // x²
	nfwSlotP            // p = 1 + s
	nfwSlotD            // d = 4p − x²
	nfwSlotSP           // s p
	nfwSlotL            // L = ln(2 r_s/R)
	nfwSlotSum          // S
	nfwSlots
)

// nfwPasses are the passes of the NFW kernel over each block after the
// first, nfwRadius.
// nfwInverse's division and nfwLogPoly's products share a pass, so that
// the divider and the multipliers work at once.
var nfwPasses = [][]func(group){
	{nfwLogRatio},
	{nfwSqrt},
	{nfwLogReduce},
	{nfwInverse, nfwLogPoly},
	{nfwSeries},
	{nfwCombine},
}

// nfw writes nfwDeflectAVX: rows of nfwParams: 0 x0, 1 y0, 2 sin PA,
// 3 cos PA, 4 a1 = 1 − ε, 5 a2 = 1 + ε, 6 1/r_s, 7 2 r_s, 8 4κ_s. It
// stops at the first group of eight points with one at R ≥ 0.8 r_s (or
// not a number) and returns its index: the first pass over a block,
// nfwRadius, ends the block there, and the kernel after it.
func nfw() {
	const name, rows = "nfwDeflectAVX", 9
	prologue(name, "(p *nfwParams, ax, ay, x, y *float64, n int) (done int)", rows, nfwSlots, 56)
	op("XORQ", "R13", "R13") // points done
	op("TESTQ", "R12", "R12")
	fmt.Fprintf(&b, "\tJLE %s_done\n", name)
	blockStart(name + "_block")
	op("XORQ", "BX", "BX")
	fmt.Fprintf(&b, "%s_p0:\n", name)
	interleave(func() { nfwRadius(newGroup(0), "AX") }, func() { nfwRadius(newGroup(1), "DX") })
	op("ANDL", "DX", "AX")
	op("CMPL", "AX", "$15")
	fmt.Fprintf(&b, "\tJNE %s_short\n", name)
	op("ADDQ", "$8", "BX")
	op("CMPQ", "BX", "CX")
	fmt.Fprintf(&b, "\tJLT %s_p0\n", name)
	fmt.Fprintf(&b, "\tJMP %s_passes\n%s_short:\n", name, name)
	// The block ends at BX, and the kernel after it (R12 = CX).
	op("MOVQ", "BX", "CX")
	op("MOVQ", "BX", "R12")
	op("TESTQ", "CX", "CX")
	fmt.Fprintf(&b, "\tJEQ %s_done\n%s_passes:\n", name, name)
	for i, steps := range nfwPasses {
		pass(fmt.Sprintf("%s_p%d", name, i+1), steps)
	}
	op("ADDQ", "CX", "R13")
	blockEnd(name + "_block")
	fmt.Fprintf(&b, "%s_done:\n", name)
	op("MOVQ", "R13", "done+48(FP)")
	op("VZEROUPPER")
	op("RET")
	b.WriteString("\n")
}

// nfwRadius: rotation, R = √(a1 x'² + a2 y'²) and x = R/r_s; it sets the
// bits of mask where x < 0.8.
func nfwRadius(g group, mask string) {
	r := g.r
	local(g)
	op("VMOVUPD", r[2], g.sc(nfwSlotX))
	op("VMOVUPD", r[3], g.sc(nfwSlotY))
	mul(r[4], r[2], r[2])
	mul(r[4], r[4], p(4))
	mul(r[0], r[3], r[3])
	fma231(r[4], r[0], p(5))
	op("VSQRTPD", r[4], r[4])
	op("VMOVUPD", r[4], g.sc(nfwSlotR))
	mul(r[5], r[4], p(6))
	op("VMOVUPD", r[5], g.sc(nfwSlotXx))
	cmp(r[6], r[5], k("nfwmax"), predLT)
	op("VMOVMSKPD", r[6], mask)
}

// The NFW deflection inside the domain: 4h(x)/x² = (4/s) [ln(2/x)/p −
// 2 S/d], s = √(1 − x²), p = 1 + s, d = 4p − x², S = Σ_j z^{2j}/(2j + 1),
// z = x²/d ≤ 0.111 (fast.go), with one division for 1/(s p d).

// nfwLogRatio: the log's ratio 2 r_s/R.
func nfwLogRatio(g group) {
	r := g.r
	op("VMOVUPD", p(7), r[1])
	div(r[1], r[1], g.sc(nfwSlotR))
	op("VMOVUPD", r[1], g.sc(nfwSlotRatio))
}

// nfwSqrt: s = √(1 − x²).
func nfwSqrt(g group) {
	r := g.r
	op("VMOVUPD", g.sc(nfwSlotXx), r[5])
	mul(r[1], r[5], r[5])
	op("VMOVUPD", k("one"), r[0])
	sub(r[0], r[0], r[1])
	op("VSQRTPD", r[0], r[0])
	op("VMOVUPD", r[0], g.sc(nfwSlotSq))
}

// nfwLogReduce: the log's reduction to k and s.
func nfwLogReduce(g group) {
	r := g.r
	op("VMOVUPD", g.sc(nfwSlotRatio), r[1])
	logReduce(r[1], r[0], r[2], r[3])
	op("VMOVUPD", r[0], g.sc(nfwSlotK))
	op("VMOVUPD", r[2], g.sc(nfwSlotLs))
}

// nfwInverse: p = 1 + s, d = 4p − x², s p and inv = 1/(s p d).
func nfwInverse(g group) {
	r := g.r
	op("VMOVUPD", g.sc(nfwSlotSq), r[0])
	op("VMOVUPD", g.sc(nfwSlotXx), r[5])
	mul(r[1], r[5], r[5])
	op("VMOVUPD", r[1], g.sc(nfwSlotX2))
	add(r[6], r[0], k("one"))
	op("VMOVUPD", r[6], g.sc(nfwSlotP))
	mul(r[2], r[6], k("four"))
	sub(r[2], r[2], r[1])
	op("VMOVUPD", r[2], g.sc(nfwSlotD))
	mul(r[3], r[0], r[6])
	op("VMOVUPD", r[3], g.sc(nfwSlotSP))
	mul(r[4], r[3], r[2])
	op("VMOVUPD", k("one"), r[5])
	div(r[5], r[5], r[4])
	op("VMOVUPD", r[5], g.sc(nfwSlotInv))
}

// nfwLogPoly: L = ln(2 r_s/R).
func nfwLogPoly(g group) {
	r := g.r
	op("VMOVUPD", g.sc(nfwSlotLs), r[2])
	op("VMOVUPD", g.sc(nfwSlotK), r[0])
	logPoly(r[7], r[1], r[4], r[0], r[2], r[3], r[6])
	op("VMOVUPD", r[7], g.sc(nfwSlotL))
}

// nfwSeries: z = x² s p inv = x²/d and S.
func nfwSeries(g group) {
	r := g.r
	op("VMOVUPD", g.sc(nfwSlotX2), r[1])
	mul(r[1], r[1], g.sc(nfwSlotSP))
	mul(r[1], r[1], g.sc(nfwSlotInv))
	mul(r[1], r[1], r[1])
	op("VMOVUPD", k("inv17"), r[3])
	for j := 7; j >= 0; j-- {
		fma213(r[3], r[1], k(fmt.Sprintf("inv%d", 2*j+1)))
	}
	op("VMOVUPD", r[3], g.sc(nfwSlotSum))
}

// nfwCombine: num = L d − 2 S p, 4κ_s h/x² = 4κ_s num inv (0 at R = 0),
// the deflection (a1 x', a2 y') 4κ_s h/x², the rotation back and the sum.
func nfwCombine(g group) {
	r := g.r
	op("VMOVUPD", g.sc(nfwSlotL), r[7])
	op("VMOVUPD", g.sc(nfwSlotSum), r[3])
	mul(r[7], r[7], g.sc(nfwSlotD))
	add(r[3], r[3], r[3])
	fnma231(r[7], r[3], g.sc(nfwSlotP))
	mul(r[7], r[7], g.sc(nfwSlotInv))
	mul(r[7], r[7], p(8))
	op("VXORPD", r[0], r[0], r[0])
	cmp(r[0], r[0], g.sc(nfwSlotR), predNEQ)
	and(r[7], r[7], r[0])
	op("VMOVUPD", g.sc(nfwSlotX), r[2])
	mul(r[2], r[2], p(4))
	mul(r[2], r[2], r[7])
	op("VMOVUPD", g.sc(nfwSlotY), r[3])
	mul(r[3], r[3], p(5))
	mul(r[3], r[3], r[7])
	accumulate(g, r[2], r[3], r[0], r[1])
}

// shear writes shearDeflectAVX: (α_x, α_y) += (γ_s Δy − γ_c Δx,
// γ_s Δx + γ_c Δy) for params x0, y0, γ_c = γ cos 2φ_γ, γ_s = γ sin 2φ_γ,
// with unfused products and sums in the order of shearEval.deflect, so that
// its values equal the per-point ones bit for bit; eight points per
// iteration.
func shear() {
	const name = "shearDeflectAVX"
	fmt.Fprintf(&b, "\n// func %s(p *shearParams, ax, ay, x, y *float64, n int)\nTEXT ·%s(SB), NOSPLIT, $0-48\n", name, name)
	op("MOVQ", "p+0(FP)", "R8")
	for i := range 4 {
		op("VBROADCASTSD", fmt.Sprintf("%d(R8)", 8*i), fmt.Sprintf("Y%d", 12+i))
	}
	for i, a := range []string{"ax", "ay", "x", "y"} {
		op("MOVQ", fmt.Sprintf("%s+%d(FP)", a, 8*(i+1)), []string{"R9", "R10", "SI", "DI"}[i])
	}
	op("MOVQ", "n+40(FP)", "CX")
	op("XORQ", "BX", "BX")
	op("CMPQ", "BX", "CX")
	fmt.Fprintf(&b, "\tJGE %s_done\n%s_loop:\n", name, name)
	for g := range 2 {
		r := func(i int) string { return fmt.Sprintf("Y%d", 6*g+i) }
		at := func(reg string) string { return fmt.Sprintf("%d(%s)(BX*8)", 32*g, reg) }
		op("VMOVUPD", at("SI"), r(0))
		op("VMOVUPD", at("DI"), r(1))
		sub(r(0), r(0), "Y12")
		sub(r(1), r(1), "Y13")
		mul(r(2), r(0), "Y14") // γ_c Δx
		mul(r(3), r(1), "Y15") // γ_s Δy
		sub(r(2), r(3), r(2))
		add(r(2), r(2), at("R9"))
		op("VMOVUPD", r(2), at("R9"))
		mul(r(4), r(0), "Y15") // γ_s Δx
		mul(r(5), r(1), "Y14") // γ_c Δy
		add(r(4), r(4), r(5))
		add(r(4), r(4), at("R10"))
		op("VMOVUPD", r(4), at("R10"))
	}
	op("ADDQ", "$8", "BX")
	op("CMPQ", "BX", "CX")
	fmt.Fprintf(&b, "\tJLT %s_loop\n%s_done:\n", name, name)
	op("VZEROUPPER")
	op("RET")
}
