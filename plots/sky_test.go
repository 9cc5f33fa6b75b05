package plots

import (
	"image"
	"math"
	"testing"
)

func TestSkyImageXY(t *testing.T) {
	// The grid convention of conventions.md: x = X0 − (i − N/2)·Pixel,
	// y = Y0 + (j − N/2)·Pixel, pixel (N/2, N/2) at (X0, Y0).
	im := SkyImage{N: 8, Pixel: 0.5, X0: 1, Y0: -2}
	for _, tc := range []struct {
		i, j int
		x, y float64
	}{
		{4, 4, 1, -2}, {0, 0, 3, -4}, {7, 7, -0.5, -0.5}, {5, 4, 0.5, -2},
	} {
		if x, y := im.XY(tc.i, tc.j); x != tc.x || y != tc.y {
			t.Errorf("XY(%d, %d) = (%g, %g), want (%g, %g)", tc.i, tc.j, x, y, tc.x, tc.y)
		}
	}
}

func TestViewZoom(t *testing.T) {
	im := SkyImage{N: 10, Pixel: 1, Values: make([]float64, 100)}
	for _, tc := range []struct {
		name           string
		box            Box
		i0, i1, j0, j1 int
	}{
		// x(i) = 5 − i, y(j) = j − 5.
		{"centre 3×3", Box{-1, 1, -1, 1}, 4, 6, 4, 6},
		{"east strip", Box{2.5, 10, -10, 10}, 0, 2, 0, 9},
		{"clipped", Box{-100, 100, 3, 100}, 0, 9, 8, 9},
	} {
		t.Run(tc.name, func(t *testing.T) {
			v, err := newView(im, &tc.box)
			if err != nil {
				t.Fatal(err)
			}
			if v.i0 != tc.i0 || v.i1 != tc.i1 || v.j0 != tc.j0 || v.j1 != tc.j1 {
				t.Errorf("view i %d…%d, j %d…%d; want i %d…%d, j %d…%d", v.i0, v.i1, v.j0, v.j1, tc.i0, tc.i1, tc.j0, tc.j1)
			}
			left, right, _, _ := v.extent()
			if xl, _ := im.XY(v.i0, 0); left != xl+0.5 {
				t.Errorf("left edge %g, want %g", left, xl+0.5)
			}
			if left <= right {
				t.Errorf("left edge %g not east of right edge %g", left, right)
			}
		})
	}
	if _, err := newView(im, &Box{20, 30, 20, 30}); err == nil {
		t.Error("box outside the image gave no error")
	}
}

func TestRasterOrientation(t *testing.T) {
	// The raster's top-left pixel must be the north-east corner of the
	// image: pixel (i = 0, j = N−1) in FITS order.
	const n = 4
	im := SkyImage{N: n, Pixel: 1, Values: make([]float64, n*n)}
	im.Values[(n-1)*n+0] = 1 // north-east corner
	v, _ := newView(im, nil)
	r := v.rasterFor(Viridis, 0, 1, 1)
	img := r.img.(*image.NRGBA)
	k := img.Bounds().Dx() / n
	if got := img.NRGBAAt(0, 0); got != Viridis.At(1) {
		t.Errorf("top-left raster pixel %v, want the bright north-east pixel %v", got, Viridis.At(1))
	}
	if got := img.NRGBAAt(img.Bounds().Dx()-1, 0); got != Viridis.At(0) {
		t.Errorf("top-right raster pixel %v, want background", got)
	}
	if got := img.NRGBAAt(0, k*n-1); got != Viridis.At(0) {
		t.Errorf("bottom-left raster pixel %v, want background", got)
	}
	if !(r.left > r.right) {
		t.Errorf("raster left edge x = %g is not east of right edge %g", r.left, r.right)
	}
}

func TestBeamPolygonPA(t *testing.T) {
	// The major axis of a beam at position angle PA (east of north) points
	// along (sin PA, cos PA) in (x east, y north): PA 0 is north, 90 east.
	for _, pa := range []float64{0, 30, 90, 135, -60} {
		b := Beam{Major: 3, Minor: 1, PA: pa}
		pts := beamPolygon(b, 2, -1, 360)
		// Principal axis of the vertices (uniform in the ellipse
		// parameter) from their second moments.
		var sxx, syy, sxy float64
		for _, p := range pts[:360] {
			dx, dy := p.X-2, p.Y+1
			sxx += dx * dx
			syy += dy * dy
			sxy += dx * dy
		}
		theta := 0.5 * math.Atan2(2*sxy, sxx-syy) // angle from +x
		ux, uy := math.Cos(theta), math.Sin(theta)
		s, c := math.Sincos(pa * math.Pi / 180)
		if d := math.Abs(ux*s + uy*c); d < 1-1e-9 {
			t.Errorf("PA %g: major axis (%.4f, %.4f), want ±(%.4f, %.4f)", pa, ux, uy, s, c)
		}
		// Semi-axes are half the FWHM: the farthest vertex is 1.5 from the
		// centre, the nearest 0.5.
		rmax, rmin := 0.0, math.Inf(1)
		for _, p := range pts {
			r := math.Hypot(p.X-2, p.Y+1)
			rmax, rmin = math.Max(rmax, r), math.Min(rmin, r)
		}
		if math.Abs(rmax-1.5) > 1e-9 || math.Abs(rmin-0.5) > 1e-3 {
			t.Errorf("PA %g: radii %g…%g, want 0.5…1.5", pa, rmin, rmax)
		}
	}
}

func TestSkyImageCheck(t *testing.T) {
	for _, tc := range []struct {
		name string
		im   SkyImage
	}{
		{"zero size", SkyImage{N: 0, Pixel: 1}},
		{"short values", SkyImage{N: 2, Pixel: 1, Values: make([]float64, 3)}},
		{"bad pixel", SkyImage{N: 1, Pixel: 0, Values: make([]float64, 1)}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := tc.im.check("test image"); err == nil {
				t.Error("no error")
			}
		})
	}
}
