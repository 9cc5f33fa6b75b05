package uv

import (
	"errors"
	"math"
)

// cleanBeamLevel is the fraction of the peak above which the connected main
// lobe of the dirty beam enters the clean-beam fit.
const cleanBeamLevel = 0.35

// FitCleanBeam fits an elliptical Gaussian of unit peak to the main lobe of
// a dirty beam, an n×n image in FITS order with its peak at pixel (n/2, n/2)
// and pixels of pixel arcsec, and returns its FWHMs in arcsec and position
// angle in degrees east of north.
//
// The main lobe is the region of pixels above 0.35 of the peak connected to
// the centre. Over it, ln B = −(a x² + 2b x y + c y²) is fitted by least
// squares with weights B² (the log turns an error δB into δB/B), which is
// exact for a Gaussian beam. The eigenvalues λ₁ ≤ λ₂ of [[a, b], [b, c]]
// give FWHM = 2 √(ln 2/λ); the major axis is the eigenvector of λ₁.
// It fails when the main lobe has fewer than three pixels besides the centre
// (a pixel too coarse for the resolution) or the fit is not an ellipse.
func FitCleanBeam(beam []float64, n int, pixel float64) (CleanBeam, error) {
	if len(beam) != n*n {
		panic("uv: FitCleanBeam image size differs from n×n")
	}
	c := n/2*n + n/2
	peak := beam[c]
	if !(peak > 0) {
		return CleanBeam{}, errors.New("uv: dirty beam has no positive peak at the centre")
	}
	seen := make([]bool, n*n)
	stack := []int{c}
	seen[c] = true
	var m [3][3]float64
	var r [3]float64
	pts := 0
	for len(stack) > 0 {
		k := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		i, j := k%n, k/n
		b := beam[k] / peak
		if k != c {
			x, y := -float64(i-n/2)*pixel, float64(j-n/2)*pixel
			f := [3]float64{x * x, 2 * x * y, y * y}
			w := b * b
			for p := range 3 {
				for q := range 3 {
					m[p][q] += w * f[p] * f[q]
				}
				r[p] -= w * f[p] * math.Log(b)
			}
			pts++
		}
		for _, nb := range [4][2]int{{i + 1, j}, {i - 1, j}, {i, j + 1}, {i, j - 1}} {
			if nb[0] < 0 || nb[0] >= n || nb[1] < 0 || nb[1] >= n {
				continue
			}
			kk := nb[1]*n + nb[0]
			if !seen[kk] && beam[kk] >= cleanBeamLevel*peak {
				seen[kk] = true
				stack = append(stack, kk)
			}
		}
	}
	if pts < 3 {
		return CleanBeam{}, errors.New("uv: the dirty beam's main lobe spans fewer than 4 pixels; use a smaller pixel")
	}
	sol, ok := solve3(m, r)
	if !ok {
		return CleanBeam{}, errors.New("uv: clean-beam fit is singular; use a smaller pixel")
	}
	a, bb, cc := sol[0], sol[1], sol[2]
	mean, diff := 0.5*(a+cc), math.Hypot(0.5*(a-cc), bb)
	l1, l2 := mean-diff, mean+diff
	if !(l1 > 0) {
		return CleanBeam{}, errors.New("uv: clean-beam fit is not an ellipse (the main lobe is not closed)")
	}
	// Eigenvector of l1 in (x east, y north).
	ex, ey := l1-cc, bb
	if math.Abs(ex)+math.Abs(ey) < 1e-12*(math.Abs(a)+math.Abs(cc)) {
		ex, ey = bb, l1-a
	}
	pa := math.Atan2(ex, ey) * 180 / math.Pi
	for pa > 90 {
		pa -= 180
	}
	for pa <= -90 {
		pa += 180
	}
	return CleanBeam{BMaj: 2 * math.Sqrt(math.Ln2/l1), BMin: 2 * math.Sqrt(math.Ln2/l2), BPA: pa}, nil
}

// solve3 solves the 3×3 system m·s = r by Gaussian elimination with
// partial pivoting.
func solve3(m [3][3]float64, r [3]float64) ([3]float64, bool) {
	var s [3]float64
	scale := math.Abs(m[0][0]) + math.Abs(m[1][1]) + math.Abs(m[2][2])
	for col := range 3 {
		piv := col
		for row := col + 1; row < 3; row++ {
			if math.Abs(m[row][col]) > math.Abs(m[piv][col]) {
				piv = row
			}
		}
		if math.Abs(m[piv][col]) <= 1e-14*scale {
			return s, false
		}
		m[col], m[piv] = m[piv], m[col]
		r[col], r[piv] = r[piv], r[col]
		for row := col + 1; row < 3; row++ {
			f := m[row][col] / m[col][col]
			for q := col; q < 3; q++ {
				m[row][q] -= f * m[col][q]
			}
			r[row] -= f * r[col]
		}
	}
	for row := 2; row >= 0; row-- {
		v := r[row]
		for q := row + 1; q < 3; q++ {
			v -= m[row][q] * s[q]
		}
		s[row] = v / m[row][row]
	}
	return s, true
}
