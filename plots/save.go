package plots

import (
	"fmt"
	"image/png"
	"io"
	"path/filepath"
	"strings"

	"deflect/internal/atomicfile"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"
)

// DPI is the resolution of PNG output, in dots per inch: a figure Width
// inches wide is Width·DPI pixels wide (rounded up).
const DPI = 300

// Sizer is implemented by figures that know their natural size.
type Sizer interface {
	Size() (w, h vg.Length)
}

// Format returns the output format for path: format itself, lower-cased,
// when non-empty, else the file extension. It returns an error unless the
// result is "png", "pdf" or "svg".
func Format(path, format string) (string, error) {
	f := strings.ToLower(strings.TrimPrefix(format, "."))
	if f == "" {
		f = strings.ToLower(strings.TrimPrefix(filepath.Ext(path), "."))
		if f == "" {
			return "png", nil
		}
	}
	switch f {
	case "png", "pdf", "svg":
		return f, nil
	}
	return "", fmt.Errorf("plots: %s: unknown figure format %q (want png, pdf or svg)", path, f)
}

// Render writes d, drawn at width × height (vg units: 1 = 1/72 inch), to w
// in format "png", "pdf" or "svg". A zero width or height takes the
// figure's natural size when d is a Sizer, else ColumnWidth square.
func Render(w io.Writer, d Drawer, width, height vg.Length, format string) error {
	width, height = size(d, width, height)
	var c interface {
		vg.CanvasSizer
		io.WriterTo
	}
	switch format {
	case "png":
		ic := vgimg.NewWith(vgimg.UseWH(width, height), vgimg.UseDPI(DPI), vgimg.UseBackgroundColor(white))
		c = pngCanvas{ic}
	case "pdf":
		c = vgpdf.New(width, height)
	case "svg":
		c = vgsvg.New(width, height)
	default:
		return fmt.Errorf("plots: unknown figure format %q (want png, pdf or svg)", format)
	}
	d.Draw(draw.New(c))
	_, err := c.WriteTo(w)
	return err
}

// pngCanvas writes a vgimg canvas as PNG at the fastest deflate level:
// figures are mostly flat colour, so the files stay small and encoding
// takes a fraction of the time of the default level.
type pngCanvas struct {
	*vgimg.Canvas
}

func (p pngCanvas) WriteTo(w io.Writer) (int64, error) {
	cw := &countWriter{w: w}
	enc := png.Encoder{CompressionLevel: png.BestSpeed}
	err := enc.Encode(cw, p.Image())
	return cw.n, err
}

type countWriter struct {
	w io.Writer
	n int64
}

func (c *countWriter) Write(b []byte) (int, error) {
	n, err := c.w.Write(b)
	c.n += int64(n)
	return n, err
}

func size(d Drawer, w, h vg.Length) (vg.Length, vg.Length) {
	if w > 0 && h > 0 {
		return w, h
	}
	if s, ok := d.(Sizer); ok {
		if sw, sh := s.Size(); sw > 0 && sh > 0 {
			return sw, sh
		}
	}
	return ColumnWidth, ColumnWidth
}

// Save renders d to path, atomically (a temporary file renamed into
// place), in the format given or, when format is empty, the one named by
// the extension (PNG when there is none). An existing file is replaced only
// when force is true; otherwise the error wraps atomicfile.ErrExists.
// Width and height are in vg units (1/72 inch); zero takes the figure's
// natural size, as in Render.
func Save(d Drawer, width, height vg.Length, path, format string, force bool) error {
	f, err := Format(path, format)
	if err != nil {
		return err
	}
	return atomicfile.Write(path, force, func(w io.Writer) error {
		return Render(w, d, width, height, f)
	})
}
