package uv

import (
	"bytes"
	"encoding/binary"
	"errors"
	"math"
	"strconv"
	"testing"
)

// FuzzReadTable checks that no input makes the reader panic, that every
// failure is a *ParseError, and that whatever it reads survives a
// write → read round trip unchanged.
func FuzzReadTable(f *testing.F) {
	for _, s := range []string{
		"u,v,re,im,weight\n1,2,3,4,5\n",
		"# label: x\n# freq: 1e11\n# sign: +1\nu_m\tv_m\tre\tim\tsigma\tflag\n1\t2\t3\t4\t0.5\t1\n0\t0\t1\t1\t1\t0\n",
		"u_klambda v_klambda w re im weight time ant1 ant2 spw chan freq\n1 2 3 4 5 6 7 8 9 10 11 1e9\n",
		"# dish: 12 m\n# phase-centre: 10 -20\nU,V,REAL,IMAG,WEIGHT\r\n1e-3,-2e5,NaN,4,5\r\n",
		"u,v,re,im,weight,flag\n1,2,3,4,0,1\n1,2,inf,4,1,true\n",
		"\x1f\x8b\x08\x00",
		"SIMPLE  = T",
	} {
		f.Add([]byte(s), false)
		f.Add([]byte(s), true)
	}
	var fits bytes.Buffer
	if err := WriteFITSTable(&fits, randomDataset(3, true, 1)); err != nil {
		f.Fatal(err)
	}
	f.Add(fits.Bytes(), false)
	f.Fuzz(func(t *testing.T, data []byte, skip bool) {
		opt := ReadOptions{SkipBad: skip, ChunkRows: 3}
		r, err := NewTableReader(bytes.NewReader(data), "fuzz.csv", opt)
		if err != nil {
			checkErr(t, err)
			return
		}
		d, err := ReadAll(r)
		if err != nil {
			checkErr(t, err)
			return
		}
		rep := r.Report()
		if rep.Rows != rep.Used+rep.Flagged+rep.Autocorrelations+rep.Skipped || d.Len() != rep.Used+rep.Flagged {
			t.Fatalf("report %+v does not account for %d rows", rep, d.Len())
		}
		var buf bytes.Buffer
		if err := WriteTable(&buf, d); err != nil {
			t.Fatal(err)
		}
		r2, err := NewTableReader(bytes.NewReader(buf.Bytes()), "fuzz.csv", ReadOptions{})
		if err != nil {
			t.Fatalf("rereading written table: %v\n%s", err, buf.Bytes())
		}
		d2, err := ReadAll(r2)
		if err != nil {
			t.Fatalf("rereading written table: %v\n%s", err, buf.Bytes())
		}
		if !equalDatasets(d, d2) {
			t.Fatalf("write → read changed the dataset:\n%+v\n%+v\n%s", d, d2, buf.Bytes())
		}
	})
}

func checkErr(t *testing.T, err error) {
	t.Helper()
	var pe *ParseError
	if !errors.As(err, &pe) {
		t.Fatalf("error %v (%T) is not a *ParseError", err, err)
	}
	if pe.Err == nil {
		t.Fatalf("ParseError without cause: %+v", pe)
	}
}

// FuzzParseFloat checks the fast float parser against strconv.ParseFloat,
// which is correctly rounded: same bits, same success.
func FuzzParseFloat(f *testing.F) {
	for _, s := range []string{"0", "-0", "1.5", ".5", "5.", "1e22", "9007199254740993", "123456789012345678",
		"1.7976931348623157e308", "4.9e-324", "0x1p3", "1_000", "inf", "-NaN", "+.e1", "00000000000000000000001.5", "1e-22", "12345678901234567e-22"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		got, gerr := parseFloat([]byte(s))
		want, werr := strconv.ParseFloat(s, 64)
		if (gerr == nil) != (werr == nil) {
			t.Fatalf("parseFloat(%q) error %v, strconv %v", s, gerr, werr)
		}
		if math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
			t.Fatalf("parseFloat(%q) = %v, strconv %v", s, got, want)
		}
	})
}

func TestFastFloatAgreesWithStrconv(t *testing.T) {
	// Property check on random decimal strings of the kinds tables hold;
	// strconv.ParseFloat (correctly rounded) is the reference.
	rng := newTestRand(3)
	fast := 0
	for range 200000 {
		x := (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(40)-20))
		var s string
		switch rng.IntN(4) {
		case 0:
			s = strconv.FormatFloat(x, 'f', rng.IntN(12), 64)
		case 1:
			s = strconv.FormatFloat(x, 'e', rng.IntN(16), 64)
		case 2:
			s = strconv.FormatFloat(x, 'g', -1, 64)
		default:
			s = strconv.FormatFloat(x, 'g', rng.IntN(15)+1, 64)
		}
		want, _ := strconv.ParseFloat(s, 64)
		got, err := parseFloat([]byte(s))
		if err != nil || math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("parseFloat(%q) = %v, %v; strconv gives %v", s, got, err, want)
		}
		if _, ok := fastFloat([]byte(s)); ok {
			fast++
		}
	}
	if fast < 190000 {
		t.Errorf("fast path taken for only %d of 200000 strings", fast)
	}
	// Random 1- to 19-digit mantissas over the whole exponent range, and
	// hard cases: halfway points (2⁵³ + 1 rounds to even), the smallest
	// normal and subnormal numbers, overflow, 20+ digits.
	hard := []string{"9007199254740993", "9007199254740995", "2.2250738585072014e-308", "2.2250738585072011e-308",
		"4.9406564584124654e-324", "1.7976931348623157e308", "1.7976931348623159e308", "1e-350", "1e400",
		"123456789012345678901", "0.1000000000000000055511151231257827", "7.2057594037927933e16"}
	for range 200000 {
		m := rng.Uint64N(10_000_000_000_000_000_000)
		m /= uint64(math.Pow10(rng.IntN(19)))
		hard = append(hard, strconv.FormatUint(m, 10)+"e"+strconv.Itoa(rng.IntN(660)-340))
	}
	for _, s := range hard {
		want, werr := strconv.ParseFloat(s, 64)
		got, gerr := parseFloat([]byte(s))
		if (gerr == nil) != (werr == nil) || math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("parseFloat(%q) = %v, %v; strconv gives %v, %v", s, got, gerr, want, werr)
		}
	}
}

func TestParseFloatDoesNotAllocate(t *testing.T) {
	for _, s := range []string{"12.345678", "-1234.5678901234567", "0.12345678901234567"} {
		b := []byte(s)
		if n := testing.AllocsPerRun(100, func() { parseFloat(b) }); n != 0 {
			t.Errorf("parseFloat(%q): %v allocations, want 0", s, n)
		}
	}
}

func TestEightDigits(t *testing.T) {
	// The SWAR test and value agree with a byte-by-byte loop, including the
	// bytes next to '0' and '9' ('/', ':') and high bytes.
	rng := newTestRand(8)
	for range 100000 {
		var b [8]byte
		for i := range b {
			b[i] = byte('0' + rng.IntN(10))
		}
		if rng.IntN(2) == 0 {
			b[rng.IntN(8)] = []byte{'/', ':', ' ', '.', 'e', 0, 0x80, 0xff, 0xb0}[rng.IntN(9)]
		}
		want, all := uint64(0), true
		for _, c := range b {
			if c < '0' || c > '9' {
				all = false
				break
			}
			want = want*10 + uint64(c-'0')
		}
		v := binary.LittleEndian.Uint64(b[:])
		if eightDigits(v) != all || (all && parseEightDigits(v) != want) {
			t.Fatalf("%q: eightDigits %v, value %d; want %v, %d", b, eightDigits(v), parseEightDigits(v), all, want)
		}
	}
}
