package lensmodel

import "math"

// The kernels of fast_amd64.s for one point, in Go: the same operations in
// the same order, each rounded as the vector instruction rounds it (the
// products converted explicitly to float64 so that the compiler cannot fuse
// them; math.FMA where the kernel fuses). They give the kernels' values bit
// for bit (fast_test.go checks) and serve the per-point methods, which
// would otherwise pay for a call into the assembly per point.

// Constants of gen_fast.go.
const (
	nfwFastMax = 0.8 // the NFW kernel's domain x = R/r_s < nfwFastMax
	kTan3pio8  = 2.41421356237309504880
	kMorebits  = 6.123233995736765886130e-17
	kTiny      = 0x1p-1022
	kTwo52Bias = 1<<52 + 1023
)

// vmax is VMAXPD for one lane: a if a > b, else b (b when either is NaN).
func vmax(a, b float64) float64 {
	if a > b {
		return a
	}
	return b
}

// rotateLocal is the kernels' rotation into the frame of (x0, y0, sin PA,
// cos PA).
func rotateLocal(x, y, x0, y0, sn, cs float64) (xp, yp float64) {
	dx, dy := x-x0, y-y0
	xp = math.FMA(dy, cs, float64(dx*sn))
	yp = math.FMA(-dx, cs, float64(dy*sn))
	return xp, yp
}

// rotateSky is the kernels' rotation of (a1, a2) back to the sky, with the
// addition to zero of the accumulation.
func rotateSky(a1, a2, sn, cs float64) (ax, ay float64) {
	t0 := math.FMA(-a2, cs, float64(a1*sn))
	t1 := math.FMA(a2, sn, float64(a1*cs))
	return t0 + 0, t1 + 0
}

// logRatioOne is logRatio of gen_fast.go: ln(max(A/B, 1)).
func logRatioOne(a, b float64) float64 {
	const (
		l1, l2, l3 = 6.666666666666735130e-01, 3.999999999940941908e-01, 2.857142874366239149e-01
		l4, l5, l6 = 2.222219843214978396e-01, 1.818357216161805012e-01, 1.531383769920937332e-01
		l7         = 1.479819860511658591e-01
		ln2Hi      = 6.93147180369123816490e-01
		ln2Lo      = 1.90821492927058770002e-10
	)
	r := vmax(a/b, 1)
	bits := math.Float64bits(r)
	k := math.Float64frombits(bits>>52|0x4330000000000000) - kTwo52Bias
	m := math.Float64frombits(bits&(1<<52-1) | math.Float64bits(1))
	if m > math.Sqrt2 {
		m = float64(m * 0.5)
		k = k + 1
	}
	s := (m - 1) / (m + 1)
	s2 := float64(s * s)
	s4 := float64(s2 * s2)
	p := math.FMA(l7, s4, l5)
	p = math.FMA(p, s4, l3)
	p = math.FMA(p, s4, l1)
	p = float64(p * s2)
	q := math.FMA(l6, s4, l4)
	q = math.FMA(q, s4, l2)
	p = math.FMA(q, s4, p)
	out := math.FMA(s, p, s+s)
	out = math.FMA(k, ln2Lo, out)
	return math.FMA(k, ln2Hi, out)
}

// sieOneGo is the passes siePasses of gen_fast.go for one point.
func sieOneGo(c *sieParams, x, y float64) (ax, ay float64) {
	const (
		p0, p1, p2 = -8.750608600031904122785e-01, -1.615753718733365076637e+01, -7.500855792314704667340e+01
		p3, p4     = -1.228866684490136173410e+02, -6.485021904942025371773e+01
		q0, q1, q2 = +2.485846490142306297962e+01, +1.650270098316988542046e+02, +4.328810604912902668951e+02
		q3, q4     = +4.853903996359136964868e+02, +1.945506571482613964425e+02
	)
	sn, cs, qq, s, e, be := c[2], c[3], c[4], c[6], c[8], c[10]
	xp, yp := rotateLocal(x, y, c[0], c[1], sn, cs)
	t := math.FMA(xp, xp, c[5])
	t = float64(t * qq)
	xi := math.Sqrt(math.FMA(yp, yp, t))
	ps := xi + s
	// atan(u/ps), u = e|x'|.
	u := float64(math.Abs(xp) * e)
	m3 := u > float64(ps*kTan3pio8)
	m66 := u > float64(ps*0.66)
	n, d := u, ps
	var base, corr float64
	if m66 {
		n, d = u-ps, u+ps
		base, corr = math.Pi/4, 0.5*kMorebits
	}
	if m3 {
		n, d = -ps, u
		base, corr = math.Pi/2, kMorebits
	}
	xr := n / vmax(d, kTiny)
	z := float64(xr * xr)
	pz := math.FMA(p0, z, p1)
	pz = math.FMA(pz, z, p2)
	pz = math.FMA(pz, z, p3)
	pz = math.FMA(pz, z, p4)
	qz := z + q0
	qz = math.FMA(qz, z, q1)
	qz = math.FMA(qz, z, q2)
	qz = math.FMA(qz, z, q3)
	qz = math.FMA(qz, z, q4)
	at := math.FMA(float64(pz*z)/qz, xr, xr)
	at = at + base
	at = at + corr
	if math.Signbit(xp) {
		at = -at
	}
	a1 := float64(at * be)
	// α_y' = (b/2e) ln(num²/(q² (ps² + e² x'²))), num = ξ + q² s + e|y'|.
	num := math.FMA(math.Abs(yp), e, xi+c[7])
	num = float64(num * num)
	ps = xi + s
	den := float64(xp * xp)
	den = float64(den * c[9])
	den = math.FMA(ps, ps, den)
	den = float64(den * qq)
	a2 := float64(logRatioOne(num, den) * c[11])
	if math.Signbit(yp) {
		a2 = -a2
	}
	return rotateSky(a1, a2, sn, cs)
}

// nfwOneGo is nfwRadius and the passes nfwPasses of gen_fast.go for one
// point; ok is false outside the kernel's domain R < 0.8 r_s.
func nfwOneGo(c *nfwParams, x, y float64) (ax, ay float64, ok bool) {
	sn, cs, a1, a2 := c[2], c[3], c[4], c[5]
	xp, yp := rotateLocal(x, y, c[0], c[1], sn, cs)
	r2 := float64(xp * xp)
	r2 = float64(r2 * a1)
	r2 = math.FMA(float64(yp*yp), a2, r2)
	r := math.Sqrt(r2)
	xx := float64(r * c[6])
	if !(xx < nfwFastMax) {
		return 0, 0, false
	}
	l := logRatioOne(c[7], r)
	x2 := float64(xx * xx)
	s := math.Sqrt(1 - x2)
	p := s + 1
	d := float64(p*4) - x2
	sp := float64(s * p)
	inv := 1 / float64(sp*d)
	z := float64(x2 * sp)
	z = float64(z * inv)
	z2 := float64(z * z)
	sum := 1.0 / 17
	for j := 7; j >= 0; j-- {
		sum = math.FMA(sum, z2, 1/float64(2*j+1))
	}
	num := math.FMA(-(sum + sum), p, float64(l*d))
	kb := float64(num * inv)
	kb = float64(kb * c[8])
	if !(r != 0) {
		kb = 0
	}
	v1 := float64(xp * a1)
	v1 = float64(v1 * kb)
	v2 := float64(yp * a2)
	v2 = float64(v2 * kb)
	ax, ay = rotateSky(v1, v2, sn, cs)
	return ax, ay, true
}
