package uv

import (
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"

	"deflect/internal/atomicfile"
)

// readString reads a whole table from text.
func readString(t *testing.T, text string, opt ReadOptions) (*Dataset, *ReadReport, error) {
	t.Helper()
	r, err := NewTableReader(strings.NewReader(text), "obs.csv", opt)
	if err != nil {
		return nil, nil, err
	}
	d, err := ReadAll(r)
	return d, r.Report(), err
}

func mustRead(t *testing.T, text string, opt ReadOptions) (*Dataset, *ReadReport) {
	t.Helper()
	d, rep, err := readString(t, text, opt)
	if err != nil {
		t.Fatalf("read: %v\n%s", err, text)
	}
	return d, rep
}

func closeTo(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if math.Abs(got-want) > rel*math.Abs(want) {
		t.Errorf("%s = %.17g, want %.17g (rel. tol. %g)", what, got, want, rel)
	}
}

func TestReadColumnsAndUnits(t *testing.T) {
	// c = 299792458 m/s exactly (SI definition), so at ν = c·1000 Hz one
	// metre is 1000 wavelengths; λ = c/ν is common practice.
	const nu = speedOfLight * 1000
	tests := []struct {
		name   string
		text   string
		u, v   float64
		w      float64 // NaN when no w column
		re, im float64
		weight float64
	}{
		{"wavelengths", "u,v,re,im,weight\n100,-200,1.5,-0.5,4\n", 100, -200, math.NaN(), 1.5, -0.5, 4},
		{"metres with freq column", "u_m,v_m,w_m,re,im,weight,freq\n1.5,-2,0.25,1,0,1," + fmtG(nu) + "\n", 1500, -2000, 250, 1, 0, 1},
		{"metres with freq metadata", "# freq: " + fmtG(nu) + "\nu_m,v_m,re,im,weight\n1.5,-2,1,0,1\n", 1500, -2000, math.NaN(), 1, 0, 1},
		{"metres with freq in GHz", "# freq: " + fmtG(nu/1e9) + " GHz\nu_m,v_m,re,im,weight\n1,1,1,0,1\n", nu / speedOfLight, nu / speedOfLight, math.NaN(), 1, 0, 1},
		{"kilolambda", "u_klambda,v_klambda,w_klambda,re,im,weight\n1.5,-2,0.5,1,0,1\n", 1500, -2000, 500, 1, 0, 1},
		{"w in the unit of u", "u_klambda,v_klambda,w,re,im,weight\n1,2,3,1,0,1\n", 1000, 2000, 3000, 1, 0, 1},
		{"aliases, sigma, any order and case", "IMAG,Sigma,V,Real,U\n-0.25,0.5,7,2,3\n", 3, 7, math.NaN(), 2, -0.25, 4},
		{"quoted header names", `"u","v","re","im","weight"` + "\n1,2,3,4,5\n", 1, 2, math.NaN(), 3, 4, 5},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			d, _ := mustRead(t, tc.text, ReadOptions{})
			if d.Len() != 1 {
				t.Fatalf("%d rows, want 1", d.Len())
			}
			closeTo(t, "u", d.U[0], tc.u, 1e-15)
			closeTo(t, "v", d.V[0], tc.v, 1e-15)
			if math.IsNaN(tc.w) != (d.W == nil) {
				t.Fatalf("w column present = %v, want %v", d.W != nil, !math.IsNaN(tc.w))
			}
			if d.W != nil {
				closeTo(t, "w", d.W[0], tc.w, 1e-15)
			}
			closeTo(t, "re", d.Re[0], tc.re, 0)
			closeTo(t, "im", d.Im[0], tc.im, 0)
			closeTo(t, "weight", d.Weight[0], tc.weight, 1e-15)
		})
	}
}

func fmtG(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

func TestOptionalColumns(t *testing.T) {
	text := "u,v,re,im,weight,freq,time,ant1,ant2,spw,chan,flag,extra\n" +
		"1,2,3,4,5,1e11,100.5,0,1,2,3,0,x\n" +
		"1,3,3,4,5,1e11,100.5,0,2,2,3,true,y\n" +
		"1,4,3,4,5,2e11,101.5,1,2,1,7,FALSE,z\n" +
		"1,5,3,4,5,1e11,102.5,32767,2,0,0,1,z\n"
	d, rep := mustRead(t, text, ReadOptions{})
	if d.Len() != 4 {
		t.Fatalf("%d rows, want 4", d.Len())
	}
	freqs := []float64{d.FreqAt(0), d.FreqAt(1), d.FreqAt(2), d.FreqAt(3)}
	if !slices.Equal(freqs, []float64{1e11, 1e11, 2e11, 1e11}) || len(d.Freqs) != 2 {
		t.Errorf("frequencies %v from table %v, want [1e11 1e11 2e11 1e11] from 2 distinct", freqs, d.Freqs)
	}
	if !slices.Equal(d.Time, []float64{100.5, 100.5, 101.5, 102.5}) {
		t.Errorf("time %v", d.Time)
	}
	if !slices.Equal(d.Ant1, []int16{0, 0, 1, 32767}) || !slices.Equal(d.Ant2, []int16{1, 2, 2, 2}) {
		t.Errorf("antennas %v %v", d.Ant1, d.Ant2)
	}
	if !slices.Equal(d.Spw, []int16{2, 2, 1, 0}) || !slices.Equal(d.Chan, []int32{3, 3, 7, 0}) {
		t.Errorf("spw %v chan %v", d.Spw, d.Chan)
	}
	if !slices.Equal(d.Flag, []bool{false, true, false, true}) || !d.Flagged(1) || d.Flagged(0) {
		t.Errorf("flags %v", d.Flag)
	}
	if rep.Rows != 4 || rep.Used != 2 || rep.Flagged != 2 {
		t.Errorf("report rows %d used %d flagged %d, want 4, 2, 2", rep.Rows, rep.Used, rep.Flagged)
	}
	if !slices.Equal(rep.Unknown, []string{"extra"}) || !strings.Contains(strings.Join(rep.Notes, ";"), "extra") {
		t.Errorf("unknown columns %v, notes %v: want extra listed", rep.Unknown, rep.Notes)
	}
	// Absent optional columns stay nil.
	d, _ = mustRead(t, "u,v,re,im,weight\n1,2,3,4,5\n", ReadOptions{})
	if d.W != nil || d.FreqIndex != nil || d.Time != nil || d.Ant1 != nil || d.Ant2 != nil || d.Spw != nil || d.Chan != nil || d.Flag != nil {
		t.Errorf("optional columns not nil: %+v", d)
	}
}

func TestDelimiters(t *testing.T) {
	want := []float64{1.5, -2, 3, 4e-3, 25}
	tests := []struct{ name, text string }{
		{"comma", "u,v,re,im,weight\n1.5,-2,3,4e-3,25\n"},
		{"comma with spaces", "u , v , re , im , weight\n 1.5 , -2 ,3, 4e-3 ,25 \n"},
		{"tab", "u\tv\tre\tim\tweight\n1.5\t-2\t3\t4e-3\t25\n"},
		{"runs of spaces", "  u     v   re  im   weight\n 1.5   -2     3  4e-3 25  \n"},
		{"spaces and tabs mixed", "u \t v\t\tre im weight\n1.5\t \t-2 3 4e-3\t25\n"},
		{"byte-order mark", "\uFEFFu,v,re,im,weight\n1.5,-2,3,4e-3,25\n"},
		{"CRLF line ends", "u,v,re,im,weight\r\n1.5,-2,3,4e-3,25\r\n"},
		{"no final newline", "u,v,re,im,weight\n1.5,-2,3,4e-3,25"},
		{"comments and blank lines", "# a comment\n\nu,v,re,im,weight\n# between rows\n\n   \n1.5,-2,3,4e-3,25\n# end\n"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			d, rep := mustRead(t, tc.text, ReadOptions{})
			got := []float64{d.U[0], d.V[0], d.Re[0], d.Im[0], d.Weight[0]}
			if d.Len() != 1 || !slices.Equal(got, want) {
				t.Errorf("%d rows, first %v, want 1 row %v", d.Len(), got, want)
			}
			if rep.Rows != 1 {
				t.Errorf("report counts %d rows, want 1", rep.Rows)
			}
		})
	}
	for _, tc := range []struct {
		header string
		want   byte
	}{{"u,v", ','}, {"u\tv", '\t'}, {"u v", ' '}, {"u\t\tv", ' '}, {"u \tv", '\t'}} {
		if got := detectDelimiter([]byte(tc.header)); got != tc.want {
			t.Errorf("detectDelimiter(%q) = %q, want %q", tc.header, got, tc.want)
		}
	}
}

func TestMetadata(t *testing.T) {
	text := "# label: band 7 long baselines\n" +
		"# freq: 2.5e11\n" +
		"# dish: 12\n" +
		"# phase-centre: 150.25 -30.5\n" +
		"# sign: -1\n" +
		"# written-by: someone\n" +
		"# just a comment: with a colon and spaces in the key\n" +
		"u,v,re,im,weight\n1,2,3,4,5\n"
	d, rep := mustRead(t, text, ReadOptions{})
	want := Meta{Label: "band 7 long baselines", Source: "obs.csv", Freq: 2.5e11, Dish: 12, RA: 150.25, Dec: -30.5, HasPhaseCentre: true, Sign: -1}
	if d.Meta != want {
		t.Errorf("meta %+v, want %+v", d.Meta, want)
	}
	if d.FreqAt(0) != 2.5e11 {
		t.Errorf("FreqAt(0) = %v, want the metadata frequency", d.FreqAt(0))
	}
	if n := strings.Join(rep.Notes, ";"); !strings.Contains(n, `"written-by"`) || strings.Contains(n, "just a comment") {
		t.Errorf("notes %q: want the unknown key written-by, and no note for a plain comment", n)
	}

	t.Run("other forms", func(t *testing.T) {
		for _, tc := range []struct {
			line string
			want Meta
		}{
			{"# freq: 230 GHz", Meta{Freq: 230e9}},
			{"# freq: 230GHz", Meta{Freq: 230e9}},
			{"# freq: 345.5 MHz", Meta{Freq: 345.5e6}},
			{"# freq: 1e3 kHz", Meta{Freq: 1e6}},
			{"# FREQ : 1e9 Hz", Meta{Freq: 1e9}},
			{"# dish: 7 m", Meta{Dish: 7}},
			{"# phase-center: 10, 20", Meta{RA: 10, Dec: 20, HasPhaseCentre: true}},
			{"# phase_centre: 0 -90 deg", Meta{RA: 0, Dec: -90, HasPhaseCentre: true}},
			{"#label:x", Meta{Label: "x"}},
		} {
			d, _ := mustRead(t, tc.line+"\nu,v,re,im,weight\n1,2,3,4,5\n", ReadOptions{})
			got := d.Meta
			got.Source, got.Sign = "", 0
			if tc.want.Label == "" {
				tc.want.Label = "obs"
			}
			if got != tc.want {
				t.Errorf("%q: meta %+v, want %+v", tc.line, got, tc.want)
			}
		}
	})

	t.Run("sign +1 conjugates", func(t *testing.T) {
		// An export with exp(+2πi(ul+vm)) holds the complex conjugate of the
		// convention's V, so the reader negates im (conventions.md).
		d, rep := mustRead(t, "# sign: +1\nu,v,re,im,weight\n1,2,3,0.75,5\n", ReadOptions{})
		if d.Im[0] != -0.75 || d.Re[0] != 3 || d.Meta.Sign != -1 {
			t.Errorf("re, im, sign = %v, %v, %d; want 3, -0.75, -1", d.Re[0], d.Im[0], d.Meta.Sign)
		}
		if !strings.Contains(strings.Join(rep.Notes, ";"), "conjugated") {
			t.Errorf("notes %v do not mention the conjugation", rep.Notes)
		}
		d, _ = mustRead(t, "u,v,re,im,weight\n1,2,3,0.75,5\n", ReadOptions{Meta: Meta{Sign: +1}})
		if d.Im[0] != -0.75 {
			t.Errorf("option sign +1: im = %v, want -0.75", d.Im[0])
		}
	})

	t.Run("options override", func(t *testing.T) {
		o := Meta{Label: "cli", Freq: speedOfLight, Dish: 25, RA: 1, Dec: 2, HasPhaseCentre: true}
		d, _ := mustRead(t, "# label: file\n# freq: 1e11\n# dish: 12\nu_m,v_m,re,im,weight\n3,4,1,1,1\n", ReadOptions{Meta: o})
		o.Source, o.Sign = "obs.csv", -1
		if d.Meta != o {
			t.Errorf("meta %+v, want %+v", d.Meta, o)
		}
		// u_m converted with the overriding frequency: ν = c, λ = 1 m.
		if d.U[0] != 3 || d.V[0] != 4 {
			t.Errorf("u, v = %v, %v; want 3, 4 wavelengths", d.U[0], d.V[0])
		}
	})
}

func TestErrors(t *testing.T) {
	const hdr = "u,v,re,im,weight\n"
	tests := []struct {
		name string
		text string
		want error
		msg  string // the exact error message, or a substring when it ends in "…"
	}{
		{"not a number", hdr + "1,2,3,4,5\n1,2,1.2.3,4,5\n", ErrNotNumber, `obs.csv:3: column "re": "1.2.3" is not a number`},
		{"empty field", hdr + "1,2,,4,5\n", ErrNotNumber, `obs.csv:2: column "re": "" is not a number`},
		{"infinite", hdr + "1,2,3,inf,5\n", ErrNonFinite, `obs.csv:2: column "im": +Inf is not finite`},
		{"NaN", hdr + "1,2,3,4,NaN\n", ErrNonFinite, `obs.csv:2: column "weight": NaN is not finite`},
		{"overflow", hdr + "1e999,2,3,4,5\n", ErrNonFinite, `obs.csv:2: column "u": "1e999" is out of range`},
		{"weight zero", hdr + "1,2,3,4,0\n", ErrWeight, `obs.csv:2: column "weight": 0 must be > 0 (weight is 1/σ² in Jy⁻²)`},
		{"weight negative", hdr + "1,2,3,4,-1\n", ErrWeight, `obs.csv:2: column "weight": -1 must be > 0 (weight is 1/σ² in Jy⁻²)`},
		{"sigma zero", "u,v,re,im,sigma\n1,2,3,4,0\n", ErrSigma, `obs.csv:2: column "sigma": 0 must be > 0 Jy`},
		{"sigma negative", "u,v,re,im,sigma\n1,2,3,4,-0.5\n", ErrSigma, `obs.csv:2: column "sigma": -0.5 must be > 0 Jy`},
		{"short row", hdr + "1,2,3,4\n", ErrFieldCount, `obs.csv:2: 4 fields, the header has 5`},
		{"long row", hdr + "1,2,3,4,5,6\n", ErrFieldCount, `obs.csv:2: 6 fields, the header has 5`},
		{"missing u", "v,re,im,weight\n", ErrMissingColumn, `obs.csv:1: missing column "u" (or "u_m", "u_klambda")`},
		{"missing v", "u,re,im,weight\n", ErrMissingColumn, `obs.csv:1: missing column "v" (or "v_m", "v_klambda")`},
		{"missing re", "u,v,im,weight\n", ErrMissingColumn, `obs.csv:1: missing column "re" (or "real")`},
		{"missing im", "u,v,re,weight\n", ErrMissingColumn, `obs.csv:1: missing column "im" (or "imag")`},
		{"missing weight", "u,v,re,im\n", ErrMissingColumn, `obs.csv:1: missing column "weight" (or "sigma")`},
		{"weight and sigma", "u,v,re,im,weight,sigma\n", ErrDuplicateColumn, `obs.csv:1: column "sigma": give "weight" or "sigma", not both`},
		{"duplicate", "u,v,re,real,im,weight\n", ErrDuplicateColumn, `obs.csv:1: column "real": same quantity as column "re"`},
		{"mixed units", "u,v_m,re,im,weight,freq\n", ErrDuplicateColumn, `obs.csv:1: column "v_m": unit differs from column "u"`},
		{"metres without freq", "u_m,v_m,re,im,weight\n1,2,3,4,5\n", ErrNoFreq, `obs.csv:1: column "u_m": metres need a "freq" column or a "# freq:" metadata line`},
		{"w metres without freq", "u,v,w_m,re,im,weight\n", ErrNoFreq, `obs.csv:1: column "w_m": metres need a "freq" column or a "# freq:" metadata line`},
		{"freq zero", "u,v,re,im,weight,freq\n1,2,3,4,5,0\n", ErrFreq, `obs.csv:2: column "freq": 0 must be > 0 Hz`},
		{"bad antenna", "u,v,re,im,weight,ant1\n1,2,3,4,5,1.5\n", ErrInteger, `obs.csv:2: column "ant1": "1.5" is not an integer from 0 to 32767`},
		{"antenna too large", "u,v,re,im,weight,ant2\n1,2,3,4,5,40000\n", ErrInteger, `obs.csv:2: column "ant2": "40000" is not an integer from 0 to 32767`},
		{"negative channel", "u,v,re,im,weight,chan\n1,2,3,4,5,-1\n", ErrInteger, `obs.csv:2: column "chan": "-1" is not an integer from 0 to 2147483647`},
		{"bad flag", "u,v,re,im,weight,flag\n1,2,3,4,5,yes\n", ErrFlagValue, `obs.csv:2: column "flag": "yes" is not 0, 1, true or false`},
		{"no header", "1,2,3,4,5\n", ErrMissingColumn, `obs.csv:1: no header: the first line that is not a comment must name the columns (u, v, re, im, weight, …), this one holds numbers`},
		{"empty file", "", ErrEmpty, `obs.csv: empty file: no header line`},
		{"only comments", "# label: x\n\n# nothing else\n", ErrEmpty, `obs.csv: empty file: no header line`},
		{"binary NUL", "u,v\x00\x01\x02,re\n", ErrBinary, `obs.csv:1: binary data, not a text table`},
		{"binary bytes", "\x7fELF\x02\x01\x01\x00\x00\x00", ErrBinary, `obs.csv:1: binary data, not a text table`},
		{"bad freq metadata", "# freq: fast\n" + hdr, ErrMetadata, `obs.csv:1: freq "fast": want a frequency > 0 in Hz (or with unit kHz, MHz, GHz)`},
		{"bad dish", "# dish: -3\n" + hdr, ErrMetadata, `obs.csv:1: dish "-3": want a diameter > 0 in metres`},
		{"bad phase centre", "# phase-centre: 400 0\n" + hdr, ErrMetadata, `obs.csv:1: phase-centre "400 0": want RA_DEG DEC_DEG with 0 ≤ RA < 360 and −90 ≤ Dec ≤ 90`},
		{"bad sign", "# sign: 2\n" + hdr, ErrMetadata, `obs.csv:1: sign "2": want -1 or +1`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, _, err := readString(t, tc.text, ReadOptions{})
			if err == nil {
				t.Fatalf("no error for\n%s", tc.text)
			}
			if !errors.Is(err, tc.want) {
				t.Errorf("error %q is not %v", err, tc.want)
			}
			var pe *ParseError
			if !errors.As(err, &pe) || pe.File != "obs.csv" {
				t.Errorf("error %q is not a *ParseError naming the file", err)
			}
			if err.Error() != tc.msg {
				t.Errorf("error\n  %s\nwant\n  %s", err, tc.msg)
			}
		})
	}
}

func TestLongLineIsBinary(t *testing.T) {
	text := "u,v,re,im,weight\n" + strings.Repeat("1", maxLineBytes+10) + "\n"
	_, _, err := readString(t, text, ReadOptions{})
	if !errors.Is(err, ErrBinary) {
		t.Errorf("error %v, want ErrBinary for a 1 MiB line", err)
	}
}

func TestSkipBadAndAccounting(t *testing.T) {
	text := "u,v,re,im,weight,flag\n" +
		"1,2,3,4,5,0\n" + // 2 used
		"1,2,x,4,5,0\n" + // 3 skipped
		"0,0,3,4,5,0\n" + // 4 autocorrelation
		"1,2,3,4,-5,0\n" + // 5 skipped
		"1,2,3,4,0,1\n" + // 6 flagged with weight 0: allowed
		"0,0,3,4,5,1\n" + // 7 flagged autocorrelation: counted as autocorrelation
		"1,2,3\n" + // 8 skipped
		"2,2,3,4,5,0\n" // 9 used
	if _, _, err := readString(t, text, ReadOptions{}); err == nil || !strings.HasPrefix(err.Error(), "obs.csv:3:") {
		t.Fatalf("strict read: error %v, want one at line 3", err)
	}
	d, rep := mustRead(t, text, ReadOptions{SkipBad: true})
	if rep.Rows != 8 || rep.Used != 2 || rep.Flagged != 1 || rep.Autocorrelations != 2 || rep.Skipped != 3 {
		t.Errorf("report %+v, want rows 8, used 2, flagged 1, autocorrelations 2, skipped 3", rep)
	}
	if rep.Rows != rep.Used+rep.Flagged+rep.Autocorrelations+rep.Skipped {
		t.Errorf("report does not account for every row: %+v", rep)
	}
	if !slices.Equal(rep.SkippedLines, []int{3, 5, 8}) {
		t.Errorf("skipped lines %v, want [3 5 8]", rep.SkippedLines)
	}
	notes := strings.Join(rep.Notes, ";")
	if !strings.Contains(notes, `obs.csv:3: column "re": "x" is not a number`) || !strings.Contains(notes, "1 flagged rows") {
		t.Errorf("notes %q: want the first skipped row's error and the flagged-row note", notes)
	}
	if d.Len() != 3 || !d.Flagged(1) || d.U[2] != 2 {
		t.Errorf("dataset rows %d, flags %v", d.Len(), d.Flag)
	}
}

func TestSkippedLinesCapped(t *testing.T) {
	var b strings.Builder
	b.WriteString("u,v,re,im,weight\n")
	for range 50 {
		b.WriteString("1,2,3,4,bad\n")
	}
	_, rep := mustRead(t, b.String(), ReadOptions{SkipBad: true})
	if rep.Skipped != 50 || len(rep.SkippedLines) != maxSkippedLines || rep.SkippedLines[9] != 11 {
		t.Errorf("skipped %d, lines %v; want 50 and the first 10 (2…11)", rep.Skipped, rep.SkippedLines)
	}
}

func TestChunksAndParallelParse(t *testing.T) {
	d := randomDataset(20000, true, 7)
	var buf strings.Builder
	if err := WriteTable(&buf, d); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	for _, chunk := range []int{1, 7, 4096, 12345, 1 << 20} {
		r, err := NewTableReader(strings.NewReader(text), "obs.csv", ReadOptions{ChunkRows: chunk})
		if err != nil {
			t.Fatal(err)
		}
		var c Dataset
		rows := 0
		for {
			err := r.Next(&c)
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				t.Fatal(err)
			}
			if c.Len() > chunk || c.Len() == 0 {
				t.Fatalf("chunk %d: %d rows", chunk, c.Len())
			}
			for k := range c.Len() {
				if c.U[k] != d.U[rows+k] || c.FreqAt(k) != d.FreqAt(rows+k) || c.Chan[k] != d.Chan[rows+k] {
					t.Fatalf("chunk %d: row %d differs", chunk, rows+k)
				}
			}
			rows += c.Len()
		}
		if rows != d.Len() {
			t.Errorf("chunk %d: %d rows, want %d", chunk, rows, d.Len())
		}
	}
	// The first bad row in file order is reported, wherever the goroutine
	// boundaries fall.
	lines := strings.Split(text, "\n")
	hdr := slices.IndexFunc(lines, func(s string) bool { return strings.HasPrefix(s, "u,") })
	for _, bad := range []int{hdr + 2, hdr + 15000, hdr + 19999} {
		l2 := slices.Clone(lines)
		l2[bad] = strings.Replace(l2[bad], ",", ",x", 1)
		l2[bad+1] = strings.Replace(l2[bad+1], ",", ",y", 1)
		_, _, err := readString(t, strings.Join(l2, "\n"), ReadOptions{ChunkRows: 1 << 20})
		var pe *ParseError
		if !errors.As(err, &pe) || pe.Line != bad+1 || pe.Field != "v" {
			t.Errorf("bad line %d: error %v, want it at that line, column v", bad+1, err)
		}
	}
}

func TestReadFileAndDatasets(t *testing.T) {
	dir := t.TempDir()
	a := randomDataset(300, true, 1)
	a.Meta.Label = "array A"
	b := randomDataset(200, false, 2)
	b.Meta = Meta{Label: "array B", Freq: 3.4e11, Dish: 7, Sign: -1}
	pa, pb := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv.gz")
	for _, x := range []struct {
		p string
		d *Dataset
	}{{pa, a}, {pb, b}} {
		if err := WriteTableFile(x.p, false, x.d); err != nil {
			t.Fatal(err)
		}
	}
	ds, reps, err := ReadFiles([]string{pa, pb}, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(ds) != 2 || ds[0].Meta.Label != "array A" || ds[1].Meta.Label != "array B" || ds[1].Meta.Dish != 7 {
		t.Fatalf("datasets %d, labels %q %q", len(ds), ds[0].Meta.Label, ds[1].Meta.Label)
	}
	if reps[1].File != pb || ds[1].Meta.Source != pb || reps[0].Rows != 300 {
		t.Errorf("reports %+v %+v", reps[0], reps[1])
	}
	if ds[1].FreqAt(5) != 3.4e11 {
		t.Errorf("dataset B frequency %v, want 3.4e11 from metadata", ds[1].FreqAt(5))
	}
	// A missing file fails with the datasets read so far.
	ds, _, err = ReadFiles([]string{pa, filepath.Join(dir, "none.csv")}, ReadOptions{})
	if err == nil || len(ds) != 1 || !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %d datasets, error %v", len(ds), err)
	}
	// The default label is the file's base name.
	c := randomDataset(3, false, 3)
	c.Meta.Label = ""
	pc := filepath.Join(dir, "band6.csv.gz")
	if err := WriteTableFile(pc, false, c); err != nil {
		t.Fatal(err)
	}
	dc, _, err := ReadFile(pc, ReadOptions{})
	if err != nil || dc.Meta.Label != "band6" {
		t.Errorf("default label %q (error %v), want band6", dc.Meta.Label, err)
	}
	if err := WriteTableFile(pc, false, c); !errors.Is(err, atomicfile.ErrExists) {
		t.Errorf("overwrite without force: error %v, want ErrExists", err)
	}
	if err := WriteTableFile(pc, true, c); err != nil {
		t.Errorf("overwrite with force: %v", err)
	}
}

func TestHeaderOnlyTable(t *testing.T) {
	d, rep := mustRead(t, "# label: x\nu,v,re,im,weight\n", ReadOptions{})
	if d.Len() != 0 || rep.Rows != 0 || d.Meta.Label != "x" {
		t.Errorf("header-only table: %d rows, report %+v", d.Len(), rep)
	}
}

func TestMemoryPerVisibility(t *testing.T) {
	d := randomDataset(50000, true, 5)
	var buf strings.Builder
	if err := WriteTable(&buf, d); err != nil {
		t.Fatal(err)
	}
	got, _ := mustRead(t, buf.String(), ReadOptions{})
	// Every column present: 7 float64 (u, v, w, re, im, weight, time),
	// 4-byte frequency index and channel, three int16 and a bool.
	const want = 7*8 + 4 + 4 + 3*2 + 1
	if per := float64(got.Bytes()) / float64(got.Len()); per != want {
		t.Errorf("%.2f bytes per visibility held, want %d", per, want)
	}
	if !reflect.DeepEqual(got.Freqs[:3], d.Freqs[:3]) {
		t.Errorf("frequency table %v, want %v", got.Freqs[:3], d.Freqs[:3])
	}
}

func TestExampleTablesAgree(t *testing.T) {
	// testdata/tables holds the same fictional visibilities in three forms
	// (make_tables.py): metres + weight, kλ + sigma, and a sign +1 export
	// in wavelengths with im negated. Read back, all agree to the printed
	// precision.
	dir := filepath.Join("..", "testdata", "tables")
	a, _, err := ReadFile(filepath.Join(dir, "example.csv"), ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	k, _, err := ReadFile(filepath.Join(dir, "example-klambda.txt"), ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	s, _, err := ReadFile(filepath.Join(dir, "example-sign.tsv"), ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if a.Meta.Label != "example array, band 6" || a.Meta.Dish != 12 || !a.Meta.HasPhaseCentre || a.Meta.Dec != -12.5 {
		t.Errorf("example.csv meta %+v", a.Meta)
	}
	j := 0 // rows of k skip the flagged rows of a
	for i := range a.Len() {
		if a.Flagged(i) {
			continue
		}
		// u_m is printed to 0.1 mm (0.04 λ at 230 GHz), u_klambda to 0.01 λ.
		if math.Abs(k.U[j]-a.U[i]) > 0.05 {
			t.Fatalf("row %d: u %v (kλ form), %v (metres)", i, k.U[j], a.U[i])
		}
		closeTo(t, "re (kλ form)", k.Re[j], a.Re[i], 1e-6)
		closeTo(t, "weight from sigma", k.Weight[j], a.Weight[i], 1e-12)
		j++
	}
	for i := range s.Len() {
		if math.Abs(s.U[i]-a.U[i]) > 0.05 {
			t.Fatalf("row %d: u %v (sign form), %v (metres)", i, s.U[i], a.U[i])
		}
		if s.Im[i] != a.Im[i] {
			t.Fatalf("row %d: conjugated im %v, want %v", i, s.Im[i], a.Im[i])
		}
	}
}

// Unknown columns are listed once in a note, however many chunks the table
// is read in; autocorrelations are excluded and counted in a strict read as
// well as with SkipBad.
func TestNotesOnceAndAutocorrelationsStrict(t *testing.T) {
	var b strings.Builder
	b.WriteString("u,scan,v,re,im,weight,Field,obs id\n")
	for k := range 10 {
		u := k % 4 // rows 0, 4 and 8 are autocorrelations
		b.WriteString(strconv.Itoa(u) + ",7," + strconv.Itoa(u) + ",1,2,3,x,9\n")
	}
	r, err := NewTableReader(strings.NewReader(b.String()), "obs.csv", ReadOptions{ChunkRows: 2})
	if err != nil {
		t.Fatal(err)
	}
	d, err := ReadAll(r)
	if err != nil {
		t.Fatal(err)
	}
	rep := r.Report()
	var notes []string
	for _, n := range rep.Notes {
		if strings.Contains(n, "ignored") {
			notes = append(notes, n)
		}
	}
	if len(notes) != 1 || notes[0] != "columns ignored: scan, Field, obs id" {
		t.Errorf("notes on ignored columns %q, want one: columns ignored: scan, Field, obs id", notes)
	}
	if !slices.Equal(rep.Unknown, []string{"scan", "Field", "obs id"}) {
		t.Errorf("unknown columns %q", rep.Unknown)
	}
	if d.Len() != 7 || rep.Rows != 10 || rep.Used != 7 || rep.Autocorrelations != 3 {
		t.Errorf("%d rows kept, report %+v; want 7 kept of 10, 3 autocorrelations", d.Len(), rep)
	}
	for k := range d.Len() {
		if d.U[k] == 0 && d.V[k] == 0 {
			t.Errorf("row %d is an autocorrelation", k)
		}
	}
}
