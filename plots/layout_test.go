package plots

import (
	"math"
	"testing"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

func TestFitAspect(t *testing.T) {
	// A 4″ × 2″ view must get a data area twice as wide as high, whatever
	// the cell's shape (1% tolerance: axis padding is measured once).
	im := SkyImage{N: 8, Pixel: 0.5, Values: make([]float64, 64)}
	v, err := newView(im, &Box{XMin: -2, XMax: 2, YMin: -1, YMax: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, cell := range [][2]vg.Length{{300, 300}, {500, 150}, {120, 400}} {
		p := skyPlot(v, Viridis, 0, 1, 1, eastLbl, nrthLbl)
		c := draw.New(vgimg.New(cell[0], cell[1]))
		dc := p.DataCanvas(fitAspect(p, c))
		w, h := float64(dc.Max.X-dc.Min.X), float64(dc.Max.Y-dc.Min.Y)
		left, right, bottom, top := v.extent()
		want := (left - right) / (top - bottom)
		if math.Abs(w/h/want-1) > 0.01 {
			t.Errorf("cell %v: data area %.1f × %.1f (ratio %.3f), want ratio %.3f", cell, w, h, w/h, want)
		}
	}
}

func TestColorBarOrientation(t *testing.T) {
	// The top of the bar is the top of the scale.
	ic := vgimg.NewWith(vgimg.UseWH(100, 200), vgimg.UseDPI(72))
	c := draw.New(ic)
	b := &colorBar{cm: Viridis, lo: -1, hi: 3, label: "mJy/beam"}
	b.draw(c, 10, 20, 180)
	img := ic.Image()
	// Device rows run down: y = 180 pt is row 200 − 180 = 20.
	check := func(row int) {
		// Pixel centre at y = 200 − row − ½ pt, on a bar from 20 to 180.
		want := (200 - float64(row) - 0.5 - 20) / 160
		r, g, bb, _ := img.At(13, row).RGBA()
		w := Viridis.At(want)
		if d := max(absDiff(r>>8, uint32(w.R)), absDiff(g>>8, uint32(w.G)), absDiff(bb>>8, uint32(w.B))); d > 12 {
			t.Errorf("row %d: colour (%d, %d, %d), want about %v", row, r>>8, g>>8, bb>>8, w)
		}
	}
	check(24)  // near the top: t ≈ 0.97
	check(176) // near the bottom: t ≈ 0.02
	check(100) // middle
	if w := b.width(); w < barThick+10 || w > 80 {
		t.Errorf("bar width %v pt, implausible", w)
	}
}

func TestUVCoverageMirrors(t *testing.T) {
	sets := []UVSet{{Label: "a", U: []float64{1e3, 2e3}, V: []float64{0, -5e3}}}
	f, err := UVCoverageFigure(sets)
	if err != nil {
		t.Fatal(err)
	}
	p := f.panels[0].d.(imagePanel).p
	if p.X.Min != -p.X.Max || p.Y.Min != -p.Y.Max || p.X.Max < 5.3 {
		t.Errorf("axes %g…%g, %g…%g kλ: want symmetric about 0 beyond 5.39", p.X.Min, p.X.Max, p.Y.Min, p.Y.Max)
	}
	if _, err := UVCoverageFigure([]UVSet{{U: []float64{1}, V: nil}}); err == nil {
		t.Error("u/v length mismatch: no error")
	}
	if _, err := UVCoverageFigure([]UVSet{{U: []float64{math.NaN()}, V: []float64{1}}}); err == nil {
		t.Error("NaN u: no error")
	}
}

func TestFormat(t *testing.T) {
	for _, tc := range []struct {
		path, format, want string
		bad                bool
	}{
		{"a.png", "", "png", false},
		{"a.PDF", "", "pdf", false},
		{"a.png", "SVG", "svg", false},
		{"a", "", "png", false},
		{"a.eps", "", "", true},
		{"a.png", "gif", "", true},
	} {
		got, err := Format(tc.path, tc.format)
		if (err != nil) != tc.bad || got != tc.want {
			t.Errorf("Format(%q, %q) = %q, %v; want %q, error %v", tc.path, tc.format, got, err, tc.want, tc.bad)
		}
	}
}

func TestTitled(t *testing.T) {
	f, err := figureCases[0].build(16)
	if err != nil {
		t.Fatal(err)
	}
	tf := Titled(f, "a title")
	if tf.Width != f.Width || math.Abs(float64(tf.Height-f.Height-0.22*vg.Inch)) > 1e-9 {
		t.Errorf("titled %v × %v from %v × %v, want 0.22 in taller", tf.Width, tf.Height, f.Width, f.Height)
	}
	img, _ := renderPNG(t, tf)
	// The title band (top 0.22 in) holds dark text pixels.
	band := pixelsFor(0.22 * vg.Inch)
	dark := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Min.Y+band; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			if r, g, bb, _ := img.At(x, y).RGBA(); r>>8 < 100 && g>>8 < 100 && bb>>8 < 100 {
				dark++
			}
		}
	}
	if dark < 50 {
		t.Errorf("%d dark pixels in the title band, want text", dark)
	}
}

// A sky panel too narrow for its default x labels gets fewer, and they no
// longer touch; a wide one keeps its labels.
func TestThinXTicks(t *testing.T) {
	im := SkyImage{N: 48, Pixel: 0.03, Values: make([]float64, 48*48)}
	v, _ := newView(im, nil)
	for _, tc := range []struct {
		name    string
		width   vg.Length
		crowded bool // before thinning
	}{
		{"narrow", 1.4 * vg.Inch, true},
		{"wide", 5 * vg.Inch, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := skyPlot(v, Viridis, 0, 1, 1, eastLbl, nrthLbl)
			c := draw.New(vgimg.New(tc.width, tc.width))
			dc := p.DataCanvas(c)
			w := dc.Max.X - dc.Min.X
			if got := xLabelsCrowded(p, w); got != tc.crowded {
				t.Fatalf("crowded before thinning = %v, want %v (fixture no longer exercises the case)", got, tc.crowded)
			}
			before := p.X.Tick.Marker
			thinXTicks(p, c)
			if xLabelsCrowded(p, w) {
				t.Error("labels still crowded after thinning")
			}
			if !tc.crowded && p.X.Tick.Marker != before {
				t.Error("uncrowded labels were thinned")
			}
		})
	}
}
