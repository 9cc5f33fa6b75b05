package main

import (
	"bytes"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"deflect/plots"
	"deflect/uv"
)

// pointTable writes a noise-free table of a 2 mJy point source 0.6″ east and
// 0.3″ north of the phase centre, seen by 12 m dishes at 300 GHz.
func pointTable(t *testing.T, dir string) string {
	t.Helper()
	rnd := rand.New(rand.NewPCG(1, 1))
	n := 1500
	d := &uv.Dataset{Meta: uv.Meta{Label: "sim", Freq: 300e9, Dish: 12, RA: 40, Dec: -20, HasPhaseCentre: true},
		U: make([]float64, n), V: make([]float64, n), Re: make([]float64, n), Im: make([]float64, n), Weight: make([]float64, n)}
	for k := range n {
		r, th := 2e5*math.Sqrt(0.05+0.95*rnd.Float64()), 2*math.Pi*rnd.Float64()
		d.U[k], d.V[k] = r*math.Cos(th), r*math.Sin(th)
		d.Weight[k] = 1e4
	}
	vis := uv.PredictPoints(nil, d.U, d.V, uv.PrimaryBeam{}, []float64{0.6}, []float64{0.3}, []float64{0.002})
	for k, v := range vis {
		d.Re[k], d.Im[k] = real(v), imag(v)
	}
	path := filepath.Join(dir, "sim.csv")
	if err := uv.WriteTableFile(path, false, d); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestImageCommand(t *testing.T) {
	dir := t.TempDir()
	table := pointTable(t, dir)
	out := filepath.Join(dir, "out")
	var so, se bytes.Buffer
	args := []string{"image", table, "-o", out, "--pixel", "0.1", "--size", "64"}
	if code := runMain(args, &so, &se); code != 0 {
		t.Fatalf("exit %d: %s", code, se.String())
	}
	if !strings.Contains(so.String(), "clean beam") || !strings.Contains(so.String(), "natural") {
		t.Errorf("output: %s", so.String())
	}
	im, err := uv.ReadFITSImage(filepath.Join(out, "sim.dirty.fits"))
	if err != nil {
		t.Fatal(err)
	}
	if im.Grid != (uv.Grid{N: 64, Pixel: 0.1}) || im.Meta.BUnit != "JY/BEAM" || im.Meta.Beam == nil ||
		!im.Meta.HasPhaseCentre || im.Meta.RA != 40 || im.Meta.Dec != -20 {
		t.Errorf("FITS grid %+v meta %+v", im.Grid, im.Meta)
	}
	// The source is at pixel (32 − 6, 32 + 3) = (26, 35), 0.6″ east being
	// 6 pixels toward smaller i; the simulation is noise-free and without a
	// primary beam, so the peak is the flux, 2 mJy (to the NUFFT tolerance).
	best := 0
	for k, v := range im.Data {
		if v > im.Data[best] {
			best = k
		}
	}
	if best%64 != 26 || best/64 != 35 || math.Abs(im.Data[best]-0.002) > 1e-6 {
		t.Errorf("peak %v at (%d, %d), want 0.002 at (26, 35)", im.Data[best], best%64, best/64)
	}
	// One figure of two panels at page width (7 × 3.1 in at plots.DPI),
	// not blank.
	checkPNG(t, filepath.Join(out, "sim.dirty.png"), 7*plots.DPI, int(math.Ceil(3.1*plots.DPI)))
	if _, err := os.Stat(filepath.Join(out, "sim.beam.png")); err == nil {
		t.Error("a separate beam figure was written")
	}
	if _, err := uv.ReadFITSImage(filepath.Join(out, "sim.beam.fits")); err != nil {
		t.Error(err)
	}
	// A non-empty directory is refused without --force, accepted with it.
	if code := runMain(args, &so, &se); code != 1 {
		t.Errorf("rerun without --force: exit %d, want 1", code)
	}
	args = append(args, "--force", "--weighting", "briggs", "--robust", "0.5", "--format", "svg")
	if code := runMain(args, &so, &se); code != 0 {
		t.Errorf("--force briggs svg: exit %d: %s", code, se.String())
	}
	if b, err := os.ReadFile(filepath.Join(out, "sim.dirty.svg")); err != nil || !bytes.Contains(b, []byte("<svg")) {
		t.Errorf("svg figure: %v", err)
	}
	// An existing but empty directory is fine; once written, it is refused.
	fresh := filepath.Join(dir, "fresh")
	if err := os.MkdirAll(fresh, 0o755); err != nil {
		t.Fatal(err)
	}
	if code := runMain([]string{"image", table, "-o", fresh, "--pixel", "0.1", "--size", "64"}, &so, &se); code != 0 {
		t.Fatalf("empty existing directory: exit %d: %s", code, se.String())
	}
	if code := runMain([]string{"image", table, "-o", fresh, "--pixel", "0.1", "--size", "64"}, &so, &se); code != 1 {
		t.Errorf("non-empty directory without --force: exit %d, want 1", code)
	}
}

func TestImageUsage(t *testing.T) {
	dir := t.TempDir()
	table := pointTable(t, dir)
	for _, tc := range []struct {
		name string
		args []string
	}{
		{"no files", []string{"image", "-o", dir}},
		{"no -o", []string{"image", table}},
		{"bad weighting", []string{"image", table, "-o", filepath.Join(dir, "a"), "--weighting", "heavy"}},
		{"robust without briggs", []string{"image", table, "-o", filepath.Join(dir, "b"), "--robust", "1"}},
		{"odd size", []string{"image", table, "-o", filepath.Join(dir, "c"), "--size", "63"}},
		{"bad format", []string{"image", table, "-o", filepath.Join(dir, "d"), "--format", "gif"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var so, se bytes.Buffer
			if code := runMain(tc.args, &so, &se); code != 2 {
				t.Errorf("exit %d, want 2; stderr %s", code, se.String())
			}
		})
	}
	var so, se bytes.Buffer
	if code := runMain([]string{"image", filepath.Join(dir, "missing.csv"), "-o", filepath.Join(dir, "e")}, &so, &se); code != 1 {
		t.Errorf("missing file: exit %d, want 1", code)
	}
}

// checkPNG fails unless path is a PNG of w×h pixels (±1) with more than a
// handful of distinct colours (not blank).
func checkPNG(t *testing.T, path string, w, h int) {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	img, err := png.Decode(fh)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	b := img.Bounds()
	if abs := func(a int) int { return max(a, -a) }; abs(b.Dx()-w) > 1 || abs(b.Dy()-h) > 1 {
		t.Errorf("%s: %d×%d pixels, want %d×%d", path, b.Dx(), b.Dy(), w, h)
	}
	colours := map[[3]uint32]bool{}
	for y := b.Min.Y; y < b.Max.Y && len(colours) < 50; y += 7 {
		for x := b.Min.X; x < b.Max.X; x += 7 {
			r, g, bb, _ := img.At(x, y).RGBA()
			colours[[3]uint32{r, g, bb}] = true
		}
	}
	if len(colours) < 50 {
		t.Errorf("%s: only %d colours: blank figure?", path, len(colours))
	}
}

// Streaming the table gives MakeDirty's image of the table read whole, for
// the weighting that needs two passes, and the default grid is inspect's
// suggestion (uv.Summarize). (Tables of many chunks are compared in
// package uv's TestMakeDirtyStreamMatchesMakeDirty.)
func TestImageStreamsLikeInMemory(t *testing.T) {
	dir := t.TempDir()
	table := pointTable(t, dir)
	d, rep, err := uv.ReadFile(table, uv.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	s := uv.Summarize(d, rep)
	wantGrid, _ := imageGrid(s, 0, 0)
	opt := uv.ImagingOptions{Weighting: uv.Briggs, Robust: 0.5}
	want, err := uv.MakeDirty(d, wantGrid, opt)
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	var so, se bytes.Buffer
	args := []string{"image", table, "-o", out, "--weighting", "briggs", "--robust", "0.5", "--format", "pdf"}
	if code := runMain(args, &so, &se); code != 0 {
		t.Fatalf("exit %d: %s", code, se.String())
	}
	im, err := uv.ReadFITSImage(filepath.Join(out, "sim.dirty.fits"))
	if err != nil {
		t.Fatal(err)
	}
	if im.Grid != wantGrid {
		t.Fatalf("grid %+v, inspect suggests %+v", im.Grid, wantGrid)
	}
	peak := 0.0
	for _, v := range want.Image {
		peak = math.Max(peak, math.Abs(v))
	}
	for k := range want.Image {
		// FITS stores float64 images; the streamed sums differ in order only.
		if math.Abs(im.Data[k]-want.Image[k]) > 1e-12*peak {
			t.Fatalf("pixel %d: %v, in memory %v", k, im.Data[k], want.Image[k])
		}
	}
	if b, err := os.ReadFile(filepath.Join(out, "sim.dirty.pdf")); err != nil || !bytes.HasPrefix(b, []byte("%PDF")) {
		t.Errorf("pdf figure: %v", err)
	}
	if !strings.Contains(so.String(), "1500 rows, 1500 visibilities imaged") {
		t.Errorf("output: %s", so.String())
	}
}

// The figure's image panel puts east on the left and north at the top: a
// bright pixel at the grid's north-east corner (pixel (0, N−1) in FITS
// order, x = +N/2·pixel) lands left of and above one at the south-west
// corner (pixel (N−1, 0)) in the rendered PNG. The top colour also fills
// the top of the colour bar, the same in both renderings, so the centroids
// differ only by the pixel. (The beam ellipse's position angle is pinned
// in package plots, TestBeamPolygonPA and TestBeamRendered.)
func TestImageFigureOrientation(t *testing.T) {
	const n = 16
	beam := make([]float64, n*n)
	beam[n/2*n+n/2] = 1
	locate := func(i, j int) (x, y float64) {
		vals := make([]float64, n*n)
		vals[j*n+i] = 1e-3
		di := &uv.DirtyImage{Grid: uv.Grid{N: n, Pixel: 0.1}, Image: vals, Beam: beam,
			Clean: uv.CleanBeam{BMaj: 0.3, BMin: 0.2, BPA: 30}}
		if x, y := di.Grid.XY(i, j); (i == 0) != (x > 0 && y > 0) {
			t.Fatalf("pixel (%d, %d) at (%g, %g)", i, j, x, y)
		}
		fig, err := imageFigure(di, "t")
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := plots.Render(&buf, fig, 0, 0, "png"); err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(&buf)
		if err != nil {
			t.Fatal(err)
		}
		top := plots.Viridis.At(1)
		var sx, sy, cnt float64
		b := img.Bounds()
		for y := b.Min.Y; y < b.Max.Y; y++ {
			for x := b.Min.X; x < b.Min.X+b.Dx()/2; x++ { // the image panel
				r, g, bb, _ := img.At(x, y).RGBA()
				if uint8(r>>8) == top.R && uint8(g>>8) == top.G && uint8(bb>>8) == top.B {
					sx, sy, cnt = sx+float64(x), sy+float64(y), cnt+1
				}
			}
		}
		if cnt == 0 {
			t.Fatalf("peak colour not found for pixel (%d, %d)", i, j)
		}
		return sx / cnt, sy / cnt
	}
	nex, ney := locate(0, n-1)
	swx, swy := locate(n-1, 0)
	if !(nex < swx) || !(ney < swy) {
		t.Errorf("north-east pixel centroid (%.1f, %.1f), south-west (%.1f, %.1f) px: want east left, north up", nex, ney, swx, swy)
	}
}

// The beam panel zooms to ±10 clean-beam major axes, clamped to 8…N/4
// pixels, and shows the whole grid when that covers it.
func TestBeamZoom(t *testing.T) {
	for _, tc := range []struct {
		name  string
		g     uv.Grid
		major float64
		half  int // pixels either side; −1 for no zoom
	}{
		{"ten majors", uv.Grid{N: 256, Pixel: 0.1}, 0.3, 30},
		{"capped at N/4", uv.Grid{N: 64, Pixel: 0.1}, 0.3, 16},
		{"at least 8", uv.Grid{N: 64, Pixel: 0.1}, 0.02, 8},
		{"no clean beam", uv.Grid{N: 64, Pixel: 0.1}, 0, 16},
		{"small grid whole", uv.Grid{N: 16, Pixel: 0.1}, 0.3, -1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			box := beamZoom(tc.g, plots.Beam{Major: tc.major, Minor: tc.major})
			if tc.half < 0 {
				if box != nil {
					t.Errorf("zoom %+v, want none", *box)
				}
				return
			}
			if box == nil {
				t.Fatal("no zoom")
			}
			// Pixel centres at k·Pixel, |k| ≤ half, lie inside; half + 1 does not.
			in := float64(tc.half) * tc.g.Pixel
			out := float64(tc.half+1) * tc.g.Pixel
			if !(box.XMax > in && box.XMax < out && box.XMin < -in && box.XMin > -out && box.YMax == box.XMax && box.YMin == box.XMin) {
				t.Errorf("zoom %+v, want centres within ±%d pixels", *box, tc.half)
			}
		})
	}
}
