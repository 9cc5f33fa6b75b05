package plots

import (
	"image"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Drawer is anything that draws itself on a canvas: a *plot.Plot or a
// *Figure.
type Drawer interface {
	Draw(c draw.Canvas)
}

// Figure is a composed figure: panels placed at fixed fractions of the
// canvas. Width and Height are its natural size in vg units (1/72 in),
// used by Save when no size is given.
type Figure struct {
	Width, Height vg.Length
	panels        []placed
}

type placed struct {
	x0, y0, x1, y1 float64
	d              Drawer
}

// Size returns the figure's natural width and height.
func (f *Figure) Size() (w, h vg.Length) { return f.Width, f.Height }

// Add places d in the rectangle [x0, x1]×[y0, y1], given as fractions of
// the figure's width and height measured from the lower-left corner.
func (f *Figure) Add(x0, y0, x1, y1 float64, d Drawer) {
	if !(0 <= x0 && x0 < x1 && x1 <= 1 && 0 <= y0 && y0 < y1 && y1 <= 1) {
		panic("plots: panel rectangle outside [0, 1]²")
	}
	f.panels = append(f.panels, placed{x0, y0, x1, y1, d})
}

// Draw implements Drawer: a white background, then each panel.
func (f *Figure) Draw(c draw.Canvas) {
	c.SetColor(white)
	c.Fill(c.Rectangle.Path())
	w, h := c.Max.X-c.Min.X, c.Max.Y-c.Min.Y
	for _, p := range f.panels {
		sub := c
		sub.Rectangle = vg.Rectangle{
			Min: vg.Point{X: c.Min.X + vg.Length(p.x0)*w, Y: c.Min.Y + vg.Length(p.y0)*h},
			Max: vg.Point{X: c.Min.X + vg.Length(p.x1)*w, Y: c.Min.Y + vg.Length(p.y1)*h},
		}
		p.d.Draw(sub)
	}
}

// inset shrinks a canvas by a margin on every side.
func inset(c draw.Canvas, m vg.Length) draw.Canvas {
	c.Min.X += m
	c.Min.Y += m
	c.Max.X -= m
	c.Max.Y -= m
	return c
}

// fitAspect shrinks c, keeping it centred, until p's data area shows equal
// lengths per data unit along x and y.
func fitAspect(p *plot.Plot, c draw.Canvas) draw.Canvas {
	xr, yr := math.Abs(p.X.Max-p.X.Min), math.Abs(p.Y.Max-p.Y.Min)
	if !(xr > 0 && yr > 0) {
		return c
	}
	want := xr / yr
	// Axis sizes barely depend on the canvas, so two passes converge.
	for range 2 {
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

// imagePanel draws a sky-image plot at equal aspect with an optional
// colour bar to its right, aligned with the data area.
type imagePanel struct {
	p   *plot.Plot
	bar *colorBar
}

// panelMargin is the blank border an imagePanel leaves inside its cell.
const panelMargin = vg.Length(2)

// plotCanvas returns the canvas the plot takes inside cell c: c less the
// margin and the colour bar, shrunk to equal aspect.
func (ip imagePanel) plotCanvas(c draw.Canvas) draw.Canvas {
	c = inset(c, panelMargin)
	if ip.bar != nil {
		c.Max.X -= ip.bar.width()
	}
	return fitAspect(ip.p, c)
}

func (ip imagePanel) Draw(c draw.Canvas) {
	pc := ip.plotCanvas(c)
	// Thinned ticks and the hidden title last for this drawing only, so a
	// figure drawn again at another size starts afresh.
	marker, title := ip.p.X.Tick.Marker, ip.p.Title
	thinXTicks(ip.p, pc)
	dc := ip.p.DataCanvas(pc)
	// The plot would centre its title over the whole plot, axis labels
	// included; instead it is drawn untitled below the title's room (the
	// same data area) and the title is written centred over the image.
	top := pc
	if title.Text != "" {
		top.Max.Y -= title.TextStyle.Rectangle(title.Text).Size().Y + title.Padding
		ip.p.Title.Text = ""
	}
	ip.p.Draw(top)
	ip.p.X.Tick.Marker, ip.p.Title = marker, title
	if title.Text != "" {
		sty := title.TextStyle
		w := sty.Width(title.Text)
		x := (dc.Min.X + dc.Max.X) / 2
		x = max(min(x, c.Max.X-panelMargin-w/2), pc.Min.X+w/2)
		c.FillText(sty, vg.Point{X: x, Y: pc.Max.Y + sty.FontExtents().Descent}, title.Text)
	}
	if ip.bar != nil {
		ip.bar.draw(inset(c, panelMargin), dc.Max.X+vg.Length(4), dc.Min.Y, dc.Max.Y)
	}
}

// thinXTicks gives p's x axis fewer labelled ticks (about four, three,
// then two) while the labels, at the width of p's data area in c, would
// come closer than 3 pt to each other. The x axis height does not depend
// on the number of labels, so the layout is unchanged.
func thinXTicks(p *plot.Plot, c draw.Canvas) {
	dc := p.DataCanvas(c)
	w := dc.Max.X - dc.Min.X
	for _, n := range []int{4, 3, 2} {
		if !xLabelsCrowded(p, w) {
			return
		}
		p.X.Tick.Marker = niceTicks{n: n}
	}
}

// xLabelsCrowded reports whether the labelled x ticks of p, drawn across
// a data area w wide, come closer than 3 pt to each other.
func xLabelsCrowded(p *plot.Plot, w vg.Length) bool {
	span := p.X.Max - p.X.Min
	if !(span > 0) || w <= 0 {
		return false
	}
	const gap = vg.Length(3)
	sty := p.X.Tick.Label
	prev := vg.Length(math.Inf(-1))
	// Ticks come in increasing value; on an inverted axis they run right
	// to left, with the same spacings.
	for _, t := range p.X.Tick.Marker.Ticks(p.X.Min, p.X.Max) {
		if t.Label == "" || t.Value < p.X.Min || t.Value > p.X.Max {
			continue
		}
		x := vg.Length((t.Value-p.X.Min)/span) * w
		hw := sty.Width(t.Label) / 2
		if x-hw < prev+gap {
			return true
		}
		prev = x + hw
	}
	return false
}

// colorBar is a vertical colour scale with ticks and a unit label on its
// right.
type colorBar struct {
	cm     *ColorMap
	lo, hi float64
	label  string
}

const barThick = vg.Length(6)

func (b *colorBar) style() text.Style {
	return text.Style{Color: black, Font: fontOf(tickSize), Handler: plot.DefaultTextHandler}
}

func (b *colorBar) ticks() []plot.Tick {
	lo, hi := b.lo, b.hi
	if !(hi > lo) {
		hi = lo + 1
	}
	var ts []plot.Tick
	for _, t := range (minusTicks{}).Ticks(lo, hi) {
		if t.Label != "" && t.Value >= lo && t.Value <= hi {
			ts = append(ts, t)
		}
	}
	return ts
}

// width is the horizontal space the bar needs, including its gap from the
// image, tick labels and the rotated unit label.
func (b *colorBar) width() vg.Length {
	sty := b.style()
	var tw vg.Length
	for _, t := range b.ticks() {
		tw = max(tw, sty.Width(t.Label))
	}
	lsty := sty
	lsty.Font = fontOf(labelSize)
	return vg.Length(4) + barThick + vg.Length(2) + tw + vg.Length(3) + lsty.Height(b.label) + vg.Length(2)
}

func (b *colorBar) draw(c draw.Canvas, x, y0, y1 vg.Length) {
	img := image.NewNRGBA(image.Rect(0, 0, 1, 256))
	for k := range 256 {
		img.SetNRGBA(0, 255-k, b.cm.table[k])
	}
	rect := vg.Rectangle{Min: vg.Point{X: x, Y: y0}, Max: vg.Point{X: x + barThick, Y: y1}}
	c.DrawImage(rect, img)
	c.SetLineStyle(draw.LineStyle{Color: black, Width: axisWidth})
	c.Stroke(rect.Path())
	lo, hi := b.lo, b.hi
	if !(hi > lo) {
		hi = lo + 1
	}
	sty := b.style()
	sty.XAlign = draw.XLeft
	sty.YAlign = draw.YCenter
	var tw vg.Length
	ls := draw.LineStyle{Color: black, Width: axisWidth}
	for _, t := range b.ticks() {
		y := y0 + vg.Length((t.Value-lo)/(hi-lo))*(y1-y0)
		c.StrokeLine2(ls, x+barThick-vg.Length(2), y, x+barThick, y)
		c.FillText(sty, vg.Point{X: x + barThick + vg.Length(2), Y: y}, t.Label)
		tw = max(tw, sty.Width(t.Label))
	}
	lsty := sty
	lsty.Font = fontOf(labelSize)
	lsty.Rotation = math.Pi / 2
	lsty.XAlign = draw.XCenter
	lsty.YAlign = draw.YTop
	c.FillText(lsty, vg.Point{X: x + barThick + vg.Length(2) + tw + vg.Length(3), Y: (y0 + y1) / 2}, b.label)
}

// plotGrid draws a grid of plots whose data areas line up along columns
// and rows. Heights are relative row heights, top row first; nil entries
// leave a cell empty.
type plotGrid struct {
	plots   [][]*plot.Plot
	heights []float64
	widths  []float64
}

func (g plotGrid) Draw(c draw.Canvas) {
	c = inset(c, vg.Length(2))
	rows := len(g.plots)
	cols := 0
	for _, r := range g.plots {
		cols = max(cols, len(r))
	}
	frac := func(ws []float64, n int) []float64 {
		out := make([]float64, n+1)
		tot := 0.0
		for k := range n {
			w := 1.0
			if k < len(ws) {
				w = ws[k]
			}
			tot += w
			out[k+1] = tot
		}
		for k := range out {
			out[k] /= tot
		}
		return out
	}
	fy, fx := frac(g.heights, rows), frac(g.widths, cols)
	W, H := c.Max.X-c.Min.X, c.Max.Y-c.Min.Y
	cells := make([][]draw.Canvas, rows)
	for r := range rows {
		cells[r] = make([]draw.Canvas, cols)
		for k := range cols {
			cc := c
			cc.Min.X = c.Min.X + vg.Length(fx[k])*W
			cc.Max.X = c.Min.X + vg.Length(fx[k+1])*W
			cc.Max.Y = c.Max.Y - vg.Length(fy[r])*H
			cc.Min.Y = c.Max.Y - vg.Length(fy[r+1])*H
			cells[r][k] = cc
		}
	}
	at := func(r, k int) *plot.Plot {
		if k < len(g.plots[r]) {
			return g.plots[r][k]
		}
		return nil
	}
	// Line up data-area edges: in each column the largest left and right
	// axis allowance wins, in each row the largest bottom and top. Axis
	// sizes hardly depend on the cell size, so one measurement suffices.
	type insets struct{ l, r, b, t vg.Length }
	ins := make([][]insets, rows)
	for r := range rows {
		ins[r] = make([]insets, cols)
		for k := range cols {
			if p := at(r, k); p != nil {
				cc := cells[r][k]
				dc := p.DataCanvas(cc)
				ins[r][k] = insets{dc.Min.X - cc.Min.X, cc.Max.X - dc.Max.X, dc.Min.Y - cc.Min.Y, cc.Max.Y - dc.Max.Y}
			}
		}
	}
	for k := range cols {
		var l, rr vg.Length
		for r := range rows {
			l, rr = max(l, ins[r][k].l), max(rr, ins[r][k].r)
		}
		for r := range rows {
			cells[r][k].Min.X += l - ins[r][k].l
			cells[r][k].Max.X -= rr - ins[r][k].r
		}
	}
	for r := range rows {
		var b, t vg.Length
		for k := range cols {
			b, t = max(b, ins[r][k].b), max(t, ins[r][k].t)
		}
		for k := range cols {
			cells[r][k].Min.Y += b - ins[r][k].b
			cells[r][k].Max.Y -= t - ins[r][k].t
		}
	}
	for r := range rows {
		for k := range cols {
			if p := at(r, k); p != nil {
				p.Draw(cells[r][k])
			}
		}
	}
}

// textPanel writes lines of text in a corner of a plot's data area.
type textPanel struct {
	lines []string
	right bool // right-aligned at the top-right corner, else top-left
	col   color.Color
}

func (t textPanel) Plot(c draw.Canvas, _ *plot.Plot) {
	sty := text.Style{Color: t.col, Font: fontOf(legendSize), Handler: plot.DefaultTextHandler, YAlign: draw.YTop}
	x := c.Min.X + vg.Length(3)
	sty.XAlign = draw.XLeft
	if t.right {
		x = c.Max.X - vg.Length(3)
		sty.XAlign = draw.XRight
	}
	y := c.Max.Y - vg.Length(3)
	for _, l := range t.lines {
		c.FillText(sty, vg.Point{X: x, Y: y}, l)
		y -= sty.Height(l) * 1.15
	}
}

// bareLine is a plotter.Line without glyph boxes: its points never widen
// the plot's padding (curves may run outside a zoomed view), and layout
// does not pay for one box per vertex.
type bareLine struct{ *plotter.Line }

func (bareLine) GlyphBoxes(*plot.Plot) []plot.GlyphBox { return nil }

// newLine returns a bareLine through xy in style ls.
func newLine(xy plotter.XYs, ls draw.LineStyle) (bareLine, error) {
	l, err := plotter.NewLine(xy)
	if err != nil {
		return bareLine{}, err
	}
	l.LineStyle = ls
	return bareLine{l}, nil
}

// bareContour is a plotter.Contour without glyph boxes (it reports one per
// grid cell, which makes layout slow at 256² and adds nothing: contours lie
// inside the data range).
type bareContour struct{ *plotter.Contour }

func (bareContour) GlyphBoxes(*plot.Plot) []plot.GlyphBox { return nil }

// keyPanel is a free-standing key: one short line sample and label per
// entry, top-left aligned in its rectangle.
type keyPanel struct {
	entries []keyEntry
}

type keyEntry struct {
	ls    draw.LineStyle
	label string
}

func (k keyPanel) Draw(c draw.Canvas) {
	sty := text.Style{Color: black, Font: fontOf(legendSize), Handler: plot.DefaultTextHandler, XAlign: draw.XLeft, YAlign: draw.YCenter}
	x := c.Min.X + 4
	y := c.Max.Y - 6
	for _, e := range k.entries {
		c.StrokeLine2(e.ls, x, y, x+14, y)
		c.FillText(sty, vg.Point{X: x + 18, Y: y}, e.label)
		y -= sty.Height(e.label) * 1.3
	}
}

// titleBand is the height Titled adds above a figure.
const titleBand = 0.22 * vg.Inch

// Titled returns a figure of fig with a one-line title centred above it,
// in the figures' 8 pt type: as wide as fig and 0.22 in taller, fig kept
// at its natural size below the title.
func Titled(fig *Figure, title string) *Figure {
	w, h := fig.Size()
	out := &Figure{Width: w, Height: h + titleBand}
	f := float64(h / out.Height)
	out.Add(0, 0, 1, f, fig)
	out.Add(0, f, 1, 1, titleText(title))
	return out
}

// titleText draws its text centred in the canvas.
type titleText string

func (t titleText) Draw(c draw.Canvas) {
	sty := text.Style{Color: black, Font: fontOf(labelSize), Handler: plot.DefaultTextHandler,
		XAlign: draw.XCenter, YAlign: draw.YCenter}
	c.FillText(sty, vg.Point{X: (c.Min.X + c.Max.X) / 2, Y: (c.Min.Y + c.Max.Y) / 2}, string(t))
}
