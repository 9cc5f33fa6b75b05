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

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

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

// The figure's panels put east on the left and north at the top: the
// raster's top-left pixel is the grid's north-east corner (pixel (0, N−1)
// in FITS order, x = +N/2·pixel), the x axis is inverted, and the axis
// transforms put larger x (east) left of smaller x.
func TestImageFigureOrientation(t *testing.T) {
	const n = 16
	vals := make([]float64, n*n)
	vals[(n-1)*n+0] = 1 // i = 0 (east edge), j = N−1 (north edge)
	s := skyPanel{title: "t", im: plots.SkyImage{N: n, Pixel: 0.1, Values: vals}, scale: 1, unit: "u"}
	if err := s.prepare(); err != nil {
		t.Fatal(err)
	}
	if x, y := s.im.XY(0, n-1); !(x > 0 && y > 0) {
		t.Fatalf("pixel (0, N−1) at (%g, %g), want north-east", x, y)
	}
	img := s.raster()
	top := plots.Viridis.At(1)
	if c := img.At(0, 0); c != top {
		t.Errorf("top-left raster pixel %v, want the peak colour %v", c, top)
	}
	b := img.Bounds()
	if c := img.At(b.Max.X-1, b.Max.Y-1); c == top {
		t.Error("bottom-right raster pixel has the peak colour")
	}
	p := s.newPlot()
	if _, ok := p.X.Scale.(plot.InvertedScale); !ok {
		t.Errorf("x scale %T, want inverted (east left)", p.X.Scale)
	}
	c := draw.New(vgimg.New(300, 300))
	trX, trY := p.Transforms(&c)
	if !(trX(0.5) < trX(-0.5)) || !(trY(0.5) > trY(-0.5)) {
		t.Error("east is not left of west, or north not above south")
	}
	// Beam ellipses: PA is east of north, so PA 0 is tall, PA 90 wide and
	// PA 45 has its major axis toward the north-east (x > 0, y > 0).
	for _, tc := range []struct {
		pa, dx, dy float64 // half extents
		endX, endY float64 // major-axis end
	}{
		{0, 0.05, 0.2, 0, 0.2},
		{90, 0.2, 0.05, 0.2, 0},
		{45, 0.2 * math.Sqrt(0.5) * math.Sqrt(1+1.0/16), 0.2 * math.Sqrt(0.5) * math.Sqrt(1+1.0/16), 0.2 * math.Sqrt(0.5), 0.2 * math.Sqrt(0.5)},
	} {
		pts := ellipse{b: plots.Beam{Major: 0.4, Minor: 0.1, PA: tc.pa}}.points(3600)
		var mx, my float64
		for _, q := range pts {
			mx, my = math.Max(mx, math.Abs(q[0])), math.Max(my, math.Abs(q[1]))
		}
		if math.Abs(mx-tc.dx) > 1e-6 || math.Abs(my-tc.dy) > 1e-6 ||
			math.Abs(pts[0][0]-tc.endX) > 1e-12 || math.Abs(pts[0][1]-tc.endY) > 1e-12 {
			t.Errorf("PA %g: half extents %g, %g (want %g, %g); major end %v (want %g, %g)",
				tc.pa, mx, my, tc.dx, tc.dy, pts[0], tc.endX, tc.endY)
		}
	}
}
