package uv

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"deflect/internal/pyref"
)

// astropyPython returns an interpreter that imports astropy.wcs, skipping
// the test when there is none (failing instead when
// DEFLECT_REQUIRE_ASTROPY=1).
func astropyPython(t *testing.T) string {
	t.Helper()
	return pyref.Python(t, "astropy.wcs", "astropy.io.fits")
}

// astropyPixels returns astropy.wcs's 0-based pixel coordinates of the sky
// positions radec (pairs of degrees) in the FITS image at path.
func astropyPixels(t *testing.T, py, path string, radec ...float64) [][2]float64 {
	t.Helper()
	args := []string{filepath.Join("..", "testdata", "image", "wcs_pixel.py"), path}
	for _, v := range radec {
		args = append(args, strconv.FormatFloat(v, 'g', -1, 64))
	}
	var stderr bytes.Buffer
	cmd := exec.Command(py, args...)
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("wcs_pixel.py: %v\n%s", err, stderr.String())
	}
	var pix [][2]float64
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		var x, y float64
		if _, err := fmt.Sscan(line, &x, &y); err != nil {
			t.Fatalf("wcs_pixel.py output %q: %v", line, err)
		}
		pix = append(pix, [2]float64{x, y})
	}
	return pix
}

// A point source simulated at a known RA/Dec peaks in the pixel that
// astropy.wcs (astropy 5.2, an outside implementation of the FITS WCS
// papers) puts at that RA/Dec, with the peak equal to the injected flux
// times the primary beam within 1% (natural weighting). The projection of
// two further positions, and of the grid's offset, agrees with astropy to
// 1e-6 pixel.
func TestDirtyImageAstropyWCS(t *testing.T) {
	py := astropyPython(t)
	rnd := rand.New(rand.NewPCG(1, 11))
	const ra0, dec0 = 150.1, -60.2 // a fictional field far from the equator
	const freq, dish, flux = 300e9, 12.0, 0.005
	for _, g := range []Grid{{N: 256, Pixel: 0.1}, {N: 256, Pixel: 0.1, X0: 1.5, Y0: -2.3}} {
		t.Run(fmt.Sprintf("offset %v,%v", g.X0, g.Y0), func(t *testing.T) {
			// The source: 6.3″ east and 4.2″ north of the phase centre,
			// given as RA/Dec (the primary beam there is 0.62).
			sra, sdec := Unproject(ra0, dec0, 6.3, 4.2)
			x, y := Project(ra0, dec0, sra, sdec)
			// Resolution ≈ 0.5″: |u|, |v| up to 4·10⁵ λ.
			n := 4000
			d := &Dataset{Meta: Meta{Freq: freq, Dish: dish, RA: ra0, Dec: dec0, HasPhaseCentre: true},
				U: make([]float64, n), V: make([]float64, n), Re: make([]float64, n), Im: make([]float64, n), Weight: make([]float64, n)}
			for k := range n {
				r, th := 4e5*math.Sqrt(rnd.Float64()), 2*math.Pi*rnd.Float64()
				d.U[k], d.V[k] = r*math.Cos(th), r*math.Sin(th)
				d.Weight[k] = 1
			}
			pb := NewPrimaryBeam(dish, freq)
			vis := PredictPoints(nil, d.U, d.V, pb, []float64{x}, []float64{y}, []float64{flux})
			for k, v := range vis {
				d.Re[k], d.Im[k] = real(v), imag(v)
			}
			di, err := MakeDirty(d, g, ImagingOptions{})
			if err != nil {
				t.Fatal(err)
			}
			path := filepath.Join(t.TempDir(), "dirty.fits")
			err = WriteFITSImage(path, false, &SkyImage{Grid: g, Data: di.Image,
				Meta: ImageMeta{RA: ra0, Dec: dec0, HasPhaseCentre: true, Freq: freq, BUnit: "JY/BEAM", Beam: &di.Clean}})
			if err != nil {
				t.Fatal(err)
			}
			// Two more positions, checked through Project and Grid.Pix.
			ra2, dec2 := ra0-3.7/3600/math.Cos(dec0*math.Pi/180), dec0+9.1/3600
			ra3, dec3 := ra0+0.0021, dec0-0.0013
			pix := astropyPixels(t, py, path, sra, sdec, ra2, dec2, ra3, dec3, ra0, dec0)
			for p, rd := range [][2]float64{{sra, sdec}, {ra2, dec2}, {ra3, dec3}, {ra0, dec0}} {
				i, j := g.Pix(Project(ra0, dec0, rd[0], rd[1]))
				if math.Abs(i-pix[p][0]) > 1e-6 || math.Abs(j-pix[p][1]) > 1e-6 {
					t.Errorf("position %d (%v, %v): deflect pixel (%.9f, %.9f), astropy (%.9f, %.9f)",
						p, rd[0], rd[1], i, j, pix[p][0], pix[p][1])
				}
			}
			best := 0
			for k, v := range di.Image {
				if v > di.Image[best] {
					best = k
				}
			}
			bi, bj := best%g.N, best/g.N
			ai, aj := int(math.Round(pix[0][0])), int(math.Round(pix[0][1]))
			if bi != ai || bj != aj {
				t.Errorf("peak at pixel (%d, %d), astropy puts the source at (%.3f, %.3f)", bi, bj, pix[0][0], pix[0][1])
			}
			// The source sits at a pixel centre (6.3″, 4.2″ are whole
			// pixels), so the peak of the dirty image is the beam-attenuated
			// flux; divided by the primary beam it is the injected flux.
			got := di.Image[best] / pb.At(x, y)
			if math.Abs(got/flux-1) > 0.01 {
				t.Errorf("peak / primary beam = %.6g Jy, injected %.6g Jy (beam gain %.4f)", got, flux, pb.At(x, y))
			}
		})
	}
}
