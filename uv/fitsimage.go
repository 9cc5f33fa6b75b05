package uv

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"github.com/astrogo/fitsio"

	"deflect/internal/atomicfile"
)

// SkyImage is a two-dimensional image on a sky grid: Data[j·N + i] is the
// value of pixel (i, j) in the unit Meta.BUnit.
type SkyImage struct {
	Grid Grid
	Meta ImageMeta
	Data []float64
}

// WriteFITSImage writes im as a FITS file with one 64-bit floating-point
// image in the primary HDU and the header of Grid.WCSCards. The file is
// written atomically; an existing file is replaced only when force is true.
func WriteFITSImage(path string, force bool, im *SkyImage) error {
	if len(im.Data) != im.Grid.Len() {
		panic(fmt.Sprintf("uv: image of %d pixels on a %d×%d grid", len(im.Data), im.Grid.N, im.Grid.N))
	}
	return atomicfile.Write(path, force, func(w io.Writer) error {
		return writeFITS(w, []fitsHDU{{
			axes:  []int{im.Grid.N, im.Grid.N},
			cards: im.Grid.WCSCards(im.Meta),
			data:  im.Data,
		}})
	})
}

// ReadFITSImage reads the primary image of a FITS file written by
// WriteFITSImage (or any square RA---SIN/DEC--SIN image with 32- or 64-bit
// floating-point pixels).
func ReadFITSImage(path string) (*SkyImage, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	ff, err := fitsio.Open(f)
	if err != nil {
		return nil, fmt.Errorf("%s: not a readable FITS file: %w", path, err)
	}
	defer ff.Close()
	img, ok := ff.HDU(0).(fitsio.Image)
	if !ok {
		return nil, fmt.Errorf("%s: primary HDU is not an image", path)
	}
	g, m, err := GridFromHeader(img.Header())
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	data, err := readImageData(img)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &SkyImage{Grid: g, Meta: m, Data: data}, nil
}

// readImageData returns the pixels of a floating-point image as float64.
func readImageData(img fitsio.Image) ([]float64, error) {
	axes := img.Header().Axes()
	n := 1
	for _, a := range axes {
		n *= a
	}
	switch bp := img.Header().Bitpix(); bp {
	case -64:
		data := make([]float64, n)
		if err := img.Read(&data); err != nil {
			return nil, err
		}
		return data, nil
	case -32:
		d32 := make([]float32, n)
		if err := img.Read(&d32); err != nil {
			return nil, err
		}
		data := make([]float64, n)
		for i, v := range d32 {
			data[i] = float64(v)
		}
		return data, nil
	default:
		return nil, fmt.Errorf("card BITPIX: %d, want -64 or -32 (floating point)", bp)
	}
}

// fitsHDU is one image HDU to be written by writeFITS.
type fitsHDU struct {
	axes  []int
	cards []fitsio.Card
	data  []float64
}

// writeFITS writes hdus as a FITS file of 64-bit float images, the first as
// the primary HDU. fitsio formats floating-point header values with six
// significant digits, too few for a WCS; writeFITS therefore rewrites every
// floating-point card with the shortest decimal form that reads back to the
// same float64.
func writeFITS(w io.Writer, hdus []fitsHDU) error {
	var buf bytes.Buffer
	f, err := fitsio.Create(&buf)
	if err != nil {
		return err
	}
	for _, h := range hdus {
		img := fitsio.NewImage(-64, h.axes)
		if err := img.Header().Append(h.cards...); err != nil {
			return err
		}
		if err := img.Write(h.data); err != nil {
			return err
		}
		if err := f.Write(img); err != nil {
			return err
		}
	}
	if err := f.Close(); err != nil {
		return err
	}
	b := buf.Bytes()
	off := 0
	for _, h := range hdus {
		floats := make(map[string]fitsio.Card)
		for _, c := range h.cards {
			if v, ok := c.Value.(float64); ok {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					return fmt.Errorf("card %s: non-finite value %v", c.Name, v)
				}
				floats[c.Name] = c
			}
		}
		ncards := 0
		for {
			if off+80 > len(b) {
				return fmt.Errorf("uv: malformed FITS header from fitsio")
			}
			line := b[off : off+80]
			off += 80
			ncards++
			name := strings.TrimSpace(string(line[:8]))
			if name == "END" {
				break
			}
			if c, ok := floats[name]; ok {
				copy(line, exactCard(c))
			}
		}
		off += (2880 - (ncards*80)%2880) % 2880
		size := 8
		for _, a := range h.axes {
			size *= a
		}
		off += size + (2880-size%2880)%2880
	}
	_, err = w.Write(b)
	return err
}

// exactCard formats a floating-point card in 80 columns with a value that
// round-trips float64 exactly.
func exactCard(c fitsio.Card) []byte {
	v := strconv.FormatFloat(c.Value.(float64), 'E', -1, 64)
	s := fmt.Sprintf("%-8s= %20s", c.Name, v)
	if c.Comment != "" {
		s += " / " + c.Comment
	}
	if len(s) > 80 {
		s = s[:80]
	}
	return []byte(fmt.Sprintf("%-80s", s))
}
