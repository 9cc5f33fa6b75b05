package plots

import (
	"image/color"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Journal widths, for choosing figure sizes: a single column and a full
// two-column page width.
const (
	ColumnWidth = 3.3 * vg.Inch
	PageWidth   = 7 * vg.Inch
)

// Text sizes, chosen to stay legible when a figure is printed at its
// nominal size (7–8 pt is the smallest size most journals accept).
const (
	labelSize  = vg.Length(8)
	tickSize   = vg.Length(7)
	legendSize = vg.Length(7)
	lineWidth  = vg.Length(0.8)
	axisWidth  = vg.Length(0.5)
)

// Qualitative colours for datasets and overlays: the colour-blind-safe set
// of Okabe & Ito, in the order they are handed out.
//
// References:
//   - M. Okabe & K. Ito (2008), "Color universal design (CUD): how to make
//     figures and presentations that are friendly to colorblind people",
//     J*Fly, https://jfly.uni-koeln.de/color/.
var qualitative = []color.NRGBA{
	{R: 0x00, G: 0x72, B: 0xb2, A: 0xff}, // blue
	{R: 0xd5, G: 0x5e, B: 0x00, A: 0xff}, // vermillion
	{R: 0x00, G: 0x9e, B: 0x73, A: 0xff}, // bluish green
	{R: 0xcc, G: 0x79, B: 0xa7, A: 0xff}, // reddish purple
	{R: 0xe6, G: 0x9f, B: 0x00, A: 0xff}, // orange
	{R: 0x56, G: 0xb4, B: 0xe9, A: 0xff}, // sky blue
	{R: 0xf0, G: 0xe4, B: 0x42, A: 0xff}, // yellow
	{R: 0x00, G: 0x00, B: 0x00, A: 0xff}, // black
}

func qcolor(k int) color.Color { return qualitative[k%len(qualitative)] }

var (
	black   = color.NRGBA{A: 0xff}
	white   = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}
	grey    = color.NRGBA{R: 0x70, G: 0x70, B: 0x70, A: 0xff}
	dashed  = []vg.Length{vg.Length(3), vg.Length(2)}
	dotted  = []vg.Length{vg.Length(1), vg.Length(1.5)}
	eastLbl = "Δα (arcsec, east left)"
	nrthLbl = "Δδ (arcsec)"
)

// newPlot returns a plot with this package's look: small type, thin axes,
// no title, axis padding only where data need it.
func newPlot(xlabel, ylabel string) *plot.Plot {
	p := plot.New()
	p.BackgroundColor = nil // Figure.Draw paints the page once
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font.Size = labelSize
		a.Tick.Label.Font.Size = tickSize
		a.LineStyle.Width = axisWidth
		a.Tick.LineStyle.Width = axisWidth
		a.Tick.Length = vg.Length(3)
		a.Label.Padding = vg.Length(2)
		a.Padding = 0
		a.Tick.Marker = minusTicks{}
	}
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	p.Title.TextStyle.Font.Size = labelSize
	p.Title.Padding = vg.Length(3)
	p.Legend.TextStyle.Font.Size = legendSize
	p.Legend.Padding = vg.Length(1)
	p.Legend.ThumbnailWidth = vg.Length(10)
	p.Legend.YOffs = -vg.Length(2)
	p.Legend.XOffs = -vg.Length(2)
	return p
}

// lineStyle is a solid line of the package width in colour c.
func lineStyle(c color.Color) draw.LineStyle {
	return draw.LineStyle{Color: c, Width: lineWidth}
}

// unlabelled keeps tick marks but drops their labels, for axes shared with
// a neighbouring panel.
type unlabelled struct{ plot.Ticker }

func (u unlabelled) Ticks(min, max float64) []plot.Tick {
	ts := u.Ticker.Ticks(min, max)
	for k := range ts {
		ts[k].Label = ""
	}
	return ts
}

// hideTickLabels removes the tick labels and the label of axis a.
func hideTickLabels(a *plot.Axis) {
	a.Tick.Marker = unlabelled{minusTicks{}}
	a.Label.Text = ""
}

// fontOf is the default face at the given size.
func fontOf(size vg.Length) font.Font { return font.From(plot.DefaultFont, size) }

// minusTicks is the package's default ticker: about five labels at round
// steps (niceTicks).
type minusTicks struct{}

func (minusTicks) Ticks(min, max float64) []plot.Tick {
	return niceTicks{n: 5}.Ticks(min, max)
}

// minusSign replaces a leading hyphen by the minus sign U+2212.
func minusSign(s string) string {
	if strings.HasPrefix(s, "-") {
		return "−" + s[1:]
	}
	return s
}
