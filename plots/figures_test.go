package plots

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"image"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"deflect/internal/atomicfile"

	"gonum.org/v1/plot/vg"
)

var regen = flag.Bool("regen", false, "rewrite the golden PNGs in testdata/")

func renderPNG(t testing.TB, d Drawer) (image.Image, []byte) {
	t.Helper()
	var buf bytes.Buffer
	if err := Render(&buf, d, 0, 0, "png"); err != nil {
		t.Fatalf("render: %v", err)
	}
	img, err := png.Decode(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatalf("decode rendered PNG: %v", err)
	}
	return img, buf.Bytes()
}

// pixelsFor is the PNG size vgimg makes for a length at DPI: rounded to
// the nearest pixel.
func pixelsFor(l vg.Length) int { return int(float64(l)/72*DPI + 0.5) }

func TestFiguresRender(t *testing.T) {
	for _, c := range figureCases {
		t.Run(c.name, func(t *testing.T) {
			f, err := c.build(48)
			if err != nil {
				t.Fatal(err)
			}
			img, _ := renderPNG(t, f)
			b := img.Bounds()
			if b.Dx() != pixelsFor(f.Width) || b.Dy() != pixelsFor(f.Height) {
				t.Errorf("PNG is %d×%d px, want %d×%d (%v × %v at %d dpi)", b.Dx(), b.Dy(), pixelsFor(f.Width), pixelsFor(f.Height), f.Width, f.Height, DPI)
			}
			colours := map[uint32]bool{}
			nonWhite := 0
			for y := b.Min.Y; y < b.Max.Y; y++ {
				for x := b.Min.X; x < b.Max.X; x++ {
					r, g, bb, _ := img.At(x, y).RGBA()
					colours[(r>>8)<<16|(g>>8)<<8|bb>>8] = true
					if r>>8 < 250 || g>>8 < 250 || bb>>8 < 250 {
						nonWhite++
					}
				}
			}
			// Any figure has text, axes and data in several colours; a
			// blank or single-colour canvas fails here.
			if len(colours) < 16 {
				t.Errorf("only %d distinct colours", len(colours))
			}
			if frac := float64(nonWhite) / float64(b.Dx()*b.Dy()); frac < 0.01 {
				t.Errorf("only %.4f of pixels are not white", frac)
			}
			for _, format := range []string{"pdf", "svg"} {
				var buf bytes.Buffer
				if err := Render(&buf, f, 0, 0, format); err != nil {
					t.Fatalf("%s: %v", format, err)
				}
				head := map[string]string{"pdf": "%PDF-", "svg": "<?xml"}[format]
				if !bytes.HasPrefix(buf.Bytes(), []byte(head)) || buf.Len() < 1000 {
					t.Errorf("%s output: %d bytes starting %q", format, buf.Len(), buf.Bytes()[:min(16, buf.Len())])
				}
			}
		})
	}
}

// TestGolden compares a few figures with the PNGs in testdata/, rewritten
// by `go test ./plots -regen`. The tolerance allows for anti-aliasing
// differences between platforms: at most 0.5% of pixels may differ by more
// than 24 levels in some channel.
func TestGolden(t *testing.T) {
	for _, name := range []string{"dirty", "visibilities", "corner", "magnification"} {
		t.Run(name, func(t *testing.T) {
			var c figureCase
			for _, fc := range figureCases {
				if fc.name == name {
					c = fc
				}
			}
			f, err := c.build(48)
			if err != nil {
				t.Fatal(err)
			}
			got, raw := renderPNG(t, f)
			path := filepath.Join("testdata", name+".png")
			if *regen {
				if err := os.WriteFile(path, raw, 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			b, err := os.ReadFile(path)
			if err != nil {
				t.Fatalf("%v (run go test ./plots -regen to create it)", err)
			}
			want, err := png.Decode(bytes.NewReader(b))
			if err != nil {
				t.Fatal(err)
			}
			if got.Bounds() != want.Bounds() {
				t.Fatalf("size %v, golden %v", got.Bounds(), want.Bounds())
			}
			diff, n := 0, 0
			bb := got.Bounds()
			for y := bb.Min.Y; y < bb.Max.Y; y++ {
				for x := bb.Min.X; x < bb.Max.X; x++ {
					n++
					r1, g1, b1, _ := got.At(x, y).RGBA()
					r2, g2, b2, _ := want.At(x, y).RGBA()
					d := max(absDiff(r1, r2), absDiff(g1, g2), absDiff(b1, b2)) >> 8
					if d > 24 {
						diff++
					}
				}
			}
			if frac := float64(diff) / float64(n); frac > 0.005 {
				t.Errorf("%.3f%% of pixels differ from %s (tolerance 0.5%%)", 100*frac, path)
			}
		})
	}
}

func absDiff(a, b uint32) uint32 {
	if a > b {
		return a - b
	}
	return b - a
}

// TestOrientationRendered renders a blank source-plane image with one
// bright pixel east, at the centre, west, north or south, and locates it in
// the PNG: east must land left of the centre, west right, north above.
func TestOrientationRendered(t *testing.T) {
	const n = 32
	locate := func(di, dj int) (x, y float64) {
		im := SkyImage{N: n, Pixel: 0.1, Values: make([]float64, n*n)}
		im.Values[(n/2+dj)*n+n/2+di] = 1
		f, err := SourceFigure(SourceImage{Image: im, Unit: "Jy/pixel"})
		if err != nil {
			t.Fatal(err)
		}
		img, _ := renderPNG(t, f)
		top := Viridis.At(1)
		var sx, sy, cnt float64
		b := img.Bounds()
		// The bright pixel is the only top-of-scale area left of the
		// colour bar; the bar occupies the right-most 30% of the figure.
		for y := b.Min.Y; y < b.Max.Y; y++ {
			for x := b.Min.X; x < b.Min.X+b.Dx()*7/10; x++ {
				r, g, bb, _ := img.At(x, y).RGBA()
				if uint8(r>>8) == top.R && uint8(g>>8) == top.G && uint8(bb>>8) == top.B {
					sx += float64(x)
					sy += float64(y)
					cnt++
				}
			}
		}
		if cnt == 0 {
			t.Fatalf("bright pixel at offset (%d, %d) not found in the PNG", di, dj)
		}
		return sx / cnt, sy / cnt
	}
	// Pixel index i grows toward the west: di = −4 is 0.4″ east.
	ex, ey := locate(-4, 0)
	cx, cy := locate(0, 0)
	wx, _ := locate(4, 0)
	_, ny := locate(0, 4)
	_, sy := locate(0, -4)
	if !(ex < cx && cx < wx) {
		t.Errorf("columns east %.1f, centre %.1f, west %.1f: want east left of centre left of west", ex, cx, wx)
	}
	if !(ny < cy && cy < sy) {
		t.Errorf("rows north %.1f, centre %.1f, south %.1f: want north above centre above south", ny, cy, sy)
	}
	if math.Abs(ey-cy) > 1 {
		t.Errorf("east pixel row %.1f differs from centre row %.1f", ey, cy)
	}
}

func TestSave(t *testing.T) {
	f, err := figureCases[0].build(16)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	for _, tc := range []struct {
		name, file, format, magic string
	}{
		{"png by extension", "a.png", "", "\x89PNG"},
		{"pdf by extension", "a.pdf", "", "%PDF-"},
		{"svg by argument", "a.fig", "svg", "<?xml"},
		{"png without extension", "a", "", "\x89PNG"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(dir, tc.file)
			if err := Save(f, 0, 0, path, tc.format, false); err != nil {
				t.Fatal(err)
			}
			b, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.HasPrefix(b, []byte(tc.magic)) {
				t.Errorf("file starts %q, want %q", b[:8], tc.magic)
			}
			if err := Save(f, 0, 0, path, tc.format, false); !errors.Is(err, atomicfile.ErrExists) {
				t.Errorf("second save without force: err = %v, want ErrExists", err)
			}
			if err := Save(f, 200, 100, path, tc.format, true); err != nil {
				t.Errorf("save with force: %v", err)
			}
		})
	}
	t.Run("unknown format", func(t *testing.T) {
		err := Save(f, 0, 0, filepath.Join(dir, "a.jpg"), "", false)
		if err == nil || !strings.Contains(err.Error(), "jpg") {
			t.Errorf("err = %v, want unknown-format error naming jpg", err)
		}
		if _, err := os.Stat(filepath.Join(dir, "a.jpg")); err == nil {
			t.Error("a file was written for an unknown format")
		}
	})
	t.Run("explicit size", func(t *testing.T) {
		img, _ := renderPNG(t, sized{f, 144, 72})
		if b := img.Bounds(); b.Dx() != 600 || b.Dy() != 300 {
			t.Errorf("2 in × 1 in at %d dpi gave %d×%d px", DPI, b.Dx(), b.Dy())
		}
	})
}

// sized forces a figure's natural size, to test Render's size handling.
type sized struct {
	*Figure
	w, h vg.Length
}

func (s sized) Size() (vg.Length, vg.Length) { return s.w, s.h }

func BenchmarkFigures(b *testing.B) {
	for _, n := range []int{64, 256} {
		for _, c := range figureCases {
			b.Run(fmt.Sprintf("%s/%d", c.name, n), func(b *testing.B) {
				b.ReportAllocs()
				var buf bytes.Buffer
				draw := c.prepare(n)
				c0 := cpuTime()
				for b.Loop() {
					f, err := draw()
					if err != nil {
						b.Fatal(err)
					}
					buf.Reset()
					if err := Render(&buf, f, 0, 0, "png"); err != nil {
						b.Fatal(err)
					}
				}
				b.ReportMetric(float64(cpuTime()-c0)/1e6/float64(b.N), "cpu-ms/op")
			})
		}
	}
}

// TestBeamRendered draws the beam on blank dirty images and measures the
// white ellipse in the first panel's data area of the PNG: PA 0 must be
// taller than wide, PA 90 wider than tall, and PA 45 (north-east, so
// up-left on the page) must lean the other way from PA −45.
func TestBeamRendered(t *testing.T) {
	const n = 32
	blank := SkyImage{N: n, Pixel: 0.1, Values: make([]float64, n*n)}
	moments := func(pa float64) (vc, vr, cov float64) {
		d := DirtyImages{Data: blank, Model: blank, Residual: blank, Sigma: 1, Beam: Beam{Major: 0.8, Minor: 0.3, PA: pa}}
		f, err := DirtyFigure(d)
		if err != nil {
			t.Fatal(err)
		}
		img, _ := renderPNG(t, f)
		b := img.Bounds()
		bg := Viridis.At(0.5) // zero on a scale from −0.5 to 0.5
		isBg := func(x, y int) bool {
			r, g, bb, _ := img.At(x, y).RGBA()
			return uint8(r>>8) == bg.R && uint8(g>>8) == bg.G && uint8(bb>>8) == bg.B
		}
		// Data area of the first panel: the columns and rows of the left
		// third mostly in the background colour (the colour bar holds it
		// in a row or two only).
		cols, rows := make([]int, b.Max.X), make([]int, b.Max.Y)
		for y := b.Min.Y; y < b.Max.Y; y++ {
			for x := b.Min.X; x < b.Dx()/3; x++ {
				if isBg(x, y) {
					cols[x]++
					rows[y]++
				}
			}
		}
		span := func(c []int) (lo, hi int) {
			top := slices.Max(c)
			lo, hi = len(c), 0
			for k, v := range c {
				if v > top/2 {
					lo, hi = min(lo, k), max(hi, k)
				}
			}
			return lo, hi
		}
		x0, x1 := span(cols)
		y0, y1 := span(rows)
		var sx, sy, sxx, syy, sxy, cnt float64
		for y := y0 + 2; y < y1-2; y++ {
			for x := x0 + 2; x < x1-2; x++ {
				r, g, bb, _ := img.At(x, y).RGBA()
				if r>>8 > 240 && g>>8 > 240 && bb>>8 > 240 {
					fx, fy := float64(x), float64(y)
					sx, sy, sxx, syy, sxy, cnt = sx+fx, sy+fy, sxx+fx*fx, syy+fy*fy, sxy+fx*fy, cnt+1
				}
			}
		}
		if cnt < 20 {
			t.Fatalf("PA %g: beam not found (%g white pixels)", pa, cnt)
		}
		mx, my := sx/cnt, sy/cnt
		return sxx/cnt - mx*mx, syy/cnt - my*my, sxy/cnt - mx*my
	}
	if vc, vr, _ := moments(0); !(vr > 2*vc) {
		t.Errorf("PA 0: column variance %.1f, row variance %.1f; want taller than wide", vc, vr)
	}
	if vc, vr, _ := moments(90); !(vc > 2*vr) {
		t.Errorf("PA 90: column variance %.1f, row variance %.1f; want wider than tall", vc, vr)
	}
	// Up-left on the page is −column and −row together: positive covariance.
	if _, _, c := moments(45); !(c > 0) {
		t.Errorf("PA 45: column–row covariance %.1f, want > 0 (major axis up-left, toward north-east)", c)
	}
	if _, _, c := moments(-45); !(c < 0) {
		t.Errorf("PA −45: column–row covariance %.1f, want < 0 (major axis up-right, toward north-west)", c)
	}
}
