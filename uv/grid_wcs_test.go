package uv

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// Small-offset limits of the SIN projection (from memory: l ≈ Δα cos δ0,
// m ≈ Δδ for offsets ≪ 1 rad), to 1e-5 arcsec for arcsecond offsets: the
// neglected second-order term ½ sin δ0 cos δ0 Δα² is 4e-6 arcsec here.
func TestProjectSmallOffsets(t *testing.T) {
	for _, tc := range []struct {
		name              string
		ra0, dec0, dx, dy float64 // dx, dy in arcsec of RA and Dec
		wantX, wantY      float64
	}{
		{"north at equator", 150, 0, 0, 1, 0, 1},
		{"east at equator", 150, 0, 1, 0, 1, 0},
		{"east at dec 60", 10, 60, 2, 0, 1, 0},
		{"east at dec -60", 10, -60, 2, 0, 1, 0},
		{"across ra 0", 359.9999, 30, 1, 0, math.Cos(30 * math.Pi / 180), 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			x, y := Project(tc.ra0, tc.dec0, tc.ra0+tc.dx/3600, tc.dec0+tc.dy/3600)
			if math.Abs(x-tc.wantX) > 1e-5 || math.Abs(y-tc.wantY) > 1e-5 {
				t.Errorf("Project = (%.9f, %.9f), want (%v, %v)", x, y, tc.wantX, tc.wantY)
			}
		})
	}
}

// Unproject inverts Project to 1e-9 arcsec (round trip).
func TestUnprojectRoundTrip(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for range 1000 {
		ra0, dec0 := 360*rnd.Float64(), -89+178*rnd.Float64()
		x, y := 3600*(rnd.Float64()-0.5)*20, 3600*(rnd.Float64()-0.5)*20
		ra, dec := Unproject(ra0, dec0, x, y)
		x2, y2 := Project(ra0, dec0, ra, dec)
		if math.Abs(x2-x) > 1e-9*math.Max(1, math.Abs(x)) || math.Abs(y2-y) > 1e-9*math.Max(1, math.Abs(y)) {
			t.Fatalf("centre (%v,%v): (%v,%v) → (%v,%v) → (%v,%v)", ra0, dec0, x, y, ra, dec, x2, y2)
		}
	}
}

// The WCS reference pixel follows the grid offset: the phase centre (0, 0)
// sits at fractional pixel Grid.Pix(0, 0), which is CRPIX − 1.
func TestCRPixOffset(t *testing.T) {
	g := Grid{N: 64, Pixel: 0.05, X0: 0.3, Y0: -0.45}
	c1, c2 := g.CRPix()
	i, j := g.Pix(0, 0)
	if math.Abs(c1-1-i) > 1e-12 || math.Abs(c2-1-j) > 1e-12 {
		t.Errorf("CRPIX = (%v, %v), Pix(0,0)+1 = (%v, %v)", c1, c2, i+1, j+1)
	}
}

func TestFITSImageRoundTrip(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 2))
	g := Grid{N: 16, Pixel: 0.0123456789012345, X0: 0.1, Y0: -0.2}
	im := &SkyImage{
		Grid: g,
		Meta: ImageMeta{RA: 150.12345678901234, Dec: -30.987654321098765, HasPhaseCentre: true,
			Freq: 2.3456789012345e11, BUnit: "JY/BEAM", Object: "band7",
			Beam: &CleanBeam{BMaj: 0.123456789, BMin: 0.0987654321, BPA: -33.3333333333}},
		Data: make([]float64, g.Len()),
	}
	for k := range im.Data {
		im.Data[k] = rnd.NormFloat64()
	}
	path := filepath.Join(t.TempDir(), "a.fits")
	if err := WriteFITSImage(path, false, im); err != nil {
		t.Fatal(err)
	}
	if err := WriteFITSImage(path, false, im); err == nil {
		t.Error("second write without force succeeded")
	}
	got, err := ReadFITSImage(path)
	if err != nil {
		t.Fatal(err)
	}
	if got.Grid.N != g.N || got.Grid.Pixel != g.Pixel ||
		math.Abs(got.Grid.X0-g.X0) > 1e-12 || math.Abs(got.Grid.Y0-g.Y0) > 1e-12 {
		t.Errorf("grid %+v, want %+v", got.Grid, g)
	}
	m := got.Meta
	if m.RA != im.Meta.RA || m.Dec != im.Meta.Dec || m.Freq != im.Meta.Freq || !m.HasPhaseCentre ||
		m.BUnit != "JY/BEAM" || m.Object != "band7" || m.Beam == nil || m.Beam.BPA != im.Meta.Beam.BPA ||
		math.Abs(m.Beam.BMaj-im.Meta.Beam.BMaj) > 1e-15 || math.Abs(m.Beam.BMin-im.Meta.Beam.BMin) > 1e-15 {
		t.Errorf("meta %+v beam %+v, want %+v beam %+v", m, m.Beam, im.Meta, im.Meta.Beam)
	}
	for k := range im.Data {
		if got.Data[k] != im.Data[k] {
			t.Fatalf("pixel %d: %v, want %v", k, got.Data[k], im.Data[k])
		}
	}
}

// The written FITS header, read as raw 80-character cards (FITS standard
// 4.0, §4.1: keyword in columns 1–8, "= " in 9–10, the value after), holds
// the WCS of ../shared/conventions.md in the units of Greisen & Calabretta
// (2002, A&A 395, 1061, §2): degrees for CDELT, CRVAL, BMAJ and BMIN (BMAJ
// in degrees is common practice), CDELT1 = −Δ, CRPIX = N/2 + 1 + X0/Δ on
// axis 1 and N/2 + 1 − Y0/Δ on axis 2, BPA in degrees east of north. This
// pins the units that a write–read round trip could not.
func TestFITSImageHeaderCards(t *testing.T) {
	g := Grid{N: 64, Pixel: 0.036, X0: 0.18, Y0: -0.072}
	im := &SkyImage{Grid: g, Data: make([]float64, g.Len()),
		Meta: ImageMeta{RA: 201.5, Dec: -43.25, HasPhaseCentre: true, Freq: 2.3e11, BUnit: "JY/BEAM",
			Beam: &CleanBeam{BMaj: 0.36, BMin: 0.18, BPA: 30}}}
	path := filepath.Join(t.TempDir(), "h.fits")
	if err := WriteFITSImage(path, false, im); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(raw)%2880 != 0 {
		t.Errorf("file of %d bytes, not whole 2880-byte FITS blocks", len(raw))
	}
	cards := map[string]string{}
	for off := 0; off+80 <= len(raw); off += 80 {
		card := string(raw[off : off+80])
		key := strings.TrimSpace(card[:8])
		if key == "END" {
			break
		}
		if card[8:10] != "= " {
			continue
		}
		val := card[10:]
		if q := strings.IndexByte(val, '\''); q >= 0 && strings.TrimSpace(val[:q]) == "" {
			end := strings.IndexByte(val[q+1:], '\'')
			cards[key] = strings.TrimSpace(val[q+1 : q+1+end])
			continue
		}
		if s := strings.IndexByte(val, '/'); s >= 0 {
			val = val[:s]
		}
		cards[key] = strings.TrimSpace(val)
	}
	for _, tc := range []struct{ key, want string }{
		{"NAXIS", "2"}, {"NAXIS1", "64"}, {"NAXIS2", "64"},
		{"CTYPE1", "RA---SIN"}, {"CTYPE2", "DEC--SIN"}, {"BUNIT", "JY/BEAM"},
	} {
		if cards[tc.key] != tc.want {
			t.Errorf("%s = %q, want %q", tc.key, cards[tc.key], tc.want)
		}
	}
	for _, tc := range []struct {
		key  string
		want float64
	}{
		{"CDELT1", -0.036 / 3600}, {"CDELT2", 0.036 / 3600},
		{"CRPIX1", 33 + 5}, {"CRPIX2", 33 + 2},
		{"CRVAL1", 201.5}, {"CRVAL2", -43.25},
		{"BMAJ", 1e-4}, {"BMIN", 5e-5}, {"BPA", 30},
	} {
		s, ok := cards[tc.key]
		if !ok {
			t.Errorf("no card %s", tc.key)
			continue
		}
		got, err := strconv.ParseFloat(strings.Replace(s, "D", "E", 1), 64)
		if err != nil || math.Abs(got-tc.want) > 1e-12*math.Abs(tc.want) {
			t.Errorf("%s = %q, want %.15g", tc.key, s, tc.want)
		}
	}
}
