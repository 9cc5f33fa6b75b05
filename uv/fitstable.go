package uv

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"reflect"
	"strconv"
	"strings"

	"github.com/astrogo/fitsio"
)

// FITS tables hold the same columns as text tables, one scalar column per
// quantity with the same names, in the first table extension. The metadata
// lines become header keywords of that extension:
//
//	LABEL   dataset label            FREQ    reference frequency, Hz
//	DISH    antenna diameter, m      SIGN    exponent sign, −1 or +1
//	OBSRA   phase-centre RA, deg     OBSDEC  phase-centre Dec, deg
//
// Errors name the row as the "line" (1-based).
const fitsExtName = "VISIBILITIES"

// fitsSource hands out the rows of a FITS table in chunks.
type fitsSource struct {
	tbl  *fitsio.Table
	rows *fitsio.Rows
	ptrs []any
	// scale and zero are each column's TSCALn and TZEROn (value = raw ·
	// scale + zero, FITS Standard 4.0 sec. 7.3.2); logical marks L columns.
	scale, zero []float64
	logical     []bool
	row         int // rows consumed
	n           int
	buf         rowBuf
}

// openFITS decodes a FITS file and prepares its first table.
func (t *TableReader) openFITS(r io.Reader) error {
	// fitsio decodes the whole file anyway; holding it first lets the
	// declared sizes be checked before fitsio allocates by them.
	raw, err := io.ReadAll(r)
	if err != nil {
		return err
	}
	if err := checkFITSSizes(raw); err != nil {
		return &ParseError{File: t.name, Err: cause(ErrBinary, "FITS: %v", err)}
	}
	f, err := openFITSBytes(raw)
	if err != nil {
		return &ParseError{File: t.name, Err: cause(ErrBinary, "FITS: %v", err)}
	}
	var tbl *fitsio.Table
	for _, h := range f.HDUs() {
		if tb, ok := h.(*fitsio.Table); ok {
			tbl = tb
			break
		}
	}
	if tbl == nil {
		return &ParseError{File: t.name, Err: cause(ErrMissingColumn, "FITS file has no table extension")}
	}
	var m Meta
	hdr := tbl.Header()
	if c := hdr.Get("LABEL"); c != nil {
		s, _ := c.Value.(string)
		m.Label = strings.TrimSpace(s)
	}
	num := func(key string) (float64, bool, error) {
		c := hdr.Get(key)
		if c == nil {
			return 0, false, nil
		}
		x, ok := toFloat(c.Value)
		if !ok || !finite(x) {
			return 0, false, &ParseError{File: t.name, Err: cause(ErrMetadata, "FITS keyword %s = %v is not a number", key, c.Value)}
		}
		return x, true, nil
	}
	for _, kv := range []struct {
		key  string
		meta string
	}{{"FREQ", "freq"}, {"DISH", "dish"}, {"SIGN", "sign"}} {
		x, ok, err := num(kv.key)
		if err != nil {
			return err
		}
		if ok {
			val := fmt.Sprint(x)
			if kv.key == "SIGN" && x > 0 {
				val = "+1"
			}
			if _, err := applyMeta(&m, kv.meta, val); err != nil {
				return &ParseError{File: t.name, Err: err}
			}
		}
	}
	ra, okRA, err := num("OBSRA")
	if err != nil {
		return err
	}
	dec, okDec, err := num("OBSDEC")
	if err != nil {
		return err
	}
	if okRA && okDec {
		if _, err := applyMeta(&m, "phase-centre", fmt.Sprint(ra, " ", dec)); err != nil {
			return &ParseError{File: t.name, Err: err}
		}
	}
	t.finishMeta(m)
	names := make([]string, tbl.NumCols())
	for i, c := range tbl.Cols() {
		names[i] = c.Name
	}
	lay, err := newLayout(t.name, 0, names, ',', t.meta.Freq > 0)
	if err != nil {
		return err
	}
	t.setLayout(lay)
	src := &fitsSource{tbl: tbl, n: int(tbl.NumRows())}
	for i, c := range tbl.Cols() {
		typ := c.Type()
		if typ == nil || typ.Size() > 1<<16 {
			return &ParseError{File: t.name, Column: i + 1, Field: c.Name, Err: cause(ErrNotNumber, "unsupported column format %q", c.Format)}
		}
		if lay.role(i) != roleNone && typ.Kind() != reflect.Bool {
			if _, ok := toFloat(reflect.Zero(typ).Interface()); !ok {
				return &ParseError{File: t.name, Column: i + 1, Field: c.Name,
					Err: cause(ErrNotNumber, "column format %q is not a scalar number", c.Format)}
			}
		}
		if typ.Kind() == reflect.Bool {
			// fitsio reads any non-zero byte of a logical column as true,
			// including the standard 'F'; read the byte and decode it here.
			src.ptrs = append(src.ptrs, new(uint8))
		} else {
			src.ptrs = append(src.ptrs, reflect.New(typ).Interface())
		}
		scale, zero := c.Bscale, c.Bzero
		if scale == 0 {
			scale = 1 // TSCALn = 0 is invalid; older fitsio output wrote it
		}
		src.scale = append(src.scale, scale)
		src.zero = append(src.zero, zero)
		src.logical = append(src.logical, typ.Kind() == reflect.Bool)
	}
	if src.n > 0 {
		src.rows, err = tbl.Read(0, int64(src.n))
		if err != nil {
			return &ParseError{File: t.name, Err: fmt.Errorf("FITS: %w", err)}
		}
	}
	t.fits = src
	return nil
}

// openFITSBytes decodes a FITS file held in memory. fitsio panics on some
// malformed headers (type assertions on card values); such a file is
// reported as an error, not a crash.
func openFITSBytes(raw []byte) (f *fitsio.File, err error) {
	defer func() {
		if p := recover(); p != nil {
			f, err = nil, fmt.Errorf("malformed header (%v)", p)
		}
	}()
	return fitsio.Open(bytes.NewReader(raw))
}

// checkFITSSizes walks the HDUs of a FITS file and checks that the data
// each header declares, |BITPIX|/8 · GCOUNT · (PCOUNT + NAXIS1 ⋯ NAXISn)
// bytes (FITS Standard 4.0, sec. 4.4.1), fits in the file.
//
// References:
//
//	IAU FITS Working Group 2016, Definition of the Flexible Image
//	Transport System, version 4.0, sec. 4.4.1, eqs. 1 and 2.
func checkFITSSizes(raw []byte) error {
	const block, card = 2880, 80
	pos := 0
	for hdu := 0; pos < len(raw); hdu++ {
		keys := map[string]int64{"GCOUNT": 1}
		end := false
		for !end {
			if pos+block > len(raw) {
				return fmt.Errorf("HDU %d: header truncated", hdu)
			}
			for c := pos; c < pos+block; c += card {
				line := string(raw[c : c+card])
				key := strings.TrimSpace(line[:8])
				if key == "END" {
					end = true
					break
				}
				if line[8:10] != "= " {
					continue
				}
				v := line[10:]
				if i := strings.IndexByte(v, '/'); i >= 0 {
					v = v[:i]
				}
				if n, err := strconv.ParseInt(strings.TrimSpace(v), 10, 64); err == nil {
					keys[key] = n
				}
			}
			pos += block
		}
		bitpix, naxis := keys["BITPIX"], keys["NAXIS"]
		if naxis < 0 || naxis > 999 {
			return fmt.Errorf("HDU %d: NAXIS = %d", hdu, naxis)
		}
		size := int64(0)
		if naxis > 0 {
			size = 1
			for i := int64(1); i <= naxis; i++ {
				n := keys["NAXIS"+strconv.FormatInt(i, 10)]
				if n < 0 || (n > 0 && size > math.MaxInt32/n) {
					return fmt.Errorf("HDU %d: NAXIS%d = %d out of range", hdu, i, n)
				}
				size *= n
			}
		}
		pc, gc := keys["PCOUNT"], keys["GCOUNT"]
		if bitpix == 0 || pc < 0 || gc < 0 || pc > math.MaxInt32 || gc > 1<<16 {
			return fmt.Errorf("HDU %d: BITPIX %d, PCOUNT %d, GCOUNT %d out of range", hdu, bitpix, pc, gc)
		}
		nbytes := abs64(bitpix) / 8 * gc * (pc + size)
		if nbytes > int64(len(raw)-pos) {
			return fmt.Errorf("HDU %d declares %d bytes of data, the file has %d after its header", hdu, nbytes, len(raw)-pos)
		}
		pos += int((nbytes + block - 1) / block * block)
	}
	return nil
}

func abs64(x int64) int64 {
	if x < 0 {
		return -x
	}
	return x
}

// role returns the role of column i.
func (l *layout) role(i int) role {
	for r, c := range l.col {
		if c == i {
			return role(r)
		}
	}
	return roleNone
}

// next reads the next chunk of FITS rows into dst.
func (s *fitsSource) next(t *TableReader, dst *Dataset) error {
	for {
		if t.err != nil {
			return t.err
		}
		if s.row >= s.n {
			t.err = io.EOF
			return io.EOF
		}
		b := &s.buf
		b.reset()
		var rv rowVals
		for end := min(s.row+t.opt.ChunkRows, s.n); s.row < end; {
			if !s.rows.Next() {
				t.err = &ParseError{File: t.name, Line: s.row + 1, Err: fmt.Errorf("FITS: row missing: %v", s.rows.Err())}
				return t.err
			}
			s.row++
			b.rows++
			err := s.scan(t, &rv)
			if err == nil {
				err = t.proc.add(&rv, s.row, b)
			}
			if err != nil && !t.proc.bad(b, s.row, err) {
				break
			}
		}
		t.active = []*rowBuf{b}
		if err := t.merge(dst); err != nil {
			t.err = err
			return err
		}
		if dst.Len() > 0 {
			return nil
		}
	}
}

// scan reads the current row's values into rv.
func (s *fitsSource) scan(t *TableReader, rv *rowVals) error {
	if err := s.rows.Scan(s.ptrs...); err != nil {
		return &ParseError{File: t.name, Line: s.row, Err: fmt.Errorf("FITS: %w", err)}
	}
	l := t.lay
	for r := roleU; r < nRoles; r++ {
		c := l.col[r]
		if c < 0 {
			continue
		}
		v := reflect.ValueOf(s.ptrs[c]).Elem().Interface()
		if s.logical[c] {
			// FITS logical: 'T', 'F', or 0 for undefined (read as false);
			// 1 is accepted from writers that store booleans as bytes.
			b := v.(uint8)
			if r != roleFlag || (b != 'T' && b != 'F' && b != 0 && b != 1) {
				return t.proc.fieldErr(s.row, r, cause(ErrFlagValue, "logical byte %q is not T or F", b))
			}
			rv.flag = b == 'T' || b == 1
			continue
		}
		x, ok := toFloat(v)
		if !ok {
			return t.proc.fieldErr(s.row, r, cause(ErrNotNumber, "%v is not a number", v))
		}
		if s.scale[c] != 1 || s.zero[c] != 0 {
			x = x*s.scale[c] + s.zero[c]
		}
		if r == roleFlag {
			if x != 0 && x != 1 {
				return t.proc.fieldErr(s.row, r, cause(ErrFlagValue, "%v is not 0, 1, true or false", x))
			}
			rv.flag = x == 1
			continue
		}
		if r >= roleAnt1 {
			max := 32767.0
			if r == roleChan {
				max = 1<<31 - 1
			}
			if x != math.Trunc(x) || x < 0 || x > max {
				return t.proc.fieldErr(s.row, r, cause(ErrInteger, "%v is not an integer from 0 to %v", v, max))
			}
			rv.i[r] = int64(x)
			continue
		}
		rv.f[r] = x
	}
	return nil
}

// toFloat converts a FITS scalar to float64.
func toFloat(v any) (float64, bool) {
	switch x := v.(type) {
	case float64:
		return x, true
	case float32:
		return float64(x), true
	case int:
		return float64(x), true
	case int64:
		return float64(x), true
	case int32:
		return float64(x), true
	case int16:
		return float64(x), true
	case int8:
		return float64(x), true
	case uint8:
		return float64(x), true
	case uint16:
		return float64(x), true
	case uint32:
		return float64(x), true
	case uint64:
		return float64(x), true
	}
	return 0, false
}

// ReadFITSTable reads a whole FITS visibility table from r; see ReadAll.
func ReadFITSTable(r io.Reader, name string, opt ReadOptions) (*Dataset, *ReadReport, error) {
	tr, err := NewTableReader(r, name, opt)
	if err != nil {
		return nil, nil, err
	}
	if tr.fits == nil {
		return nil, nil, &ParseError{File: name, Err: cause(ErrBinary, "not a FITS file")}
	}
	d, err := ReadAll(tr)
	return d, tr.Report(), err
}

// WriteFITSTable writes d as a FITS file: an empty primary HDU and a binary
// table extension named VISIBILITIES with the columns d has (u, v, w in
// wavelengths, re, im in Jy, weight in Jy⁻², freq in Hz, time in s, ant1,
// ant2, spw, chan, flag) and its metadata as keywords. Every value is
// stored in its in-memory type, so a read gives d back exactly.
func WriteFITSTable(w io.Writer, d *Dataset) error {
	if !printableASCII(d.Meta.Label) {
		return errors.New("uv: FITS table: label must be printable ASCII")
	}
	var buf bytes.Buffer
	if err := writeFITSTable(&buf, d); err != nil {
		return err
	}
	// fitsio writes real keyword values with 6 significant digits (%G);
	// rewrite them with the shortest exact form.
	m := d.Meta
	exact := map[string]float64{}
	if m.Freq != 0 {
		exact["FREQ"] = m.Freq
	}
	if m.Dish != 0 {
		exact["DISH"] = m.Dish
	}
	if m.HasPhaseCentre {
		exact["OBSRA"], exact["OBSDEC"] = m.RA, m.Dec
	}
	raw := buf.Bytes()
	if err := patchFITSReals(raw, exact); err != nil {
		return err
	}
	_, err := w.Write(raw)
	return err
}

// patchFITSReals rewrites, in the first extension's header, the value of
// each keyword in values as the shortest decimal that reads back exactly
// (FITS free-format real, FITS Standard 4.0 sec. 4.2.4), keeping its
// comment where it fits in the 80-character card.
func patchFITSReals(raw []byte, values map[string]float64) error {
	const block, card = 2880, 80
	pos, hdu := 0, 0
	for pos+block <= len(raw) && hdu < 2 {
		end := false
		for c := pos; c < pos+block && !end; c += card {
			line := raw[c : c+card]
			key := strings.TrimSpace(string(line[:8]))
			if key == "END" {
				end = true
				break
			}
			x, ok := values[key]
			if !ok || hdu != 1 {
				continue
			}
			val := strconv.FormatFloat(x, 'G', -1, 64)
			if !strings.ContainsAny(val, ".E") {
				val += ".0"
			}
			comment := ""
			if i := bytes.Index(line[10:], []byte(" / ")); i >= 0 {
				comment = strings.TrimSpace(string(line[10+i+3:]))
			}
			s := fmt.Sprintf("%-8s= %20s / %s", key, val, comment)
			if len(s) > card {
				s = s[:card]
			}
			copy(line, fmt.Sprintf("%-80s", s))
			delete(values, key)
		}
		pos += block
		if end {
			// Skip the data of this HDU: the extension's size comes from
			// its header, but only HDU 0 (no data) precedes the table.
			hdu++
		}
	}
	if len(values) > 0 {
		return fmt.Errorf("uv: FITS table: keywords %v not found to rewrite", values)
	}
	return nil
}

func writeFITSTable(w io.Writer, d *Dataset) error {
	f, err := fitsio.Create(w)
	if err != nil {
		return err
	}
	phdu, err := fitsio.NewPrimaryHDU(nil)
	if err != nil {
		return err
	}
	if err := f.Write(phdu); err != nil {
		return err
	}
	type col struct {
		name, format, unit string
		ptr                any
		set                func(k int)
	}
	var (
		fv    [8]float64
		a1    int16
		a2    int16
		sp    int16
		ch    int32
		fl    uint8
		cols  []col
		nextF = 0
	)
	addF := func(name, unit string, s []float64) {
		p := &fv[nextF]
		nextF++
		cols = append(cols, col{name, "D", unit, p, func(k int) { *p = s[k] }})
	}
	addF("u", "lambda", d.U)
	addF("v", "lambda", d.V)
	if d.W != nil {
		addF("w", "lambda", d.W)
	}
	addF("re", "Jy", d.Re)
	addF("im", "Jy", d.Im)
	addF("weight", "Jy-2", d.Weight)
	if d.FreqIndex != nil {
		p := &fv[nextF]
		nextF++
		cols = append(cols, col{"freq", "D", "Hz", p, func(k int) { *p = d.FreqAt(k) }})
	}
	if d.Time != nil {
		addF("time", "s", d.Time)
	}
	if d.Ant1 != nil {
		cols = append(cols, col{"ant1", "I", "", &a1, func(k int) { a1 = d.Ant1[k] }})
	}
	if d.Ant2 != nil {
		cols = append(cols, col{"ant2", "I", "", &a2, func(k int) { a2 = d.Ant2[k] }})
	}
	if d.Spw != nil {
		cols = append(cols, col{"spw", "I", "", &sp, func(k int) { sp = d.Spw[k] }})
	}
	if d.Chan != nil {
		cols = append(cols, col{"chan", "J", "", &ch, func(k int) { ch = d.Chan[k] }})
	}
	if d.Flag != nil {
		// fitsio writes bool as 0/1 bytes; the standard logical is 'T'/'F'.
		cols = append(cols, col{"flag", "L", "", &fl, func(k int) {
			fl = 'F'
			if d.Flag[k] {
				fl = 'T'
			}
		}})
	}
	fcols := make([]fitsio.Column, len(cols))
	ptrs := make([]any, len(cols))
	for i, c := range cols {
		fcols[i] = fitsio.Column{Name: c.name, Format: c.format, Unit: c.unit, Bscale: 1}
		ptrs[i] = c.ptr
	}
	tbl, err := fitsio.NewTable(fitsExtName, fcols, fitsio.BINARY_TBL)
	if err != nil {
		return err
	}
	defer tbl.Close()
	m := d.Meta
	var cards []fitsio.Card
	if m.Label != "" {
		cards = append(cards, fitsio.Card{Name: "LABEL", Value: m.Label, Comment: "dataset label"})
	}
	if m.Freq != 0 {
		cards = append(cards, fitsio.Card{Name: "FREQ", Value: m.Freq, Comment: "[Hz] reference frequency"})
	}
	if m.Dish != 0 {
		cards = append(cards, fitsio.Card{Name: "DISH", Value: m.Dish, Comment: "[m] antenna diameter"})
	}
	if m.HasPhaseCentre {
		cards = append(cards,
			fitsio.Card{Name: "OBSRA", Value: m.RA, Comment: "[deg] phase-centre right ascension"},
			fitsio.Card{Name: "OBSDEC", Value: m.Dec, Comment: "[deg] phase-centre declination"})
	}
	// A Dataset always holds the −1 convention, whatever Meta.Sign says.
	cards = append(cards, fitsio.Card{Name: "SIGN", Value: -1, Comment: "exponent sign of the visibilities"})
	if err := tbl.Header().Append(cards...); err != nil {
		return err
	}
	for k := range d.Len() {
		for _, c := range cols {
			c.set(k)
		}
		if err := tbl.Write(ptrs...); err != nil {
			return err
		}
	}
	if err := f.Write(tbl); err != nil {
		return err
	}
	return f.Close()
}

func printableASCII(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < 0x20 || s[i] > 0x7e {
			return false
		}
	}
	return true
}
