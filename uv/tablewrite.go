package uv

import (
	"bufio"
	"compress/gzip"
	"errors"
	"io"
	"strconv"
	"strings"

	"deflect/internal/atomicfile"
)

// WriteTable writes d as a comma-separated visibility table: its metadata
// lines, a header and one row per visibility, with the columns d has (u, v,
// w in wavelengths; re, im in Jy; weight in Jy⁻²; freq, time, ant1, ant2,
// spw, chan, flag). Floats are written in the shortest form that reads back
// to the same float64, so WriteTable followed by a read returns d exactly.
// The sign line is always −1, the convention a Dataset holds.
func WriteTable(w io.Writer, d *Dataset) error {
	if hasControl([]byte(d.Meta.Label)) {
		return errors.New("uv: label contains control characters")
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	m := d.Meta
	b := make([]byte, 0, 256)
	if m.Label != "" {
		b = append(append(append(b, "# label: "...), m.Label...), '\n')
	}
	if m.Freq != 0 {
		b = strconv.AppendFloat(append(b, "# freq: "...), m.Freq, 'g', -1, 64)
		b = append(b, '\n')
	}
	if m.Dish != 0 {
		b = strconv.AppendFloat(append(b, "# dish: "...), m.Dish, 'g', -1, 64)
		b = append(b, '\n')
	}
	if m.HasPhaseCentre {
		b = strconv.AppendFloat(append(b, "# phase-centre: "...), m.RA, 'g', -1, 64)
		b = strconv.AppendFloat(append(b, ' '), m.Dec, 'g', -1, 64)
		b = append(b, '\n')
	}
	b = append(b, "# sign: -1\n"...)
	cols := []string{"u", "v"}
	if d.W != nil {
		cols = append(cols, "w")
	}
	cols = append(cols, "re", "im", "weight")
	for _, c := range []struct {
		name string
		has  bool
	}{
		{"freq", d.FreqIndex != nil}, {"time", d.Time != nil},
		{"ant1", d.Ant1 != nil}, {"ant2", d.Ant2 != nil},
		{"spw", d.Spw != nil}, {"chan", d.Chan != nil}, {"flag", d.Flag != nil},
	} {
		if c.has {
			cols = append(cols, c.name)
		}
	}
	b = append(b, strings.Join(cols, ",")...)
	b = append(b, '\n')
	if _, err := bw.Write(b); err != nil {
		return err
	}
	g := func(b []byte, x float64) []byte { return strconv.AppendFloat(append(b, ','), x, 'g', -1, 64) }
	for k := range d.Len() {
		b = strconv.AppendFloat(b[:0], d.U[k], 'g', -1, 64)
		b = g(b, d.V[k])
		if d.W != nil {
			b = g(b, d.W[k])
		}
		b = g(b, d.Re[k])
		b = g(b, d.Im[k])
		b = g(b, d.Weight[k])
		if d.FreqIndex != nil {
			b = g(b, d.FreqAt(k))
		}
		if d.Time != nil {
			b = g(b, d.Time[k])
		}
		if d.Ant1 != nil {
			b = strconv.AppendInt(append(b, ','), int64(d.Ant1[k]), 10)
		}
		if d.Ant2 != nil {
			b = strconv.AppendInt(append(b, ','), int64(d.Ant2[k]), 10)
		}
		if d.Spw != nil {
			b = strconv.AppendInt(append(b, ','), int64(d.Spw[k]), 10)
		}
		if d.Chan != nil {
			b = strconv.AppendInt(append(b, ','), int64(d.Chan[k]), 10)
		}
		if d.Flag != nil {
			f := byte('0')
			if d.Flag[k] {
				f = '1'
			}
			b = append(b, ',', f)
		}
		b = append(b, '\n')
		if _, err := bw.Write(b); err != nil {
			return err
		}
	}
	return bw.Flush()
}

// WriteTableFile writes d to path through a temporary file renamed into
// place, refusing to replace an existing file unless force is set. The form
// follows the name: FITS for .fits, gzip-compressed text for .gz, plain
// comma-separated text otherwise.
func WriteTableFile(path string, force bool, d *Dataset) error {
	lower := strings.ToLower(path)
	return atomicfile.Write(path, force, func(w io.Writer) error {
		switch {
		case strings.HasSuffix(lower, ".fits"):
			return WriteFITSTable(w, d)
		case strings.HasSuffix(lower, ".gz"):
			zw := gzip.NewWriter(w)
			if err := WriteTable(zw, d); err != nil {
				return err
			}
			return zw.Close()
		default:
			return WriteTable(w, d)
		}
	})
}
