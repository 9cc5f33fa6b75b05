package plots

import (
	"errors"
	"fmt"
	"image"
	stddraw "image/draw"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// SkyImage is an N×N image on a square sky grid, in FITS order: the value
// of pixel (i, j) is Values[j·N + i], and its centre lies at the offsets,
// in arcsec,
//
//	x = X0 − (i − N/2)·Pixel   (east)
//	y = Y0 + (j − N/2)·Pixel   (north)
//
// with N/2 rounded down. The units of Values are set by the figure that
// draws it.
type SkyImage struct {
	N      int
	Pixel  float64 // arcsec
	X0, Y0 float64 // arcsec, offset of pixel (N/2, N/2)
	Values []float64
}

// XY returns the offset in arcsec of the centre of pixel (i, j).
func (im SkyImage) XY(i, j int) (x, y float64) {
	h := im.N / 2
	return im.X0 - float64(i-h)*im.Pixel, im.Y0 + float64(j-h)*im.Pixel
}

func (im SkyImage) check(what string) error {
	switch {
	case im.N <= 0:
		return fmt.Errorf("plots: %s: image size N = %d, want > 0", what, im.N)
	case len(im.Values) != im.N*im.N:
		return fmt.Errorf("plots: %s: %d values, want N² = %d", what, len(im.Values), im.N*im.N)
	case !(im.Pixel > 0) || math.IsInf(im.Pixel, 0):
		return fmt.Errorf("plots: %s: pixel size %g arcsec, want > 0", what, im.Pixel)
	}
	return nil
}

// Box is a rectangle on the sky, offsets in arcsec (x east, y north).
type Box struct {
	XMin, XMax, YMin, YMax float64
}

// Beam is an elliptical Gaussian beam: full widths at half maximum in
// arcsec and the position angle of the major axis in degrees east of
// north (0 points up, 90 points left on an east-left display).
type Beam struct {
	Major, Minor float64 // arcsec
	PA           float64 // degrees east of north
}

// Point is a sky offset in arcsec (x east, y north).
type Point struct {
	X, Y float64
}

// Polyline is a curve through sky offsets in arcsec, e.g. a critical curve
// or a caustic; closed curves repeat their first point at the end.
type Polyline []Point

// skyView is the part of an image a panel shows: pixel columns i0…i1 and
// rows j0…j1, inclusive.
type skyView struct {
	im             SkyImage
	i0, i1, j0, j1 int
}

var errEmptyZoom = errors.New("zoom box contains no pixel centre")

func newView(im SkyImage, zoom *Box) (skyView, error) {
	v := skyView{im: im, i0: 0, i1: im.N - 1, j0: 0, j1: im.N - 1}
	if zoom == nil {
		return v, nil
	}
	h := float64(im.N / 2)
	// Pixel centres inside the box: x ∈ [XMin, XMax] ⇔ i ∈ [h − (XMax−X0)/p, h − (XMin−X0)/p].
	v.i0 = max(v.i0, int(math.Ceil(h-(zoom.XMax-im.X0)/im.Pixel-1e-9)))
	v.i1 = min(v.i1, int(math.Floor(h-(zoom.XMin-im.X0)/im.Pixel+1e-9)))
	v.j0 = max(v.j0, int(math.Ceil(h+(zoom.YMin-im.Y0)/im.Pixel-1e-9)))
	v.j1 = min(v.j1, int(math.Floor(h+(zoom.YMax-im.Y0)/im.Pixel+1e-9)))
	if v.i0 > v.i1 || v.j0 > v.j1 {
		return v, fmt.Errorf("plots: %w: box x %g…%g, y %g…%g arcsec", errEmptyZoom, zoom.XMin, zoom.XMax, zoom.YMin, zoom.YMax)
	}
	return v, nil
}

func (v skyView) cols() int { return v.i1 - v.i0 + 1 }
func (v skyView) rows() int { return v.j1 - v.j0 + 1 }

// at returns the value at column c (from the east edge) and row r (from
// the south edge) of the view.
func (v skyView) at(c, r int) float64 { return v.im.Values[(v.j0+r)*v.im.N+v.i0+c] }

// extent returns the outer pixel edges, arcsec: left (east, larger x),
// right, bottom, top.
func (v skyView) extent() (left, right, bottom, top float64) {
	p := v.im.Pixel
	xl, yb := v.im.XY(v.i0, v.j0)
	xr, yt := v.im.XY(v.i1, v.j1)
	return xl + p/2, xr - p/2, yb - p/2, yt + p/2
}

// minMax returns the extreme finite values in the view times scale.
func (v skyView) minMax(scale float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for r := range v.rows() {
		for c := range v.cols() {
			z := v.at(c, r) * scale
			if math.IsNaN(z) || math.IsInf(z, 0) {
				continue
			}
			lo, hi = math.Min(lo, z), math.Max(hi, z)
		}
	}
	if lo > hi {
		return 0, 1
	}
	if lo == hi {
		return lo - 0.5, hi + 0.5
	}
	return lo, hi
}

// rasterFor colours the view: value·scale mapped linearly from lo to hi.
// Each pixel becomes a k×k block, with k chosen so the image has at least
// ~600 pixels a side, so that the renderer's smooth resampling still shows
// crisp pixel edges.
func (v skyView) rasterFor(cm *ColorMap, lo, hi, scale float64) *raster {
	nc, nr := v.cols(), v.rows()
	k := max(1, min(16, int(math.Ceil(600/float64(max(nc, nr))))))
	img := image.NewNRGBA(image.Rect(0, 0, nc*k, nr*k))
	span := hi - lo
	for r := range nr {
		for c := range nc {
			col := cm.At((v.at(c, r)*scale - lo) / span)
			// Image rows run top (north) down.
			y0 := (nr - 1 - r) * k
			for dy := range k {
				off := img.PixOffset(c*k, y0+dy)
				for dx := range k {
					img.Pix[off+4*dx] = col.R
					img.Pix[off+4*dx+1] = col.G
					img.Pix[off+4*dx+2] = col.B
					img.Pix[off+4*dx+3] = col.A
				}
			}
		}
	}
	left, right, bottom, top := v.extent()
	return &raster{img: img, left: left, right: right, bottom: bottom, top: top}
}

// raster is a plotter drawing an image whose left column lies at data x
// = left and right column at x = right (left > right on an east-left axis).
type raster struct {
	img                      image.Image
	left, right, bottom, top float64
}

func (r *raster) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	x0, x1 := trX(r.left), trX(r.right)
	y0, y1 := trY(r.bottom), trY(r.top)
	rect := vg.Rectangle{Min: vg.Point{X: min(x0, x1), Y: min(y0, y1)}, Max: vg.Point{X: max(x0, x1), Y: max(y0, y1)}}
	if dst, dpi, ok := bitmapOf(c); ok {
		blitNearest(dst, dpi, rect, r.img)
		return
	}
	c.DrawImage(rect, r.img)
}

// bitmapOf returns the pixels and resolution behind c when it draws into a
// raster image (vgimg), looking through nested draw.Canvas values.
func bitmapOf(c draw.Canvas) (dst *image.RGBA, dpi float64, ok bool) {
	var vc vg.Canvas = c.Canvas
	for {
		inner, ok := vc.(draw.Canvas)
		if !ok {
			break
		}
		vc = inner.Canvas
	}
	bm, ok := vc.(bitmapCanvas)
	if !ok {
		return nil, 0, false
	}
	dst, ok = bm.Image().(*image.RGBA)
	return dst, bm.DPI(), ok
}

// bitmapCanvas is a raster canvas (vgimg) whose pixels can be written
// directly.
type bitmapCanvas interface {
	Image() stddraw.Image
	DPI() float64
}

// blitNearest copies src, opaque, into the device pixels of dst covered
// by rect (vg units, y up), sampling the nearest source pixel. This is
// both faster than the renderer's smooth resampling and keeps the sky
// pixels crisp. It assumes the canvas carries no transform beyond the
// device scaling, which holds for plot panels.
func blitNearest(dst *image.RGBA, dpi float64, rect vg.Rectangle, src image.Image) {
	s := dpi / vg.Inch.Points()
	H := float64(dst.Bounds().Dy())
	fx0, fx1 := rect.Min.X.Points()*s, rect.Max.X.Points()*s
	fy0, fy1 := H-rect.Max.Y.Points()*s, H-rect.Min.Y.Points()*s // device rows, top down
	sb := src.Bounds()
	sw, sh := sb.Dx(), sb.Dy()
	db := dst.Bounds()
	px0, px1 := max(db.Min.X, int(math.Round(fx0))), min(db.Max.X, int(math.Round(fx1)))
	py0, py1 := max(db.Min.Y, int(math.Round(fy0))), min(db.Max.Y, int(math.Round(fy1)))
	nsrc, _ := src.(*image.NRGBA)
	for py := py0; py < py1; py++ {
		v := min(sh-1, max(0, int((float64(py)+0.5-fy0)/(fy1-fy0)*float64(sh))))
		for px := px0; px < px1; px++ {
			u := min(sw-1, max(0, int((float64(px)+0.5-fx0)/(fx1-fx0)*float64(sw))))
			off := dst.PixOffset(px, py)
			if nsrc != nil {
				so := nsrc.PixOffset(sb.Min.X+u, sb.Min.Y+v)
				copy(dst.Pix[off:off+4], nsrc.Pix[so:so+4])
				dst.Pix[off+3] = 0xff
				continue
			}
			r, g, b, _ := src.At(sb.Min.X+u, sb.Min.Y+v).RGBA()
			dst.Pix[off], dst.Pix[off+1], dst.Pix[off+2], dst.Pix[off+3] = uint8(r>>8), uint8(g>>8), uint8(b>>8), 0xff
		}
	}
}

func (r *raster) DataRange() (xmin, xmax, ymin, ymax float64) {
	return math.Min(r.left, r.right), math.Max(r.left, r.right), r.bottom, r.top
}

// viewGrid exposes a view, values times scale, as a plotter.GridXYZ for
// contouring: column c at x(i0 + c), row r at y(j0 + r).
type viewGrid struct {
	v     skyView
	scale float64
}

func (g viewGrid) Dims() (c, r int)   { return g.v.cols(), g.v.rows() }
func (g viewGrid) Z(c, r int) float64 { return g.v.at(c, r) * g.scale }
func (g viewGrid) X(c int) float64    { x, _ := g.v.im.XY(g.v.i0+c, 0); return x }
func (g viewGrid) Y(r int) float64    { _, y := g.v.im.XY(0, g.v.j0+r); return y }
func (g viewGrid) Min() float64       { lo, _ := g.v.minMax(g.scale); return lo }
func (g viewGrid) Max() float64       { _, hi := g.v.minMax(g.scale); return hi }

// skyPlot returns an east-left, north-up plot showing the view coloured
// with cm from lo to hi (values times scale).
func skyPlot(v skyView, cm *ColorMap, lo, hi, scale float64, xlabel, ylabel string) *plot.Plot {
	p := newPlot(xlabel, ylabel)
	p.X.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
	p.Add(v.rasterFor(cm, lo, hi, scale))
	left, right, bottom, top := v.extent()
	p.X.Min, p.X.Max = right, left
	p.Y.Min, p.Y.Max = bottom, top
	return p
}

// freezeRange resets the axes to the image extent after overlays, which
// may extend them, have been added.
func freezeRange(p *plot.Plot, v skyView) {
	left, right, bottom, top := v.extent()
	p.X.Min, p.X.Max = right, left
	p.Y.Min, p.Y.Max = bottom, top
}

// beamPolygon returns n points on the half-power ellipse of b centred at
// (cx, cy) arcsec: semi-axes Major/2 and Minor/2, the major axis along the
// unit vector (sin PA, cos PA) in (x east, y north).
func beamPolygon(b Beam, cx, cy float64, n int) []Point {
	s, c := math.Sincos(b.PA * math.Pi / 180)
	a, bb := b.Major/2, b.Minor/2
	pts := make([]Point, n+1)
	for k := range n + 1 {
		st, ct := math.Sincos(2 * math.Pi * float64(k) / float64(n))
		u, w := a*ct, bb*st // along major, along minor
		// Minor-axis direction is the major rotated by −90° on the sky:
		// (cos PA, −sin PA).
		pts[k] = Point{X: cx + u*s + w*c, Y: cy + u*c - w*s}
	}
	return pts
}

// beamMark draws the beam ellipse in the lower-left (south-east) corner of
// the data area.
type beamMark struct{ b Beam }

func (m beamMark) corner(p *plot.Plot) (cx, cy float64) {
	r := m.b.Major / 2
	xr, yr := math.Abs(p.X.Max-p.X.Min), p.Y.Max-p.Y.Min
	pad := 0.04 * math.Min(xr, yr)
	return math.Max(p.X.Min, p.X.Max) - pad - r, p.Y.Min + pad + r
}

func (m beamMark) Plot(c draw.Canvas, p *plot.Plot) {
	if !(m.b.Major > 0 && m.b.Minor > 0) {
		return
	}
	trX, trY := p.Transforms(&c)
	cx, cy := m.corner(p)
	poly := beamPolygon(m.b, cx, cy, 64)
	pts := make([]vg.Point, len(poly))
	for k, q := range poly {
		pts[k] = vg.Point{X: trX(q.X), Y: trY(q.Y)}
	}
	c.FillPolygon(white, pts)
	c.StrokeLines(draw.LineStyle{Color: black, Width: axisWidth}, pts)
}

// addCurves overlays polylines in style ls.
func addCurves(p *plot.Plot, curves []Polyline, ls draw.LineStyle) error {
	for k, pl := range curves {
		if len(pl) < 2 {
			continue
		}
		xy := make(plotter.XYs, len(pl))
		for m, q := range pl {
			if math.IsNaN(q.X) || math.IsNaN(q.Y) || math.IsInf(q.X, 0) || math.IsInf(q.Y, 0) {
				return fmt.Errorf("plots: curve %d point %d is not finite (%g, %g)", k, m, q.X, q.Y)
			}
			xy[m] = plotter.XY{X: q.X, Y: q.Y}
		}
		l, err := newLine(xy, ls)
		if err != nil {
			return err
		}
		p.Add(l)
	}
	return nil
}

// addMarks overlays points as glyphs.
func addMarks(p *plot.Plot, pts []Point, g draw.GlyphStyle) error {
	if len(pts) == 0 {
		return nil
	}
	xy := make(plotter.XYs, len(pts))
	for k, q := range pts {
		xy[k] = plotter.XY{X: q.X, Y: q.Y}
	}
	s, err := plotter.NewScatter(xy)
	if err != nil {
		return fmt.Errorf("plots: marked points: %w", err)
	}
	s.GlyphStyle = g
	p.Add(s)
	return nil
}
