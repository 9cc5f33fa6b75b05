package uv

import (
	"bytes"
	"compress/gzip"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// randomDataset makes n rows of made-up visibilities with awkward float64
// values; full adds every optional column.
func randomDataset(n int, full bool, seed uint64) *Dataset {
	rng := rand.New(rand.NewPCG(seed, 1))
	d := &Dataset{Meta: Meta{Label: "test set", Source: "obs.csv", Freq: 2.3e11, Dish: 12, RA: 201.365, Dec: -43.019, HasPhaseCentre: true, Sign: -1}}
	freqs := []float64{2.3e11, 2.3000015625e11, 2.31e11 + 1.0/3}
	for k := range n {
		u := rng.NormFloat64() * 1e5
		if u == 0 {
			u = 1
		}
		d.U = append(d.U, u)
		d.V = append(d.V, rng.NormFloat64()*math.Pi*1e4)
		d.Re = append(d.Re, rng.NormFloat64()*1e-3)
		d.Im = append(d.Im, -rng.ExpFloat64()*1e-300)
		d.Weight = append(d.Weight, 1/(rng.Float64()+1e-3))
		if full {
			d.W = append(d.W, rng.NormFloat64())
			d.FreqIndex = append(d.FreqIndex, uint32(k%len(freqs)))
			d.Time = append(d.Time, 4.9e9+float64(k)*6.048)
			d.Ant1 = append(d.Ant1, int16(rng.IntN(50)))
			d.Ant2 = append(d.Ant2, int16(50+rng.IntN(50)))
			d.Spw = append(d.Spw, int16(rng.IntN(4)))
			d.Chan = append(d.Chan, int32(rng.IntN(1<<20)))
			d.Flag = append(d.Flag, rng.IntN(10) == 0)
		}
	}
	if full {
		d.Freqs = freqs
	}
	return d
}

// equalDatasets reports whether a and b hold the same rows bit for bit and
// the same metadata.
func equalDatasets(a, b *Dataset) bool {
	if a.Meta != b.Meta || a.Len() != b.Len() {
		return false
	}
	same := func(x, y []float64) bool {
		if len(x) != len(y) || (x == nil) != (y == nil) {
			return false
		}
		for i := range x {
			if math.Float64bits(x[i]) != math.Float64bits(y[i]) && !(math.IsNaN(x[i]) && math.IsNaN(y[i])) {
				return false
			}
		}
		return true
	}
	if !same(a.U, b.U) || !same(a.V, b.V) || !same(a.W, b.W) || !same(a.Re, b.Re) || !same(a.Im, b.Im) ||
		!same(a.Weight, b.Weight) || !same(a.Time, b.Time) {
		return false
	}
	if (a.FreqIndex == nil) != (b.FreqIndex == nil) {
		return false
	}
	for k := range a.Len() {
		if a.FreqAt(k) != b.FreqAt(k) {
			return false
		}
	}
	return reflect.DeepEqual(a.Ant1, b.Ant1) && reflect.DeepEqual(a.Ant2, b.Ant2) && reflect.DeepEqual(a.Spw, b.Spw) &&
		reflect.DeepEqual(a.Chan, b.Chan) && reflect.DeepEqual(a.Flag, b.Flag)
}

func TestWriteReadRoundTrip(t *testing.T) {
	for _, full := range []bool{false, true} {
		d := randomDataset(5000, full, 11)
		var buf bytes.Buffer
		if err := WriteTable(&buf, d); err != nil {
			t.Fatal(err)
		}
		got, rep := mustRead(t, buf.String(), ReadOptions{})
		if !equalDatasets(got, d) {
			t.Errorf("full=%v: round trip changed the dataset", full)
		}
		if rep.Rows != d.Len() || len(rep.Notes) != 0 {
			t.Errorf("full=%v: report %+v", full, rep)
		}
	}
	// The text starts with the metadata lines, then the header.
	var buf bytes.Buffer
	d := randomDataset(1, true, 1)
	if err := WriteTable(&buf, d); err != nil {
		t.Fatal(err)
	}
	want := "# label: test set\n# freq: 2.3e+11\n# dish: 12\n# phase-centre: 201.365 -43.019\n# sign: -1\n" +
		"u,v,w,re,im,weight,freq,time,ant1,ant2,spw,chan,flag\n"
	if !strings.HasPrefix(buf.String(), want) {
		t.Errorf("table starts\n%s\nwant\n%s", buf.String(), want)
	}
}

func TestGzipAndFITSFiles(t *testing.T) {
	dir := t.TempDir()
	d := randomDataset(3000, true, 4)
	for _, name := range []string{"obs.csv", "obs.csv.gz", "obs.fits"} {
		t.Run(name, func(t *testing.T) {
			p := filepath.Join(dir, name)
			if err := WriteTableFile(p, false, d); err != nil {
				t.Fatal(err)
			}
			got, rep, err := ReadFile(p, ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			want := *d
			want.Meta.Source = p
			if !equalDatasets(got, &want) {
				t.Errorf("%s: round trip changed the dataset (meta %+v)", name, got.Meta)
			}
			if rep.Rows != d.Len() || rep.Flagged+rep.Used != d.Len() {
				t.Errorf("%s: report %+v", name, rep)
			}
			raw, _ := os.ReadFile(p)
			switch {
			case strings.HasSuffix(name, ".gz") && !bytes.HasPrefix(raw, []byte{0x1f, 0x8b}):
				t.Errorf("%s is not gzip", name)
			case strings.HasSuffix(name, ".fits") && !bytes.HasPrefix(raw, []byte("SIMPLE  =")):
				t.Errorf("%s is not FITS", name)
			}
		})
	}
	// Gzip is recognised by its magic bytes, not the name.
	var z bytes.Buffer
	zw := gzip.NewWriter(&z)
	zw.Write([]byte("u,v,re,im,weight\n1,2,3,4,5\n"))
	zw.Close()
	p := filepath.Join(dir, "compressed.txt")
	os.WriteFile(p, z.Bytes(), 0o644)
	got, _, err := ReadFile(p, ReadOptions{})
	if err != nil || got.Len() != 1 || got.Weight[0] != 5 {
		t.Errorf("gzip without .gz: %v, %+v", err, got)
	}
}

func TestFITSKeywordsExact(t *testing.T) {
	// Metadata needing 17 digits survives the FITS header (fitsio alone
	// writes 6 significant digits).
	d := randomDataset(5, false, 3)
	d.Meta.Freq, d.Meta.RA, d.Meta.Dec, d.Meta.Dish = 2.3000015625123457e11, 201.36512345678912, -43.019876543210987, 12.345678901234567
	var buf bytes.Buffer
	if err := WriteFITSTable(&buf, d); err != nil {
		t.Fatal(err)
	}
	got, _, err := ReadFITSTable(bytes.NewReader(buf.Bytes()), "obs.csv", ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if got.Meta != d.Meta {
		t.Errorf("meta %+v, want %+v", got.Meta, d.Meta)
	}
}

func TestFITSTableForms(t *testing.T) {
	// A FITS table read through ReadFITSTable, with metres and sigma, checks
	// the same conversions as text.
	d := &Dataset{Meta: Meta{Label: "fits", Freq: speedOfLight * 1000, Sign: -1}}
	d.U, d.V, d.Re, d.Im, d.Weight = []float64{1, 0}, []float64{2, 0}, []float64{3, 1}, []float64{4, 1}, []float64{0.25, 1}
	var buf bytes.Buffer
	if err := WriteFITSTable(&buf, d); err != nil {
		t.Fatal(err)
	}
	got, rep, err := ReadFITSTable(bytes.NewReader(buf.Bytes()), "obs.fits", ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if got.Len() != 1 || rep.Autocorrelations != 1 || got.Meta.Label != "fits" || got.Meta.Freq != d.Meta.Freq {
		t.Errorf("FITS read: %d rows, report %+v, meta %+v", got.Len(), rep, got.Meta)
	}
	if _, _, err := ReadFITSTable(strings.NewReader("u,v,re,im,weight\n"), "x.csv", ReadOptions{}); err == nil {
		t.Error("text given to ReadFITSTable: no error")
	}
	d.Meta.Label = "non-ASCII λ"
	if err := WriteFITSTable(&buf, d); err == nil {
		t.Error("non-ASCII label written to FITS without error")
	}
}

func TestFITSCorrupt(t *testing.T) {
	d := randomDataset(500, true, 8)
	var buf bytes.Buffer
	if err := WriteFITSTable(&buf, d); err != nil {
		t.Fatal(err)
	}
	raw := buf.Bytes()
	// Truncated data, a truncated header, and a header whose row count
	// claims far more data than the file holds: errors, not crashes or
	// giant allocations.
	huge := bytes.Clone(raw)
	i := bytes.Index(huge[2880:], []byte("NAXIS2  ="))
	copy(huge[2880+i:], fmt.Sprintf("NAXIS2  = %20d", 999999999))
	for name, b := range map[string][]byte{
		"truncated data":   raw[:len(raw)-3000],
		"truncated header": raw[:2880+100],
		"huge row count":   huge,
	} {
		_, _, err := ReadFITSTable(bytes.NewReader(b), "bad.fits", ReadOptions{})
		if !errors.Is(err, ErrBinary) {
			t.Errorf("%s: error %v, want ErrBinary", name, err)
		}
	}
}

// A truncated or corrupted gzip file is an error naming the file and the
// line reached, never a silently shorter table.
func TestGzipDamaged(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "obs.csv.gz")
	if err := WriteTableFile(p, false, randomDataset(5000, true, 6)); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	flipped := append([]byte(nil), raw...)
	flipped[len(flipped)/2] ^= 0xff
	for name, data := range map[string][]byte{
		"truncated":    raw[:len(raw)/2],
		"no trailer":   raw[:len(raw)-4],
		"flipped byte": flipped,
	} {
		t.Run(name, func(t *testing.T) {
			q := filepath.Join(dir, strings.ReplaceAll(name, " ", "-")+".csv.gz")
			if err := os.WriteFile(q, data, 0o644); err != nil {
				t.Fatal(err)
			}
			d, _, err := ReadFile(q, ReadOptions{})
			var pe *ParseError
			if err == nil || !errors.As(err, &pe) || pe.File != q || pe.Line < 1 {
				n := -1
				if d != nil {
					n = d.Len()
				}
				t.Fatalf("error %v (%d rows read), want a *ParseError naming %s and a line", err, n, q)
			}
			t.Logf("%v", err)
		})
	}
}
