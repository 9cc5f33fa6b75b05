package plots

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// SkyPanel is one panel of SkyFigure: a sky image with its own colour bar.
type SkyPanel struct {
	// Title is written above the panel (may be empty).
	Title string
	// Image is the sky image; its values times Scale (0 means 1) are
	// shown, e.g. Scale 1e3 to draw Jy/beam in mJy/beam.
	Image SkyImage
	Scale float64
	// Unit labels the colour bar, e.g. "mJy/beam"; it is required.
	Unit string
	// Map colours the image; nil means Viridis.
	Map *ColorMap
	// Min and Max fix the colour scale, in displayed units (after Scale);
	// when both are zero the scale spans the finite displayed values in
	// view. Values outside saturate; NaN pixels take NaNColor.
	Min, Max float64
	// Beam, when its axes are positive, is drawn filled white with a black
	// outline in the lower-left (south-east) corner; with BeamAtCentre it
	// is drawn instead as a white outline centred on the grid centre
	// (X0, Y0), e.g. over the main lobe of a dirty beam.
	Beam         Beam
	BeamAtCentre bool
	// Curves (critical curves, caustics) are overlaid as white lines and
	// Marks (e.g. image positions) as white crosses, in arcsec.
	Curves []Polyline
	Marks  []Point
	// Zoom, when set, shows only the pixels whose centres lie in the box.
	Zoom *Box
}

// SkyFigure draws one or more sky images side by side, each east left
// and north up at equal aspect with a colour bar labelled with its unit.
// One panel makes a figure of column width; more make a page-wide row
// whose panels share one height, so that titles and axes line up:
//
//	height = 0.8·PageWidth/n + 0.3 in   (n ≥ 2 panels)
//
// Width and Height of the result may be changed before saving.
func SkyFigure(panels ...SkyPanel) (*Figure, error) {
	if len(panels) == 0 {
		return nil, fmt.Errorf("plots: sky figure: no panels")
	}
	row := make(skyRow, len(panels))
	for k, sp := range panels {
		name := fmt.Sprintf("sky panel %d", k+1)
		if sp.Title != "" {
			name = fmt.Sprintf("sky panel %d (%s)", k+1, sp.Title)
		}
		ip, err := sp.panel(name)
		if err != nil {
			return nil, err
		}
		row[k] = ip
	}
	f := &Figure{Width: ColumnWidth, Height: 2.9 * vg.Inch}
	if n := len(panels); n > 1 {
		f.Width = PageWidth
		f.Height = 0.8*PageWidth/vg.Length(n) + 0.3*vg.Inch
	}
	f.Add(0, 0, 1, 1, row)
	return f, nil
}

// panel builds the plot and colour bar of one SkyPanel.
func (sp SkyPanel) panel(name string) (imagePanel, error) {
	if err := sp.Image.check(name); err != nil {
		return imagePanel{}, err
	}
	if sp.Unit == "" {
		return imagePanel{}, fmt.Errorf("plots: %s: empty Unit; the colour bar needs units", name)
	}
	scale := sp.Scale
	if scale == 0 {
		scale = 1
	}
	if math.IsNaN(scale) || math.IsInf(scale, 0) {
		return imagePanel{}, fmt.Errorf("plots: %s: display scale %g, want finite", name, scale)
	}
	cm := sp.Map
	if cm == nil {
		cm = Viridis
	}
	v, err := newView(sp.Image, sp.Zoom)
	if err != nil {
		return imagePanel{}, fmt.Errorf("%w (%s)", err, name)
	}
	lo, hi := sp.Min, sp.Max
	switch {
	case lo == 0 && hi == 0:
		lo, hi = v.minMax(scale)
	case !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0):
		return imagePanel{}, fmt.Errorf("plots: %s: colour scale %g…%g, want finite Min < Max", name, lo, hi)
	}
	p := skyPlot(v, cm, lo, hi, scale, eastLbl, nrthLbl)
	p.Title.Text = sp.Title
	if err := addCurves(p, sp.Curves, draw.LineStyle{Color: white, Width: lineWidth}); err != nil {
		return imagePanel{}, fmt.Errorf("%w (%s)", err, name)
	}
	if err := addMarks(p, sp.Marks, draw.GlyphStyle{Color: white, Radius: 4, Shape: draw.CrossGlyph{}}); err != nil {
		return imagePanel{}, err
	}
	if sp.BeamAtCentre {
		p.Add(beamOutline{b: sp.Beam, x: sp.Image.X0, y: sp.Image.Y0})
	} else {
		p.Add(beamMark{sp.Beam})
	}
	freezeRange(p, v)
	return imagePanel{p: p, bar: &colorBar{cm: cm, lo: lo, hi: hi, label: sp.Unit}}, nil
}

// beamOutline draws a beam's half-power ellipse as a white line centred
// at (x, y) arcsec.
type beamOutline struct {
	b    Beam
	x, y float64
}

func (o beamOutline) Plot(c draw.Canvas, p *plot.Plot) {
	if !(o.b.Major > 0 && o.b.Minor > 0) {
		return
	}
	trX, trY := p.Transforms(&c)
	poly := beamPolygon(o.b, o.x, o.y, 64)
	pts := make([]vg.Point, len(poly))
	for k, q := range poly {
		pts[k] = vg.Point{X: trX(q.X), Y: trY(q.Y)}
	}
	c.StrokeLines(draw.LineStyle{Color: white, Width: lineWidth}, c.ClipLinesXY(pts)...)
}

// skyRow draws image panels side by side in equal shares of the width,
// all at the height of the shortest, centred vertically, so that their
// titles and axes line up.
type skyRow []imagePanel

func (r skyRow) Draw(c draw.Canvas) {
	for k, cc := range r.cells(c) {
		r[k].Draw(cc)
	}
}

// cells returns the canvas each panel is drawn in: an equal share of c's
// width, trimmed top and bottom so that every panel's plot comes out as
// tall as the shortest.
func (r skyRow) cells(c draw.Canvas) []draw.Canvas {
	n := len(r)
	w := (c.Max.X - c.Min.X) / vg.Length(n)
	cells := make([]draw.Canvas, n)
	h := c.Max.Y - c.Min.Y
	for k, ip := range r {
		cc := c
		cc.Min.X = c.Min.X + vg.Length(k)*w
		cc.Max.X = cc.Min.X + w
		cells[k] = cc
		pc := ip.plotCanvas(cc)
		h = min(h, pc.Max.Y-pc.Min.Y)
	}
	for k := range cells {
		// plotCanvas insets its cell by the panel margin on each side.
		if e := (cells[k].Max.Y - cells[k].Min.Y - h - 2*panelMargin) / 2; e > 0 {
			cells[k].Min.Y += e
			cells[k].Max.Y -= e
		}
	}
	return cells
}
