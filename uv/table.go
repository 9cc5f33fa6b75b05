package uv

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"unicode/utf8"
)

// The text table format
//
// One visibility per line. Blank lines and lines starting with '#' are
// comments, except metadata lines "# key: value" before the header (keys:
// label, freq in Hz or with kHz/MHz/GHz, dish in m, phase-centre RA_DEG
// DEC_DEG, sign −1 or +1; unknown keys are noted in the report). The first
// other line is the header; its delimiter decides the table's: a comma, a
// tab, or runs of spaces and tabs. Columns are found by name, any case and
// order:
//
//	u, v [, w]                 wavelengths   (or u_m, v_m [, w_m] metres,
//	                                          u_klambda, v_klambda [, w_klambda])
//	re (real), im (imag)       Jy
//	weight (1/σ², Jy⁻²) or sigma (Jy, per real and imaginary part)
//	optional: freq (Hz), time (s), ant1, ant2, spw, chan (integers ≥ 0),
//	          flag (0/1, true/false)
//
// Metres are converted with the row's freq or the "# freq:" line, kλ are
// multiplied by 1000; a w column takes the unit of u and v. Unknown columns
// are ignored and listed once. Values are checked (finite; weight, sigma
// and freq > 0; integers in range) and a bad row is an error naming file,
// line, column and value, or, with ReadOptions.SkipBad, is skipped and
// counted. Flagged rows are kept (with Flag set) and their re, im, weight
// and sigma may be non-finite or ≤ 0, as exports often write them.
// Autocorrelations (u = v = 0) are left out and counted. Quoted fields
// (CSV quoting) are not supported, except around header names.

// DefaultChunkRows is the chunk size of a TableReader when
// ReadOptions.ChunkRows is zero.
const DefaultChunkRows = 1 << 16

// maxLineBytes bounds one line of a text table; longer lines mean the input
// is not a visibility table.
const maxLineBytes = 1 << 20

// ReadOptions control how a visibility table is read. The zero value reads
// strictly, in chunks of DefaultChunkRows, with the table's own metadata.
type ReadOptions struct {
	// SkipBad skips bad rows instead of failing, counting them and keeping
	// the first line numbers in the report.
	SkipBad bool
	// ChunkRows bounds the rows per chunk returned by Next; zero means
	// DefaultChunkRows.
	ChunkRows int
	// Meta overrides the table's metadata field by field: every non-zero
	// field (HasPhaseCentre true for the phase centre) replaces the table's.
	// An overriding Freq also converts u_m, v_m for rows without a freq
	// column; an overriding Sign decides the conjugation.
	Meta Meta
}

// ReadReport accounts for every data row of a table:
//
//	Rows = Used + Flagged + Autocorrelations + Skipped
//
// Used and Flagged rows are in the dataset (flagged ones with Flag set);
// autocorrelations (u = v = 0, flagged or not) and skipped bad rows are not.
type ReadReport struct {
	File string
	// Rows is the number of data lines (not comments, blank lines or the
	// header) or FITS rows.
	Rows, Used, Flagged, Autocorrelations, Skipped int
	// SkippedLines holds the first line numbers of skipped rows, at most 10.
	SkippedLines []int
	// Unknown lists header columns that were ignored.
	Unknown []string
	// Notes says, in sentences, what else the reader did: ignored metadata
	// keys, conjugation, the first skipped row's error.
	Notes []string
}

// TableReader reads a visibility table in chunks. It implements ChunkReader.
// Text tables are parsed in parallel, one block of lines per core, and
// never held whole in memory; FITS tables are decoded whole by fitsio and
// then handed out in chunks.
type TableReader struct {
	name   string
	opt    ReadOptions
	meta   Meta
	proc   rowProc
	lay    *layout
	rep    ReadReport
	closer io.Closer

	br       *bufio.Reader
	line     int // lines consumed so far
	text     []byte
	ends     []int32
	bufs     []*rowBuf
	active   []*rowBuf // the bufs of the block being merged
	relaxed  int
	freqs    []float64
	freqMap  map[float64]uint32
	fits     *fitsSource
	err      error // sticky: returned by every later Next
	noteDone bool
}

// OpenTable opens a visibility table file: text, gzip-compressed text
// (recognised by its magic bytes, whatever the name) or a FITS binary table
// (recognised by "SIMPLE"). Close the reader when done.
func OpenTable(path string, opt ReadOptions) (*TableReader, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	r, err := NewTableReader(f, path, opt)
	if err != nil {
		f.Close()
		return nil, err
	}
	r.closer = f
	return r, nil
}

// NewTableReader reads a visibility table from r; name is used in errors
// and as Meta.Source. It reads the metadata lines and the header and
// returns their errors; rows come from Next. Gzip and FITS input are
// recognised as in OpenTable.
func NewTableReader(r io.Reader, name string, opt ReadOptions) (*TableReader, error) {
	if opt.ChunkRows < 0 {
		panic("uv: negative ReadOptions.ChunkRows")
	}
	if opt.ChunkRows == 0 {
		opt.ChunkRows = DefaultChunkRows
	}
	t := &TableReader{name: name, opt: opt, rep: ReadReport{File: name}}
	br := bufio.NewReaderSize(r, 1<<16)
	magic, _ := br.Peek(2)
	if len(magic) >= 2 && magic[0] == 0x1f && magic[1] == 0x8b {
		gz, err := gzip.NewReader(br)
		if err != nil {
			return nil, &ParseError{File: name, Err: fmt.Errorf("gzip: %w", err)}
		}
		br = bufio.NewReaderSize(gz, 1<<16)
	}
	if m, _ := br.Peek(9); string(m) == "SIMPLE  =" {
		if err := t.openFITS(br); err != nil {
			return nil, err
		}
		return t, nil
	}
	t.br = br
	if err := t.readHeader(); err != nil {
		return nil, err
	}
	return t, nil
}

// readHeader consumes the metadata lines, comments and the header line.
func (t *TableReader) readHeader() error {
	var m Meta
	for {
		line, err := t.readLine()
		if err == io.EOF && line == nil {
			return &ParseError{File: t.name, Err: cause(ErrEmpty, "empty file: no header line")}
		}
		if err != nil && err != io.EOF {
			return err
		}
		t.line++
		if t.line == 1 {
			line = bytes.TrimPrefix(line, []byte("\uFEFF")) // byte-order mark of some spreadsheet exports
		}
		s := trimSpace(bytes.TrimRight(line, "\r\n"))
		if hasControl(s) || (len(s) > 0 && s[0] != '#' && !utf8.Valid(s)) {
			return &ParseError{File: t.name, Line: t.line, Err: cause(ErrBinary, "binary data, not a text table")}
		}
		if len(s) == 0 {
			if err == io.EOF {
				return &ParseError{File: t.name, Err: cause(ErrEmpty, "empty file: no header line")}
			}
			continue
		}
		if s[0] == '#' {
			if key, value, ok := metaLine(s[1:]); ok {
				known, merr := applyMeta(&m, key, value)
				if merr != nil {
					return &ParseError{File: t.name, Line: t.line, Err: merr}
				}
				if !known {
					t.rep.Notes = append(t.rep.Notes, fmt.Sprintf("metadata key %q on line %d ignored", key, t.line))
				}
			}
			if err == io.EOF {
				return &ParseError{File: t.name, Err: cause(ErrEmpty, "empty file: no header line")}
			}
			continue
		}
		t.finishMeta(m)
		lay, herr := parseHeader(t.name, t.line, s, t.meta.Freq > 0)
		if herr != nil {
			return herr
		}
		t.setLayout(lay)
		if err == io.EOF {
			t.err = io.EOF
		}
		return nil
	}
}

// hasControl reports whether b holds ASCII control characters other than
// tab, vertical tab and form feed, which text tables never contain.
func hasControl(b []byte) bool {
	for _, c := range b {
		if c < 0x20 && c != '\t' && c != '\v' && c != '\f' || c == 0x7f {
			return true
		}
	}
	return false
}

// finishMeta applies the overrides and defaults to the table's metadata.
func (t *TableReader) finishMeta(m Meta) {
	overrideMeta(&m, t.opt.Meta)
	if m.Source == "" {
		m.Source = t.name
	}
	if m.Label == "" {
		m.Label = defaultLabel(t.name)
	}
	t.proc.imSign = 1
	if m.Sign == +1 {
		t.proc.imSign = -1
		t.rep.Notes = append(t.rep.Notes, "sign +1 export: visibilities conjugated (im negated) to the −1 convention")
	}
	m.Sign = -1
	t.meta = m
}

func (t *TableReader) setLayout(lay *layout) {
	t.lay = lay
	t.proc = rowProc{file: t.name, lay: lay, freq: t.meta.Freq, imSign: t.proc.imSign, skipBad: t.opt.SkipBad}
	t.rep.Unknown = lay.unknown
	if len(lay.unknown) > 0 {
		t.rep.Notes = append(t.rep.Notes, fmt.Sprintf("columns ignored: %s", strings.Join(lay.unknown, ", ")))
	}
}

// defaultLabel derives a dataset label from a file name: its base name
// without .gz and one further extension.
func defaultLabel(name string) string {
	b := filepath.Base(name)
	b = strings.TrimSuffix(b, ".gz")
	if e := filepath.Ext(b); e != "" && e != b {
		b = strings.TrimSuffix(b, e)
	}
	if b == "." || b == string(filepath.Separator) {
		return ""
	}
	return b
}

// readLine returns the next line with its terminator (none at EOF), or
// nil, io.EOF at the end of input.
func (t *TableReader) readLine() ([]byte, error) {
	line, err := t.br.ReadSlice('\n')
	if err == nil || (err == io.EOF && len(line) > 0) {
		return line, err
	}
	if err == io.EOF {
		return nil, io.EOF
	}
	if err != bufio.ErrBufferFull {
		return nil, t.readErr(err)
	}
	long := append([]byte(nil), line...)
	for err == bufio.ErrBufferFull && len(long) <= maxLineBytes {
		line, err = t.br.ReadSlice('\n')
		long = append(long, line...)
	}
	if len(long) > maxLineBytes {
		return nil, &ParseError{File: t.name, Line: t.line + 1,
			Err: cause(ErrBinary, "line longer than %d bytes: not a visibility table", maxLineBytes)}
	}
	if err != nil && err != io.EOF {
		return nil, t.readErr(err)
	}
	return long, err
}

// readErr reports a failure of the underlying reader (a truncated or
// corrupt gzip stream, an I/O error) at the line being read.
func (t *TableReader) readErr(err error) error {
	return &ParseError{File: t.name, Line: t.line + 1, Err: fmt.Errorf("reading: %w", err)}
}

// Meta returns the dataset's metadata (after overrides; Sign is always −1
// since rows are conjugated on input where the table said +1).
func (t *TableReader) Meta() Meta { return t.meta }

// Report returns the account of the rows read so far; it is complete once
// Next has returned io.EOF.
func (t *TableReader) Report() *ReadReport {
	r := t.rep
	if t.relaxed > 0 {
		r.Notes = append(r.Notes[:len(r.Notes):len(r.Notes)], fmt.Sprintf(
			"%d flagged rows have non-finite values or weight/sigma ≤ 0; allowed because they are flagged", t.relaxed))
	}
	return &r
}

// Close closes the file opened by OpenTable; it is a no-op for readers made
// by NewTableReader.
func (t *TableReader) Close() error {
	if t.closer == nil {
		return nil
	}
	c := t.closer
	t.closer = nil
	return c.Close()
}

// Next reads the next chunk of at most ReadOptions.ChunkRows rows into dst,
// reusing dst's slices where their capacity allows, and returns io.EOF when
// no rows remain. A bad row gives a *ParseError (unless SkipBad), and every
// later call returns the same error.
func (t *TableReader) Next(dst *Dataset) error {
	if t.fits != nil {
		return t.fits.next(t, dst)
	}
	for {
		if t.err != nil {
			return t.err
		}
		if err := t.readBlock(); err != nil {
			t.err = err
			if len(t.ends) == 0 || err != io.EOF {
				return err
			}
		}
		if len(t.ends) == 0 {
			continue
		}
		firstLine := t.line - len(t.ends) + 1
		t.parse(firstLine)
		if err := t.merge(dst); err != nil {
			t.err = err
			return err
		}
		if dst.Len() > 0 {
			return nil
		}
	}
}

// readBlock reads up to ChunkRows whole lines into t.text, recording each
// line's end in t.ends. It returns io.EOF with the last lines.
func (t *TableReader) readBlock() error {
	t.text, t.ends = t.text[:0], t.ends[:0]
	for len(t.ends) < t.opt.ChunkRows {
		line, err := t.readLine()
		if len(line) > 0 {
			t.line++
			t.text = append(t.text, line...)
			t.ends = append(t.ends, int32(len(t.text)))
		}
		if err != nil {
			return err
		}
		if len(t.text) > 1<<30 {
			break
		}
	}
	return nil
}

// parse splits the block among goroutines, one contiguous range of lines
// each, so that the rows come out in file order.
func (t *TableReader) parse(firstLine int) {
	n := len(t.ends)
	p := min(runtime.GOMAXPROCS(0), (n+4095)/4096)
	for len(t.bufs) < p {
		t.bufs = append(t.bufs, &rowBuf{})
	}
	var wg sync.WaitGroup
	for i := range p {
		lo, hi := i*n/p, (i+1)*n/p
		start := 0
		if lo > 0 {
			start = int(t.ends[lo-1])
		}
		b := t.bufs[i]
		b.reset()
		text := t.text[:t.ends[hi-1]]
		ends := t.ends[lo:hi]
		if p == 1 {
			t.proc.parseBlock(text[start:], rebase(ends, start), firstLine+lo, b)
			continue
		}
		wg.Go(func() {
			t.proc.parseBlock(text[start:], rebase(ends, start), firstLine+lo, b)
		})
	}
	wg.Wait()
	t.active = t.bufs[:p]
}

// rebase shifts line ends to be relative to start, in place.
func rebase(ends []int32, start int) []int32 {
	if start == 0 {
		return ends
	}
	for i := range ends {
		ends[i] -= int32(start)
	}
	return ends
}

// merge concatenates the goroutines' rows into dst, in order, and updates
// the report. The first error in file order wins.
func (t *TableReader) merge(dst *Dataset) error {
	n := 0
	for _, b := range t.active {
		if b.err != nil {
			return b.err
		}
		n += len(b.u)
	}
	l := t.lay
	d := Dataset{Meta: t.meta}
	d.U, d.V, d.Re, d.Im, d.Weight = resize(dst.U, n), resize(dst.V, n), resize(dst.Re, n), resize(dst.Im, n), resize(dst.Weight, n)
	if l.has(roleW) {
		d.W = resize(dst.W, n)
	}
	if l.has(roleFreq) {
		d.FreqIndex = resize(dst.FreqIndex, n)
	}
	if l.has(roleTime) {
		d.Time = resize(dst.Time, n)
	}
	if l.has(roleAnt1) {
		d.Ant1 = resize(dst.Ant1, n)
	}
	if l.has(roleAnt2) {
		d.Ant2 = resize(dst.Ant2, n)
	}
	if l.has(roleSpw) {
		d.Spw = resize(dst.Spw, n)
	}
	if l.has(roleChan) {
		d.Chan = resize(dst.Chan, n)
	}
	if l.has(roleFlag) {
		d.Flag = resize(dst.Flag, n)
	}
	k := 0
	for _, b := range t.active {
		m := len(b.u)
		copy(d.U[k:], b.u)
		copy(d.V[k:], b.v)
		copy(d.Re[k:], b.re)
		copy(d.Im[k:], b.im)
		copy(d.Weight[k:], b.wt)
		copyIf(d.W, k, b.w)
		copyIf(d.Time, k, b.time)
		copyIf(d.Ant1, k, b.ant1)
		copyIf(d.Ant2, k, b.ant2)
		copyIf(d.Spw, k, b.spw)
		copyIf(d.Chan, k, b.chn)
		copyIf(d.Flag, k, b.flag)
		if d.FreqIndex != nil {
			t.indexFreqs(d.FreqIndex[k:k+m], b.freq)
		}
		k += m
		t.rep.Rows += b.rows
		t.rep.Flagged += b.flagged
		t.rep.Used += m - b.flagged
		t.rep.Autocorrelations += b.autocorr
		t.rep.Skipped += b.skipped
		t.relaxed += b.relaxed
		for _, ln := range b.skippedLines {
			if len(t.rep.SkippedLines) < maxSkippedLines {
				t.rep.SkippedLines = append(t.rep.SkippedLines, ln)
			}
		}
		if b.firstSkip != nil && !t.noteDone {
			t.noteDone = true
			t.rep.Notes = append(t.rep.Notes, "first skipped row: "+b.firstSkip.Error())
		}
	}
	d.Freqs = t.freqs
	*dst = d
	return nil
}

// indexFreqs stores in idx the index of each frequency in t.freqs, adding
// new ones. Rows usually come in runs of one channel, so the previous
// frequency is tried before the map.
func (t *TableReader) indexFreqs(idx []uint32, freq []float64) {
	if t.freqMap == nil {
		t.freqMap = make(map[float64]uint32)
	}
	last, lastIdx := 0.0, uint32(0)
	for i, f := range freq {
		if f == last && i > 0 {
			idx[i] = lastIdx
			continue
		}
		j, ok := t.freqMap[f]
		if !ok {
			if len(t.freqs) >= 1<<32-1 {
				panic("uv: more than 2³² distinct frequencies")
			}
			j = uint32(len(t.freqs))
			t.freqs = append(t.freqs, f)
			t.freqMap[f] = j
		}
		idx[i], last, lastIdx = j, f, j
	}
}

// resize returns s with length n, reallocating (exactly) when its capacity
// is short.
func resize[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

func copyIf[T any](dst []T, k int, src []T) {
	if dst != nil {
		copy(dst[k:], src)
	}
}

// ReadFile reads a whole visibility table (see OpenTable) into memory.
// The dataset's columns are sized exactly, so it holds Dataset.Bytes
// bytes; while reading, the peak is about twice that.
func ReadFile(path string, opt ReadOptions) (*Dataset, *ReadReport, error) {
	r, err := OpenTable(path, opt)
	if err != nil {
		return nil, nil, err
	}
	defer r.Close()
	d, err := ReadAll(r)
	rep := r.Report()
	if err != nil {
		return nil, rep, err
	}
	if cerr := r.Close(); cerr != nil {
		return nil, rep, cerr
	}
	return d, rep, nil
}

// ReadAll reads the remaining rows of r into one dataset, its columns sized
// exactly.
func ReadAll(r *TableReader) (*Dataset, error) {
	var chunks []*Dataset
	for {
		c := new(Dataset)
		err := r.Next(c)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, err
		}
		chunks = append(chunks, c)
	}
	if len(chunks) == 1 {
		return chunks[0], nil
	}
	d := &Dataset{Meta: r.Meta()}
	if len(chunks) == 0 {
		return d, nil
	}
	d.concat(chunks)
	d.Freqs = r.freqs
	return d, nil
}

// concat sets d's columns to the chunks laid end to end.
func (d *Dataset) concat(chunks []*Dataset) {
	n := 0
	for _, c := range chunks {
		n += c.Len()
	}
	f := chunks[0]
	d.U, d.V, d.Re, d.Im, d.Weight = make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n)
	d.W = makeIf(f.W, n)
	d.FreqIndex = makeIf(f.FreqIndex, n)
	d.Time = makeIf(f.Time, n)
	d.Ant1, d.Ant2, d.Spw = makeIf(f.Ant1, n), makeIf(f.Ant2, n), makeIf(f.Spw, n)
	d.Chan = makeIf(f.Chan, n)
	d.Flag = makeIf(f.Flag, n)
	for i, c := range chunks {
		d.U = append(d.U, c.U...)
		d.V = append(d.V, c.V...)
		d.Re = append(d.Re, c.Re...)
		d.Im = append(d.Im, c.Im...)
		d.Weight = append(d.Weight, c.Weight...)
		d.W = appendIf(d.W, c.W)
		d.FreqIndex = appendIf(d.FreqIndex, c.FreqIndex)
		d.Time = appendIf(d.Time, c.Time)
		d.Ant1, d.Ant2, d.Spw = appendIf(d.Ant1, c.Ant1), appendIf(d.Ant2, c.Ant2), appendIf(d.Spw, c.Spw)
		d.Chan = appendIf(d.Chan, c.Chan)
		d.Flag = appendIf(d.Flag, c.Flag)
		chunks[i] = nil // let the chunk go as soon as it is copied
	}
}

func makeIf[T any](s []T, n int) []T {
	if s == nil {
		return nil
	}
	return make([]T, 0, n)
}

func appendIf[T any](dst, src []T) []T {
	if dst == nil {
		return nil
	}
	return append(dst, src...)
}

// ReadFiles reads several tables, one dataset per file, as the data of one
// fit: each keeps its own label, frequencies, dish, phase centre and
// weights. The options apply to every file. On error it returns the
// datasets read so far and the error, which names the file.
func ReadFiles(paths []string, opt ReadOptions) ([]*Dataset, []*ReadReport, error) {
	var ds []*Dataset
	var reps []*ReadReport
	for _, p := range paths {
		d, rep, err := ReadFile(p, opt)
		if err != nil {
			return ds, reps, err
		}
		ds = append(ds, d)
		reps = append(reps, rep)
	}
	return ds, reps, nil
}
