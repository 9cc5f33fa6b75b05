package plots

import (
	"fmt"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// SourceImage holds a source-plane image for SourceFigure: a parametric
// model evaluated on a grid or a pixelated reconstruction.
type SourceImage struct {
	// Image is on its own source-plane grid; offsets in arcsec, x east.
	Image SkyImage
	// Unit labels the colour bar, e.g. "mJy/pixel"; Scale multiplies the
	// values for display (0 means 1), e.g. 1e3 for Jy → mJy.
	Unit  string
	Scale float64
	// Sigma, when non-nil, is the 1σ uncertainty of a pixelated source, in
	// the units of Image, drawn as a second panel.
	Sigma *SkyImage
	// Caustics are overlaid on every panel.
	Caustics []Polyline
	// Zoom, when set, shows only the pixels whose centres lie in the box.
	Zoom *Box
}

const (
	srcXLbl = "source-plane Δα (arcsec, east left)"
	srcYLbl = "source-plane Δδ (arcsec)"
)

// SourceFigure draws the source-plane image on the viridis scale with the
// caustics in white, east left and north up, at column width; with an
// uncertainty map it adds that panel to the right, at page width.
func SourceFigure(s SourceImage) (*Figure, error) {
	if err := s.Image.check("source image"); err != nil {
		return nil, err
	}
	if s.Unit == "" {
		return nil, fmt.Errorf("plots: source image: empty Unit; the colour bar needs units")
	}
	scale := s.Scale
	if scale == 0 {
		scale = 1
	}
	ims := []SkyImage{s.Image}
	titles := []string{"source"}
	if s.Sigma != nil {
		if err := s.Sigma.check("source uncertainty"); err != nil {
			return nil, err
		}
		ims = append(ims, *s.Sigma)
		titles = append(titles, "source 1σ uncertainty")
	}
	f := &Figure{Width: ColumnWidth, Height: 2.9 * vg.Inch}
	if len(ims) == 2 {
		f.Width = PageWidth * 0.8
	}
	row := make(skyRow, len(ims))
	for k, im := range ims {
		v, err := newView(im, s.Zoom)
		if err != nil {
			return nil, err
		}
		lo, hi := v.minMax(scale)
		p := skyPlot(v, Viridis, lo, hi, scale, srcXLbl, srcYLbl)
		p.Title.Text = titles[k]
		if err := addCurves(p, s.Caustics, draw.LineStyle{Color: white, Width: lineWidth}); err != nil {
			return nil, fmt.Errorf("plots: caustics: %w", err)
		}
		freezeRange(p, v)
		row[k] = imagePanel{p: p, bar: &colorBar{cm: Viridis, lo: lo, hi: hi, label: s.Unit}}
	}
	f.Add(0, 0, 1, 1, row)
	return f, nil
}
