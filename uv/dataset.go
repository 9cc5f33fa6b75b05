package uv

import "io"

// Meta is the per-table metadata of a visibility dataset. Every field is
// optional in a table; zero values mean "not given".
type Meta struct {
	// Label names the dataset (array, band) in reports and fits.
	Label string
	// Source is the file name the dataset was read from, if any.
	Source string
	// Freq is the reference frequency in Hz, used for rows without a
	// per-row frequency. Zero when unknown.
	Freq float64
	// Dish is the antenna diameter in metres, for the primary beam.
	// Zero means no primary beam.
	Dish float64
	// RA and Dec are the phase centre in degrees, valid when HasPhaseCentre.
	RA, Dec        float64
	HasPhaseCentre bool
	// Sign is the exponent sign of the export: −1 (the convention of this
	// package, also the default when zero) or +1 (conjugated on input).
	// A Dataset always holds the −1 convention: the table readers negate Im
	// for +1 exports and then set Sign to −1.
	Sign int
}

// Dataset is one table of visibilities in columnar form. Row k is the k-th
// element of every non-nil column. Optional columns are nil when the table
// had none.
type Dataset struct {
	Meta Meta

	// U, V are baseline coordinates in wavelengths; W is nil when absent.
	U, V, W []float64
	// Re, Im are the visibility in Jy.
	Re, Im []float64
	// Weight is 1/σ² in Jy⁻², σ per real and per imaginary part.
	Weight []float64
	// Freqs lists the distinct row frequencies in Hz and FreqIndex gives,
	// for each row, the index of its frequency in Freqs. FreqIndex is nil
	// when every row is at Meta.Freq. Use FreqAt to read a row's frequency.
	// Storing an index rather than a float64 per row keeps a dataset near
	// 64 bytes per visibility; Freqs is short (one entry per channel) and
	// is the natural input for grouping rows by frequency.
	Freqs     []float64
	FreqIndex []uint32
	// Time is the time stamp of each row in seconds; nil when absent.
	Time []float64
	// Ant1, Ant2 (antenna numbers, 0 to 32767), Spw (spectral window, 0 to
	// 32767) and Chan (channel) identify a row's baseline and channel; nil
	// when absent.
	Ant1, Ant2 []int16
	Spw        []int16
	Chan       []int32
	// Flag marks rows kept out of fits and images (but counted); nil when
	// the table had no flag column.
	Flag []bool
}

// Len returns the number of rows in d.
func (d *Dataset) Len() int { return len(d.U) }

// Flagged reports whether row k is flagged.
func (d *Dataset) Flagged(k int) bool { return d.Flag != nil && d.Flag[k] }

// FreqAt returns the frequency of row k in Hz: the row's own frequency when
// the table has a freq column, otherwise Meta.Freq.
func (d *Dataset) FreqAt(k int) float64 {
	if d.FreqIndex != nil {
		return d.Freqs[d.FreqIndex[k]]
	}
	return d.Meta.Freq
}

// Bytes returns the memory held by d's row columns in bytes (capacities,
// not lengths), excluding the short Freqs list. Divided by Len it is the
// cost per visibility: 48 bytes for u, v, re, im, weight plus w, and at
// most 71 bytes with every optional column.
func (d *Dataset) Bytes() int {
	return 8*(cap(d.U)+cap(d.V)+cap(d.W)+cap(d.Re)+cap(d.Im)+cap(d.Weight)+cap(d.Time)) +
		4*(cap(d.FreqIndex)+cap(d.Chan)) + 2*(cap(d.Ant1)+cap(d.Ant2)+cap(d.Spw)) + cap(d.Flag)
}

// ChunkReader yields a dataset in pieces so that tables of 10⁸ rows never
// need to be held in memory at once. Next overwrites dst with the next chunk,
// reusing dst's slices where their capacity allows, and returns io.EOF when
// no rows remain. Meta is the same for every chunk.
type ChunkReader interface {
	Next(dst *Dataset) error
}

// Chunks returns a ChunkReader over the rows of an in-memory dataset, at most
// size rows per chunk. The chunks share memory with d.
func (d *Dataset) Chunks(size int) ChunkReader {
	if size <= 0 {
		panic("uv: non-positive chunk size")
	}
	return &memChunks{d: d, size: size}
}

type memChunks struct {
	d    *Dataset
	size int
	pos  int
}

func (c *memChunks) Next(dst *Dataset) error {
	n := c.d.Len()
	if c.pos >= n {
		return io.EOF
	}
	end := min(c.pos+c.size, n)
	*dst = c.d.Slice(c.pos, end)
	c.pos = end
	return nil
}

// Slice returns the rows [i, j) of d as a dataset sharing d's memory.
func (d *Dataset) Slice(i, j int) Dataset {
	s := Dataset{Meta: d.Meta}
	s.U, s.V, s.Re, s.Im, s.Weight = d.U[i:j], d.V[i:j], d.Re[i:j], d.Im[i:j], d.Weight[i:j]
	s.W = sliceOrNil(d.W, i, j)
	s.Freqs = d.Freqs
	s.FreqIndex = sliceOrNil(d.FreqIndex, i, j)
	s.Time = sliceOrNil(d.Time, i, j)
	s.Ant1 = sliceOrNil(d.Ant1, i, j)
	s.Ant2 = sliceOrNil(d.Ant2, i, j)
	s.Spw = sliceOrNil(d.Spw, i, j)
	s.Chan = sliceOrNil(d.Chan, i, j)
	s.Flag = sliceOrNil(d.Flag, i, j)
	return s
}

func sliceOrNil[T any](s []T, i, j int) []T {
	if s == nil {
		return nil
	}
	return s[i:j]
}
