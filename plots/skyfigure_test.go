package plots

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

func TestSkyFigureErrors(t *testing.T) {
	good := SkyImage{N: 4, Pixel: 0.1, Values: make([]float64, 16)}
	for _, tc := range []struct {
		name   string
		panels []SkyPanel
		want   string
	}{
		{"no panels", nil, "no panels"},
		{"no unit", []SkyPanel{{Image: good}}, "Unit"},
		{"short image", []SkyPanel{{Title: "x", Image: SkyImage{N: 4, Pixel: 0.1}, Unit: "Jy"}}, "sky panel 1 (x)"},
		{"second panel", []SkyPanel{{Image: good, Unit: "Jy"}, {Image: good}}, "sky panel 2"},
		{"inverted scale", []SkyPanel{{Image: good, Unit: "Jy", Min: 2, Max: 1}}, "Min < Max"},
		{"empty zoom", []SkyPanel{{Image: good, Unit: "Jy", Zoom: &Box{5, 6, 5, 6}}}, "zoom box"},
		{"NaN curve", []SkyPanel{{Image: good, Unit: "Jy", Curves: []Polyline{{{0, 0}, {math.NaN(), 0}}}}}, "not finite"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := SkyFigure(tc.panels...)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("err = %v, want one mentioning %q", err, tc.want)
			}
		})
	}
}

func TestSkyFigureSize(t *testing.T) {
	im := SkyImage{N: 8, Pixel: 0.1, Values: make([]float64, 64)}
	p := SkyPanel{Image: im, Unit: "Jy/beam"}
	for _, tc := range []struct {
		n    int
		w, h vg.Length
	}{
		// One panel: column width; n panels: page width, 0.8·7/n + 0.3 in.
		{1, ColumnWidth, 2.9 * vg.Inch},
		{2, PageWidth, 3.1 * vg.Inch},
		{4, PageWidth, 1.7 * vg.Inch},
	} {
		ps := make([]SkyPanel, tc.n)
		for k := range ps {
			ps[k] = p
		}
		f, err := SkyFigure(ps...)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(float64(f.Width-tc.w)) > 1e-9 || math.Abs(float64(f.Height-tc.h)) > 1e-9 {
			t.Errorf("%d panels: %v × %v, want %v × %v", tc.n, f.Width, f.Height, tc.w, tc.h)
		}
	}
}

// The panels of a row have plots of one height even when their colour
// bars and tick labels differ in width.
func TestSkyRowAligned(t *testing.T) {
	a := gaussImage(32, 0.1, [][4]float64{{1, 0, 0, 0.3}}, 0, nil)
	b := gaussImage(64, 0.013, [][4]float64{{1234.5, 0, 0, 0.1}}, 0, nil)
	f, err := SkyFigure(
		SkyPanel{Title: "a", Image: a, Unit: "Jy"},
		SkyPanel{Title: "b", Image: b, Unit: "a long unit label", Min: -1000, Max: 2000})
	if err != nil {
		t.Fatal(err)
	}
	row := f.panels[0].d.(skyRow)
	c := draw.New(vgimg.New(f.Width, f.Height))
	cells := row.cells(c)
	var hs []vg.Length
	for k, cc := range cells {
		pc := row[k].plotCanvas(cc)
		hs = append(hs, pc.Max.Y-pc.Min.Y)
		if cc.Min.X < c.Min.X-1e-9 || cc.Max.X > c.Max.X+1e-9 {
			t.Errorf("cell %d outside the figure", k)
		}
	}
	if math.Abs(float64(hs[0]-hs[1])) > 0.01 {
		t.Errorf("plot heights %v, want equal", hs)
	}
}

// TestSkyFigureOrientation renders one panel with a bright pixel in the
// north-east or the south-west corner and compares where the top colour
// lands: the colour bar holds it in the same place both times, so the
// centroids differ only by the pixel, which must be left of and above
// the south-west one when north-east.
func TestSkyFigureOrientation(t *testing.T) {
	const n = 16
	locate := func(i, j int) (x, y float64) {
		im := SkyImage{N: n, Pixel: 0.1, Values: make([]float64, n*n)}
		im.Values[j*n+i] = 1
		f, err := SkyFigure(SkyPanel{Image: im, Unit: "Jy/beam"})
		if err != nil {
			t.Fatal(err)
		}
		img, _ := renderPNG(t, f)
		top := Viridis.At(1)
		var sx, sy, cnt float64
		b := img.Bounds()
		for y := b.Min.Y; y < b.Max.Y; y++ {
			for x := b.Min.X; x < b.Max.X; x++ {
				r, g, bb, _ := img.At(x, y).RGBA()
				if uint8(r>>8) == top.R && uint8(g>>8) == top.G && uint8(bb>>8) == top.B {
					sx, sy, cnt = sx+float64(x), sy+float64(y), cnt+1
				}
			}
		}
		return sx / cnt, sy / cnt
	}
	// FITS order: i = 0 is the east edge, j = N−1 the north edge.
	nex, ney := locate(0, n-1)
	swx, swy := locate(n-1, 0)
	if !(nex < swx) {
		t.Errorf("north-east pixel at column %.1f, south-west at %.1f: want east left", nex, swx)
	}
	if !(ney < swy) {
		t.Errorf("north-east pixel at row %.1f, south-west at %.1f: want north up", ney, swy)
	}
}

// A fixed colour scale is the one drawn, and the centred beam is an
// outline that leaves the centre pixel's colour visible inside it.
func TestSkyPanelScaleAndCentredBeam(t *testing.T) {
	im := SkyImage{N: 16, Pixel: 0.1, Values: make([]float64, 256)}
	for k := range im.Values {
		im.Values[k] = 0.5
	}
	ip, err := SkyPanel{Image: im, Unit: "u", Min: 0, Max: 2, Beam: Beam{Major: 0.6, Minor: 0.4}, BeamAtCentre: true}.panel("t")
	if err != nil {
		t.Fatal(err)
	}
	if ip.bar.lo != 0 || ip.bar.hi != 2 {
		t.Errorf("colour bar %g…%g, want the fixed 0…2", ip.bar.lo, ip.bar.hi)
	}
	f, err := SkyFigure(SkyPanel{Image: im, Unit: "u", Min: 0, Max: 2, Beam: Beam{Major: 0.6, Minor: 0.4}, BeamAtCentre: true})
	if err != nil {
		t.Fatal(err)
	}
	img, _ := renderPNG(t, f)
	want := Viridis.At(0.25)
	// Count the pixels of the value's colour and the white ones: the image
	// is uniform, so white comes only from the outline (and the page).
	count, whiteIn := 0, 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bb, _ := img.At(x, y).RGBA()
			if uint8(r>>8) == want.R && uint8(g>>8) == want.G && uint8(bb>>8) == want.B {
				count++
			}
		}
	}
	// Scan the row through the figure's brightest-value run for a white
	// break (the outline) inside the coloured area.
	for y := b.Min.Y; y < b.Max.Y && whiteIn == 0; y++ {
		inside := false
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bb, _ := img.At(x, y).RGBA()
			isVal := uint8(r>>8) == want.R && uint8(g>>8) == want.G && uint8(bb>>8) == want.B
			isWhite := r>>8 > 245 && g>>8 > 245 && bb>>8 > 245
			if isVal {
				inside = true
			} else if inside && isWhite {
				// Colour resumes after the white: an outline, not the page.
				for x2 := x; x2 < min(b.Max.X, x+40); x2++ {
					r2, g2, b2, _ := img.At(x2, y).RGBA()
					if uint8(r2>>8) == want.R && uint8(g2>>8) == want.G && uint8(b2>>8) == want.B {
						whiteIn++
						break
					}
				}
				if whiteIn > 0 {
					break
				}
			}
		}
	}
	if count < 1000 {
		t.Errorf("only %d pixels of the value's colour %v: fixed scale not used?", count, want)
	}
	if whiteIn == 0 {
		t.Error("no white outline found inside the image")
	}
}
