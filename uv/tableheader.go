package uv

import (
	"bytes"
	"math"
	"strconv"
	"strings"
)

// role is the quantity a table column holds.
type role int

const (
	roleNone role = iota
	roleU
	roleV
	roleW
	roleRe
	roleIm
	roleWeight
	roleSigma
	roleFreq
	roleTime
	roleAnt1
	roleAnt2
	roleSpw
	roleChan
	roleFlag
	nRoles
)

// unit is the length unit of a u, v or w column.
type unit int

const (
	unitLambda  unit = iota // wavelengths
	unitMetre               // metres, converted with the row's frequency
	unitKlambda             // kilo-wavelengths
)

// columnNames maps lower-case header names to what they hold.
var columnNames = map[string]struct {
	role role
	unit unit
}{
	"u": {roleU, unitLambda}, "v": {roleV, unitLambda}, "w": {roleW, unitLambda},
	"u_m": {roleU, unitMetre}, "v_m": {roleV, unitMetre}, "w_m": {roleW, unitMetre},
	"u_klambda": {roleU, unitKlambda}, "v_klambda": {roleV, unitKlambda}, "w_klambda": {roleW, unitKlambda},
	"re": {roleRe, 0}, "real": {roleRe, 0},
	"im": {roleIm, 0}, "imag": {roleIm, 0},
	"weight": {roleWeight, 0}, "sigma": {roleSigma, 0},
	"freq": {roleFreq, 0}, "time": {roleTime, 0},
	"ant1": {roleAnt1, 0}, "ant2": {roleAnt2, 0},
	"spw": {roleSpw, 0}, "chan": {roleChan, 0},
	"flag": {roleFlag, 0},
}

// layout describes a table's columns once its header is known.
type layout struct {
	delim byte     // ',', '\t', or ' ' for runs of spaces and tabs
	names []string // header names as written
	ncol  int
	// col[r] is the 0-based column of role r, or −1.
	col [nRoles]int
	// uvUnit is the unit of u and v, wUnit that of w.
	uvUnit, wUnit unit
	// headerLine is the 1-based line number of the header.
	headerLine int
	// unknown lists the header names that were ignored.
	unknown []string
}

func (l *layout) has(r role) bool { return l.col[r] >= 0 }

// name returns the header name of role r's column.
func (l *layout) name(r role) string {
	if l.col[r] < 0 {
		return ""
	}
	return l.names[l.col[r]]
}

// detectDelimiter picks the delimiter of a header line: a comma if it has
// one; otherwise a tab if splitting at single tabs gives no empty names;
// otherwise runs of spaces and tabs.
func detectDelimiter(header []byte) byte {
	if bytes.IndexByte(header, ',') >= 0 {
		return ','
	}
	if bytes.IndexByte(header, '\t') >= 0 {
		ok := true
		for _, f := range bytes.Split(header, []byte{'\t'}) {
			if len(bytes.Trim(f, " ")) == 0 {
				ok = false
				break
			}
		}
		if ok {
			return '\t'
		}
	}
	return ' '
}

// splitFields splits line at delim into dst, which it returns. With ',' or
// '\t' every delimiter separates two fields, and spaces around a field are
// trimmed; with ' ' fields are separated by runs of spaces and tabs.
func splitFields(line []byte, delim byte, dst [][]byte) [][]byte {
	dst = dst[:0]
	if delim == ' ' {
		i := 0
		for {
			for i < len(line) && (line[i] == ' ' || line[i] == '\t') {
				i++
			}
			if i == len(line) {
				return dst
			}
			j := i
			for j < len(line) && line[j] != ' ' && line[j] != '\t' {
				j++
			}
			dst = append(dst, line[i:j])
			i = j
		}
	}
	for {
		j := bytes.IndexByte(line, delim)
		if j < 0 {
			return append(dst, trimSpace(line))
		}
		dst = append(dst, trimSpace(line[:j]))
		line = line[j+1:]
	}
}

// trimSpace trims ASCII spaces and tabs from both ends of b.
func trimSpace(b []byte) []byte {
	for len(b) > 0 && (b[0] == ' ' || b[0] == '\t') {
		b = b[1:]
	}
	for len(b) > 0 && (b[len(b)-1] == ' ' || b[len(b)-1] == '\t') {
		b = b[:len(b)-1]
	}
	return b
}

// parseHeader builds the layout from a header line. freqKnown says whether a
// reference frequency is available from metadata or options.
func parseHeader(file string, lineNo int, header []byte, freqKnown bool) (*layout, error) {
	delim := detectDelimiter(header)
	var names []string
	for _, f := range splitFields(header, delim, nil) {
		names = append(names, strings.Trim(string(f), `"'`))
	}
	return newLayout(file, lineNo, names, delim, freqKnown)
}

// newLayout builds the layout for columns with the given header names.
func newLayout(file string, lineNo int, names []string, delim byte, freqKnown bool) (*layout, error) {
	l := &layout{delim: delim, headerLine: lineNo, names: names, ncol: len(names)}
	for r := range l.col {
		l.col[r] = -1
	}
	perr := func(field string, err error) error {
		return &ParseError{File: file, Line: lineNo, Field: field, Err: err}
	}
	var uUnit, vUnit unit
	wNamed := "" // the w column's name, to decide its unit
	for i, name := range names {
		c, ok := columnNames[strings.ToLower(name)]
		if !ok {
			l.unknown = append(l.unknown, name)
			continue
		}
		if j := l.col[c.role]; j >= 0 {
			return nil, &ParseError{File: file, Line: lineNo, Column: i + 1, Field: name,
				Err: cause(ErrDuplicateColumn, "same quantity as column %q", l.names[j])}
		}
		l.col[c.role] = i
		switch c.role {
		case roleU:
			uUnit = c.unit
		case roleV:
			vUnit = c.unit
		case roleW:
			l.wUnit = c.unit
			wNamed = strings.ToLower(name)
		}
	}
	numeric := len(names) > 0
	for _, n := range names {
		if _, err := strconv.ParseFloat(n, 64); err != nil {
			numeric = false
			break
		}
	}
	if numeric {
		return nil, perr("", cause(ErrMissingColumn, "no header: the first line that is not a comment must name the columns (u, v, re, im, weight, …), this one holds numbers"))
	}
	switch {
	case !l.has(roleU):
		return nil, perr("", cause(ErrMissingColumn, `missing column "u" (or "u_m", "u_klambda")`))
	case !l.has(roleV):
		return nil, perr("", cause(ErrMissingColumn, `missing column "v" (or "v_m", "v_klambda")`))
	case uUnit != vUnit:
		return nil, perr(l.name(roleV), cause(ErrDuplicateColumn, "unit differs from column %q", l.name(roleU)))
	case !l.has(roleRe):
		return nil, perr("", cause(ErrMissingColumn, `missing column "re" (or "real")`))
	case !l.has(roleIm):
		return nil, perr("", cause(ErrMissingColumn, `missing column "im" (or "imag")`))
	case !l.has(roleWeight) && !l.has(roleSigma):
		return nil, perr("", cause(ErrMissingColumn, `missing column "weight" (or "sigma")`))
	case l.has(roleWeight) && l.has(roleSigma):
		return nil, perr(l.name(roleSigma), cause(ErrDuplicateColumn, `give "weight" or "sigma", not both`))
	}
	l.uvUnit = uUnit
	if wNamed == "w" {
		l.wUnit = uUnit
	}
	if (l.uvUnit == unitMetre || (l.has(roleW) && l.wUnit == unitMetre)) && !l.has(roleFreq) && !freqKnown {
		name := l.name(roleU)
		if l.uvUnit != unitMetre {
			name = l.name(roleW)
		}
		return nil, perr(name, cause(ErrNoFreq, `metres need a "freq" column or a "# freq:" metadata line`))
	}
	return l, nil
}

// metaLine recognises a metadata line "# key: value" (text after the '#').
// Keys are single words of letters, digits, '-' and '_'; other comments are
// not metadata.
func metaLine(comment []byte) (key, value string, ok bool) {
	c := bytes.IndexByte(comment, ':')
	if c < 0 {
		return "", "", false
	}
	k := strings.ToLower(strings.TrimSpace(string(comment[:c])))
	if k == "" {
		return "", "", false
	}
	for _, r := range k {
		if !('a' <= r && r <= 'z' || '0' <= r && r <= '9' || r == '-' || r == '_') {
			return "", "", false
		}
	}
	return k, strings.TrimSpace(string(comment[c+1:])), true
}

// applyMeta sets the metadata field named key in m from value. It reports
// known == false for keys it does not know.
func applyMeta(m *Meta, key, value string) (known bool, err error) {
	switch key {
	case "label":
		m.Label = value
	case "freq":
		f, err := numberWithUnit(value, map[string]float64{"": 1, "hz": 1, "khz": 1e3, "mhz": 1e6, "ghz": 1e9})
		if err != nil || f <= 0 {
			return true, cause(ErrMetadata, "freq %q: want a frequency > 0 in Hz (or with unit kHz, MHz, GHz)", value)
		}
		m.Freq = f
	case "dish":
		d, err := numberWithUnit(value, map[string]float64{"": 1, "m": 1})
		if err != nil || d <= 0 {
			return true, cause(ErrMetadata, "dish %q: want a diameter > 0 in metres", value)
		}
		m.Dish = d
	case "phase-centre", "phase-center", "phase_centre", "phase_center":
		f := strings.FieldsFunc(value, func(r rune) bool { return r == ' ' || r == '\t' || r == ',' })
		if len(f) == 3 && strings.EqualFold(f[2], "deg") {
			f = f[:2]
		}
		bad := cause(ErrMetadata, "phase-centre %q: want RA_DEG DEC_DEG with 0 ≤ RA < 360 and −90 ≤ Dec ≤ 90", value)
		if len(f) != 2 {
			return true, bad
		}
		ra, err1 := strconv.ParseFloat(f[0], 64)
		dec, err2 := strconv.ParseFloat(f[1], 64)
		if err1 != nil || err2 != nil || !(ra >= 0 && ra < 360) || !(dec >= -90 && dec <= 90) {
			return true, bad
		}
		m.RA, m.Dec, m.HasPhaseCentre = ra, dec, true
	case "sign":
		switch value {
		case "-1":
			m.Sign = -1
		case "+1", "1":
			m.Sign = +1
		default:
			return true, cause(ErrMetadata, "sign %q: want -1 or +1", value)
		}
	default:
		return false, nil
	}
	return true, nil
}

// numberWithUnit parses "1.5", "1.5 GHz" or "1.5GHz" with the scale factors
// of units (keys lower case; "" for a bare number).
func numberWithUnit(s string, units map[string]float64) (float64, error) {
	s = strings.TrimSpace(s)
	i := len(s)
	for i > 0 && (s[i-1] >= 'a' && s[i-1] <= 'z' || s[i-1] >= 'A' && s[i-1] <= 'Z') {
		i--
	}
	num, u := strings.TrimSpace(s[:i]), strings.ToLower(s[i:])
	// "1e9" ends in a digit, but "inf" and "nan" end in letters; both are
	// rejected below by the unit lookup or the finiteness check.
	scale, ok := units[u]
	if !ok {
		return 0, strconv.ErrSyntax
	}
	f, err := strconv.ParseFloat(num, 64)
	if err != nil {
		return 0, err
	}
	if math.IsInf(f, 0) || math.IsNaN(f) {
		return 0, strconv.ErrRange
	}
	return f * scale, nil
}

// overrideMeta copies the non-zero fields of o over m.
func overrideMeta(m *Meta, o Meta) {
	if o.Label != "" {
		m.Label = o.Label
	}
	if o.Source != "" {
		m.Source = o.Source
	}
	if o.Freq != 0 {
		m.Freq = o.Freq
	}
	if o.Dish != 0 {
		m.Dish = o.Dish
	}
	if o.HasPhaseCentre {
		m.RA, m.Dec, m.HasPhaseCentre = o.RA, o.Dec, true
	}
	if o.Sign != 0 {
		m.Sign = o.Sign
	}
}
