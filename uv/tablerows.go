package uv

import (
	"bytes"
	"strconv"
)

// speedOfLight is c in m/s (exact, SI), for converting baselines in metres
// to wavelengths: u[λ] = u[m] · ν / c.
const speedOfLight = 299792458.0

// maxSkippedLines is how many skipped line numbers a ReadReport keeps.
const maxSkippedLines = 10

// rowVals holds one row's values before validation, as parsed.
type rowVals struct {
	f    [nRoles]float64 // float roles
	i    [nRoles]int64   // ant1, ant2, spw, chan
	flag bool
}

// rowProc turns parsed rows into dataset rows: unit conversion, checks,
// conjugation and exclusion of autocorrelations.
type rowProc struct {
	file    string
	lay     *layout
	freq    float64 // reference frequency for rows without a freq column
	imSign  float64 // −1 to conjugate exports with sign +1, else +1
	skipBad bool
}

// rowBuf collects the rows of one block, as one parser goroutine sees them.
type rowBuf struct {
	u, v, w, re, im, wt, freq, time []float64
	ant1, ant2, spw                 []int16
	chn                             []int32
	flag                            []bool

	rows, flagged, autocorr, skipped int
	skippedLines                     []int
	firstSkip                        error
	relaxed                          int // flagged rows with values that would be errors if unflagged
	err                              error
	fields                           [][]byte
}

func (b *rowBuf) reset() {
	b.u, b.v, b.w, b.re, b.im, b.wt = b.u[:0], b.v[:0], b.w[:0], b.re[:0], b.im[:0], b.wt[:0]
	b.freq, b.time = b.freq[:0], b.time[:0]
	b.ant1, b.ant2, b.spw, b.chn, b.flag = b.ant1[:0], b.ant2[:0], b.spw[:0], b.chn[:0], b.flag[:0]
	b.rows, b.flagged, b.autocorr, b.skipped, b.relaxed = 0, 0, 0, 0, 0
	b.skippedLines = b.skippedLines[:0]
	b.firstSkip, b.err = nil, nil
}

// fieldErr makes the error for column role r of line.
func (p *rowProc) fieldErr(line int, r role, err error) error {
	return &ParseError{File: p.file, Line: line, Column: p.lay.col[r] + 1, Field: p.lay.name(r), Err: err}
}

// parseLine parses one data line (no line terminator) into rv.
func (p *rowProc) parseLine(line []byte, lineNo int, b *rowBuf, rv *rowVals) error {
	l := p.lay
	b.fields = splitFields(line, l.delim, b.fields)
	if len(b.fields) != l.ncol {
		return &ParseError{File: p.file, Line: lineNo,
			Err: cause(ErrFieldCount, "%d fields, the header has %d", len(b.fields), l.ncol)}
	}
	for r := roleU; r <= roleTime; r++ {
		c := l.col[r]
		if c < 0 {
			continue
		}
		x, err := parseFloat(b.fields[c])
		if err != nil {
			if ne, ok := err.(*strconv.NumError); ok && ne.Err == strconv.ErrRange {
				return p.fieldErr(lineNo, r, cause(ErrNonFinite, "%s is out of range", quoteField(b.fields[c])))
			}
			return p.fieldErr(lineNo, r, cause(ErrNotNumber, "%s is not a number", quoteField(b.fields[c])))
		}
		rv.f[r] = x
	}
	for r := roleAnt1; r <= roleChan; r++ {
		c := l.col[r]
		if c < 0 {
			continue
		}
		max := int64(32767)
		if r == roleChan {
			max = 1<<31 - 1
		}
		n, ok := parseUint(b.fields[c], max)
		if !ok {
			return p.fieldErr(lineNo, r, cause(ErrInteger, "%s is not an integer from 0 to %d", quoteField(b.fields[c]), max))
		}
		rv.i[r] = n
	}
	rv.flag = false
	if c := l.col[roleFlag]; c >= 0 {
		f, ok := parseFlag(b.fields[c])
		if !ok {
			return p.fieldErr(lineNo, roleFlag, cause(ErrFlagValue, "%s is not 0, 1, true or false", quoteField(b.fields[c])))
		}
		rv.flag = f
	}
	return nil
}

// add checks and converts a parsed row and appends it to b, or counts it as
// an autocorrelation. It returns an error for bad values.
func (p *rowProc) add(rv *rowVals, lineNo int, b *rowBuf) error {
	l := p.lay
	// Coordinates, frequency and time must be good even on flagged rows:
	// they decide what the row is.
	for _, r := range [...]role{roleU, roleV, roleW, roleFreq, roleTime} {
		if l.col[r] >= 0 && !finite(rv.f[r]) {
			return p.fieldErr(lineNo, r, cause(ErrNonFinite, "%v is not finite", rv.f[r]))
		}
	}
	freq := p.freq
	if l.has(roleFreq) {
		freq = rv.f[roleFreq]
		if !(freq > 0) {
			return p.fieldErr(lineNo, roleFreq, cause(ErrFreq, "%v must be > 0 Hz", freq))
		}
	}
	relaxed := false
	for _, r := range [...]role{roleRe, roleIm, roleWeight, roleSigma} {
		if l.col[r] < 0 {
			continue
		}
		x := rv.f[r]
		var err error
		switch {
		case !finite(x):
			err = cause(ErrNonFinite, "%v is not finite", x)
		case r == roleWeight && !(x > 0):
			err = cause(ErrWeight, "%v must be > 0 (weight is 1/σ² in Jy⁻²)", x)
		case r == roleSigma && !(x > 0):
			err = cause(ErrSigma, "%v must be > 0 Jy", x)
		}
		if err != nil {
			if !rv.flag {
				return p.fieldErr(lineNo, r, err)
			}
			relaxed = true
		}
	}
	u, v, w := rv.f[roleU], rv.f[roleV], rv.f[roleW]
	switch l.uvUnit {
	case unitMetre:
		u, v = u*freq/speedOfLight, v*freq/speedOfLight
	case unitKlambda:
		u, v = u*1e3, v*1e3
	}
	switch l.wUnit {
	case unitMetre:
		w *= freq / speedOfLight
	case unitKlambda:
		w *= 1e3
	}
	if u == 0 && v == 0 {
		b.autocorr++
		return nil
	}
	if !finite(u) || !finite(v) || !finite(w) {
		return p.fieldErr(lineNo, roleU, cause(ErrNonFinite, "baseline out of range after unit conversion"))
	}
	wt := rv.f[roleWeight]
	if l.has(roleSigma) {
		s := rv.f[roleSigma]
		wt = 1 / (s * s)
		if !rv.flag && !(wt > 0 && finite(wt)) {
			return p.fieldErr(lineNo, roleSigma, cause(ErrSigma, "%v gives weight 1/σ² = %v, out of range", s, wt))
		}
	}
	if relaxed {
		b.relaxed++
	}
	b.u = append(b.u, u)
	b.v = append(b.v, v)
	if l.has(roleW) {
		b.w = append(b.w, w)
	}
	b.re = append(b.re, rv.f[roleRe])
	b.im = append(b.im, p.imSign*rv.f[roleIm])
	b.wt = append(b.wt, wt)
	if l.has(roleFreq) {
		b.freq = append(b.freq, freq)
	}
	if l.has(roleTime) {
		b.time = append(b.time, rv.f[roleTime])
	}
	if l.has(roleAnt1) {
		b.ant1 = append(b.ant1, int16(rv.i[roleAnt1]))
	}
	if l.has(roleAnt2) {
		b.ant2 = append(b.ant2, int16(rv.i[roleAnt2]))
	}
	if l.has(roleSpw) {
		b.spw = append(b.spw, int16(rv.i[roleSpw]))
	}
	if l.has(roleChan) {
		b.chn = append(b.chn, int32(rv.i[roleChan]))
	}
	if l.has(roleFlag) {
		b.flag = append(b.flag, rv.flag)
		if rv.flag {
			b.flagged++
		}
	}
	return nil
}

// bad handles a bad row: with skipBad it is counted and parsing goes on
// (true); otherwise the error is kept and parsing stops (false).
func (p *rowProc) bad(b *rowBuf, lineNo int, err error) bool {
	if !p.skipBad {
		b.err = err
		return false
	}
	b.skipped++
	if len(b.skippedLines) < maxSkippedLines {
		b.skippedLines = append(b.skippedLines, lineNo)
	}
	if b.firstSkip == nil {
		b.firstSkip = err
	}
	return true
}

// parseBlock parses whole lines of text. ends[i] is the offset just past
// line i's terminator in text, and firstLine the 1-based number of line 0.
func (p *rowProc) parseBlock(text []byte, ends []int32, firstLine int, b *rowBuf) {
	var rv rowVals
	start := 0
	for i, e := range ends {
		line := text[start:int(e)]
		start = int(e)
		lineNo := firstLine + i
		line = bytes.TrimRight(line, "\r\n")
		t := trimSpace(line)
		if len(t) == 0 || t[0] == '#' {
			continue
		}
		b.rows++
		err := p.parseLine(line, lineNo, b, &rv)
		if err == nil {
			err = p.add(&rv, lineNo, b)
		}
		if err != nil && !p.bad(b, lineNo, err) {
			return
		}
	}
}
