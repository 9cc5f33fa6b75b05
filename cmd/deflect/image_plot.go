package main

import (
	"fmt"
	"image"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"deflect/plots"
	"deflect/uv"
)

// The figure of "deflect image": the dirty image and the dirty beam side by
// side. Package plots has no single-image sky figure (its DirtyFigure
// wants data, model and residual), so the two panels are drawn here in the
// same look (plots.Viridis, 7–8 pt type, east left, north up, equal
// aspect) and composed and written with plots.Figure and plots.Save.

const (
	figLabelSize = vg.Length(8)
	figTickSize  = vg.Length(7)
	figAxisWidth = vg.Length(0.5)
	eastLabel    = "Δα (arcsec, east left)"
	northLabel   = "Δδ (arcsec)"
)

var (
	figBlack = color.NRGBA{A: 0xff}
	figWhite = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}
)

// plotSky converts an image on a uv.Grid to the plots package's form (the
// same FITS pixel order and offsets).
func plotSky(g uv.Grid, data []float64) plots.SkyImage {
	return plots.SkyImage{N: g.N, Pixel: g.Pixel, X0: g.X0, Y0: g.Y0, Values: data}
}

// imageFigure returns the two-panel figure of a dirty image: the image in
// mJy/beam with the clean-beam ellipse, and the dirty beam (peak 1) with
// the clean beam's half-power ellipse over its main lobe. The beam panel
// shows ±10 clean-beam major axes about the centre (at most the central
// half of the beam grid, at least ±8 pixels), where the sidelobes matter.
func imageFigure(di *uv.DirtyImage, title string) (*plots.Figure, error) {
	g := di.Grid
	beam := plots.Beam{Major: di.Clean.BMaj, Minor: di.Clean.BMin, PA: di.Clean.BPA}
	img := skyPanel{title: title, im: plotSky(g, di.Image), scale: 1e3, unit: "mJy/beam", beam: beam, corner: true}
	bg := uv.Grid{N: g.N, Pixel: g.Pixel}
	half := int(math.Ceil(10 * beam.Major / g.Pixel))
	if !(beam.Major > 0) {
		half = g.N / 4
	}
	bp := skyPanel{title: "dirty beam", im: plotSky(bg, di.Beam), scale: 1, unit: "dirty beam (peak 1)",
		beam: beam, centre: true, half: max(8, min(half, g.N/4))}
	for _, p := range []*skyPanel{&img, &bp} {
		if err := p.prepare(); err != nil {
			return nil, err
		}
	}
	f := &plots.Figure{Width: plots.PageWidth, Height: 3.1 * vg.Inch}
	f.Add(0, 0, 1, 1, panelPair{img, bp})
	return f, nil
}

// skyPanel is one sky image on an east-left, north-up plot with a colour
// bar on its right.
type skyPanel struct {
	title  string
	im     plots.SkyImage
	scale  float64 // display value = scale × image value
	unit   string
	beam   plots.Beam
	corner bool // beam ellipse in the lower-left (south-east) corner
	centre bool // half-power ellipse at the centre, over the main lobe
	half   int  // when > 0, show pixels N/2 − half … N/2 + half only

	i0, i1, j0, j1 int // pixels shown, inclusive
	lo, hi         float64
}

func (s *skyPanel) prepare() error {
	im := s.im
	if im.N <= 0 || len(im.Values) != im.N*im.N || !(im.Pixel > 0) {
		return fmt.Errorf("image figure: %s: %d values on a %d² grid of %g arcsec pixels", s.title, len(im.Values), im.N, im.Pixel)
	}
	s.i0, s.i1, s.j0, s.j1 = 0, im.N-1, 0, im.N-1
	if h := s.half; h > 0 && 2*h+1 < im.N {
		c := im.N / 2
		s.i0, s.i1, s.j0, s.j1 = c-h, c+h, c-h, c+h
	}
	s.lo, s.hi = math.Inf(1), math.Inf(-1)
	for j := s.j0; j <= s.j1; j++ {
		for i := s.i0; i <= s.i1; i++ {
			v := im.Values[j*im.N+i] * s.scale
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				s.lo, s.hi = math.Min(s.lo, v), math.Max(s.hi, v)
			}
		}
	}
	switch {
	case s.lo > s.hi:
		s.lo, s.hi = 0, 1
	case s.lo == s.hi:
		s.lo, s.hi = s.lo-0.5, s.hi+0.5
	}
	return nil
}

// extent returns the outer pixel edges shown, arcsec: east (left, larger
// x), west, south, north.
func (s *skyPanel) extent() (east, west, south, north float64) {
	p := s.im.Pixel
	xe, ys := s.im.XY(s.i0, s.j0)
	xw, yn := s.im.XY(s.i1, s.j1)
	return xe + p/2, xw - p/2, ys - p/2, yn + p/2
}

// raster returns the shown pixels coloured on plots.Viridis, north at the
// top and east at the left, each pixel a k×k block so that the renderer's
// resampling keeps the pixel edges crisp.
func (s *skyPanel) raster() image.Image {
	nc, nr := s.i1-s.i0+1, s.j1-s.j0+1
	k := max(1, min(16, int(math.Ceil(600/float64(max(nc, nr))))))
	img := image.NewNRGBA(image.Rect(0, 0, nc*k, nr*k))
	for r := range nr {
		j := s.j0 + r
		for c := range nc {
			v := s.im.Values[j*s.im.N+s.i0+c] * s.scale
			col := plots.NaNColor
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				col = plots.Viridis.At((v - s.lo) / (s.hi - s.lo))
			}
			y0 := (nr - 1 - r) * k // image rows run from the north edge down
			for dy := range k {
				for dx := range k {
					img.SetNRGBA(c*k+dx, y0+dy, col)
				}
			}
		}
	}
	return img
}

func (s *skyPanel) newPlot() *plot.Plot {
	p := plot.New()
	p.BackgroundColor = nil
	p.Title.Text = s.title
	p.Title.TextStyle.Font.Size = figLabelSize
	p.Title.Padding = 3
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font.Size = figLabelSize
		a.Tick.Label.Font.Size = figTickSize
		a.LineStyle.Width = figAxisWidth
		a.Tick.LineStyle.Width = figAxisWidth
		a.Tick.Length = 3
		a.Label.Padding = 2
		a.Padding = 0
		a.Tick.Marker = roundTicks{}
	}
	p.X.Label.Text = eastLabel
	p.Y.Label.Text = northLabel
	// East (larger x) on the left.
	p.X.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
	east, west, south, north := s.extent()
	p.X.Min, p.X.Max = west, east
	p.Y.Min, p.Y.Max = south, north
	p.Add(rasterPlotter{s: s, img: s.raster()})
	if s.beam.Major > 0 && s.beam.Minor > 0 {
		if s.corner {
			r := s.beam.Major / 2
			pad := 0.04 * (east - west)
			p.Add(ellipse{b: s.beam, x: east - pad - r, y: south + pad + r, fill: true})
		}
		if s.centre {
			p.Add(ellipse{b: s.beam, x: 0, y: 0})
		}
	}
	return p
}

// layout returns the panel's plot and colour bar and the canvas the plot
// takes inside c at equal aspect.
func (s skyPanel) layout(c draw.Canvas) (*plot.Plot, colourBar, draw.Canvas, draw.Canvas) {
	c.Min.X += 2
	c.Min.Y += 2
	c.Max.X -= 2
	c.Max.Y -= 2
	bar := colourBar{lo: s.lo, hi: s.hi, label: s.unit}
	c.Max.X -= bar.width()
	p := s.newPlot()
	return p, bar, c, equalAspect(p, c)
}

// Draw implements plots.Drawer: the plot at equal aspect, the colour bar
// beside its data area.
func (s skyPanel) Draw(c draw.Canvas) {
	p, bar, outer, pc := s.layout(c)
	p.Draw(pc)
	dc := p.DataCanvas(pc)
	bar.draw(outer, dc.Max.X+4, dc.Min.Y, dc.Max.Y)
}

// panelPair draws two panels side by side at the same height, so that
// their titles and axes line up.
type panelPair [2]skyPanel

func (pp panelPair) Draw(c draw.Canvas) {
	halves := [2]draw.Canvas{c, c}
	mid := (c.Min.X + c.Max.X) / 2
	halves[0].Max.X, halves[1].Min.X = mid, mid
	h := c.Max.Y - c.Min.Y
	for k := range pp {
		_, _, _, pc := pp[k].layout(halves[k])
		h = min(h, pc.Max.Y-pc.Min.Y)
	}
	for k := range pp {
		e := (halves[k].Max.Y - halves[k].Min.Y - h) / 2
		halves[k].Min.Y += e
		halves[k].Max.Y -= e
		pp[k].Draw(halves[k])
	}
}

// equalAspect shrinks c, centred, until p's data area shows equal lengths
// per arcsec along x and y.
func equalAspect(p *plot.Plot, c draw.Canvas) draw.Canvas {
	want := math.Abs(p.X.Max-p.X.Min) / math.Abs(p.Y.Max-p.Y.Min)
	for range 2 { // axis sizes barely depend on the canvas
		dc := p.DataCanvas(c)
		w, h := dc.Max.X-dc.Min.X, dc.Max.Y-dc.Min.Y
		if w <= 0 || h <= 0 {
			return c
		}
		if float64(w/h) > want {
			e := (w - h*vg.Length(want)) / 2
			c.Min.X += e
			c.Max.X -= e
		} else {
			e := (h - w/vg.Length(want)) / 2
			c.Min.Y += e
			c.Max.Y -= e
		}
	}
	return c
}

// rasterPlotter draws a skyPanel's raster over its extent.
type rasterPlotter struct {
	s   *skyPanel
	img image.Image
}

func (r rasterPlotter) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	east, west, south, north := r.s.extent()
	x0, x1 := trX(east), trX(west)
	y0, y1 := trY(south), trY(north)
	c.DrawImage(vg.Rectangle{Min: vg.Point{X: min(x0, x1), Y: min(y0, y1)}, Max: vg.Point{X: max(x0, x1), Y: max(y0, y1)}}, r.img)
}

func (r rasterPlotter) DataRange() (xmin, xmax, ymin, ymax float64) {
	east, west, south, north := r.s.extent()
	return west, east, south, north
}

// ellipse draws the half-power ellipse of a beam centred at (x, y) arcsec:
// semi-axes Major/2 and Minor/2, the major axis along (sin PA, cos PA) in
// (x east, y north); filled white with a black outline, or a white outline
// only.
type ellipse struct {
	b    plots.Beam
	x, y float64
	fill bool
}

// points returns n+1 points (x, y) arcsec around the ellipse, the first
// and last at the end of the major axis toward PA.
func (e ellipse) points(n int) [][2]float64 {
	s, co := math.Sincos(e.b.PA * math.Pi / 180)
	a, b := e.b.Major/2, e.b.Minor/2
	pts := make([][2]float64, n+1)
	for k := range pts {
		st, ct := math.Sincos(2 * math.Pi * float64(k) / float64(n))
		u, w := a*ct, b*st // along the major and the minor axis, (cos PA, −sin PA)
		pts[k] = [2]float64{e.x + u*s + w*co, e.y + u*co - w*s}
	}
	return pts
}

func (e ellipse) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	xy := e.points(64)
	pts := make([]vg.Point, len(xy))
	for k, q := range xy {
		pts[k] = vg.Point{X: trX(q[0]), Y: trY(q[1])}
	}
	if e.fill {
		c.FillPolygon(figWhite, pts)
		c.StrokeLines(draw.LineStyle{Color: figBlack, Width: figAxisWidth}, pts)
		return
	}
	c.StrokeLines(draw.LineStyle{Color: figWhite, Width: 0.8}, pts)
}

// colourBar is a vertical plots.Viridis scale with ticks and a rotated unit
// label on its right.
type colourBar struct {
	lo, hi float64
	label  string
}

const colourBarThick = vg.Length(6)

func (b colourBar) style(size vg.Length) text.Style {
	return text.Style{Color: figBlack, Font: font.From(plot.DefaultFont, size), Handler: plot.DefaultTextHandler}
}

func (b colourBar) ticks() []plot.Tick {
	var ts []plot.Tick
	for _, t := range (roundTicks{}).Ticks(b.lo, b.hi) {
		tol := 1e-9 * (b.hi - b.lo)
		if t.Label != "" && t.Value >= b.lo-tol && t.Value <= b.hi+tol {
			ts = append(ts, t)
		}
	}
	return ts
}

func (b colourBar) width() vg.Length {
	sty := b.style(figTickSize)
	var tw vg.Length
	for _, t := range b.ticks() {
		tw = max(tw, sty.Width(t.Label))
	}
	return 4 + colourBarThick + 2 + tw + 3 + b.style(figLabelSize).Height(b.label) + 2
}

func (b colourBar) draw(c draw.Canvas, x, y0, y1 vg.Length) {
	img := image.NewNRGBA(image.Rect(0, 0, 1, 256))
	for k := range 256 {
		img.SetNRGBA(0, 255-k, plots.Viridis.At(float64(k)/255))
	}
	rect := vg.Rectangle{Min: vg.Point{X: x, Y: y0}, Max: vg.Point{X: x + colourBarThick, Y: y1}}
	c.DrawImage(rect, img)
	ls := draw.LineStyle{Color: figBlack, Width: figAxisWidth}
	c.SetLineStyle(ls)
	c.Stroke(rect.Path())
	sty := b.style(figTickSize)
	sty.XAlign, sty.YAlign = draw.XLeft, draw.YCenter
	var tw vg.Length
	for _, t := range b.ticks() {
		y := y0 + vg.Length((t.Value-b.lo)/(b.hi-b.lo))*(y1-y0)
		c.StrokeLine2(ls, x+colourBarThick-2, y, x+colourBarThick, y)
		c.FillText(sty, vg.Point{X: x + colourBarThick + 2, Y: y}, t.Label)
		tw = max(tw, sty.Width(t.Label))
	}
	lsty := b.style(figLabelSize)
	lsty.Rotation = math.Pi / 2
	lsty.XAlign, lsty.YAlign = draw.XCenter, draw.YTop
	c.FillText(lsty, vg.Point{X: x + colourBarThick + 2 + tw + 3, Y: (y0 + y1) / 2}, b.label)
}

// roundTicks labels three to six ticks at the smallest step of 1, 2, 2.5
// or 5 times a power of ten that is at least a sixth of the range, with an
// unlabelled tick halfway between and a typographic minus.
type roundTicks struct{}

func (roundTicks) Ticks(lo, hi float64) []plot.Tick {
	span := hi - lo
	if !(span > 0) || math.IsInf(span, 0) {
		return plot.DefaultTicks{}.Ticks(lo, hi)
	}
	raw := span / 6
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	step := p
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*p >= raw*(1-1e-9) {
			step = m * p
			break
		}
	}
	dec := 0
	for dec < 12 && math.Abs(step*math.Pow(10, float64(dec))-math.Round(step*math.Pow(10, float64(dec)))) > 1e-6 {
		dec++
	}
	var ts []plot.Tick
	for k := math.Ceil(2*lo/step - 1e-9); k*step/2 <= hi+1e-9*span; k++ {
		v := k * step / 2
		t := plot.Tick{Value: v}
		if math.Mod(k, 2) == 0 {
			l := fmt.Sprintf("%.*f", dec, v)
			if strings.Trim(l, "-0.") == "" {
				l = strings.TrimPrefix(l, "-")
			}
			t.Label = strings.Replace(l, "-", "−", 1)
		}
		ts = append(ts, t)
	}
	return ts
}
