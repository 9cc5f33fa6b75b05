package uv

import (
	"bytes"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

const testArray = `# a fictional three-antenna array
name: tiny
latitude: -30
dish: 12
sefd: 100
0 0 0
300, 150, 2
-120	400
`

func TestReadArray(t *testing.T) {
	a, err := ReadArray(strings.NewReader(testArray), "tiny.txt")
	if err != nil {
		t.Fatal(err)
	}
	if a.Name != "tiny" || a.Latitude != -30 || a.Dish != 12 || a.SEFD != 100 || len(a.East) != 3 {
		t.Fatalf("got %+v", a)
	}
	if a.Up[1] != 2 || a.Up[2] != 0 || a.North[2] != 400 {
		t.Errorf("positions %v %v %v", a.East, a.North, a.Up)
	}
	for _, tc := range []struct{ name, in, want string }{
		{"no latitude", "0 0\n1 1\n", "no \"latitude:\""},
		{"bad number", "latitude: 10\n0 x 0\n1 1\n", "a.txt:2: field 2: \"x\" is not a number"},
		{"bad key", "latitude: 10\ncolour: 3\n", "a.txt:2: unknown key \"colour\""},
		{"one antenna", "latitude: 10\n0 0\n", "1 antennas"},
		{"fields", "latitude: 10\n0 0 0 0\n", "a.txt:2: want"},
		{"latitude range", "latitude: 100\n", "outside [-90, 90]"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadArray(strings.NewReader(tc.in), "a.txt")
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want it to contain %q", err, tc.want)
			}
		})
	}
}

// TestSynthesizeEllipse checks the uv track of one baseline against the
// ellipse of Thompson, Moran & Swenson (2017, §4.2, eq. 4.1 and the track
// equation below it): u² + ((v − Z cos δ)/sin δ)² = X² + Y², semi-axes
// √(X² + Y²) in u and |sin δ|·√(X² + Y²) in v (axis ratio |sin δ|), centred
// at v0 = Z cos δ. The centre and semi-axes are measured from the track
// itself (extremes over a full day), not from the formula used to make it.
func TestSynthesizeEllipse(t *testing.T) {
	for _, dec := range []float64{-60, -20, 35} {
		a := &Array{Name: "t", Latitude: -30, East: []float64{0, 250}, North: []float64{0, 400}, Up: []float64{0, 30}}
		obs := Observation{Dec: dec, HAStart: -12, HAEnd: 12, Integration: 30, Freqs: []float64{SpeedOfLight}, MinElevation: -90}
		d, err := Synthesize(a, obs)
		if err != nil {
			t.Fatal(err)
		}
		x, y, z := a.BaselineXYZ(0, 1)
		umin, umax, vmin, vmax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
		for k := range d.U {
			umin, umax = math.Min(umin, d.U[k]), math.Max(umax, d.U[k])
			vmin, vmax = math.Min(vmin, d.V[k]), math.Max(vmax, d.V[k])
		}
		sd, cd := math.Sincos(dec * math.Pi / 180)
		lxy := math.Hypot(x, y) // ν = c: metres are wavelengths
		ratio := (vmax - vmin) / (umax - umin)
		v0 := (vmax + vmin) / 2
		// Sampled every 30 s the extremes are within ~1e-6 relative.
		if math.Abs(ratio-math.Abs(sd)) > 1e-5 {
			t.Errorf("δ=%g: axis ratio %.6f, want |sin δ| = %.6f", dec, ratio, math.Abs(sd))
		}
		if math.Abs(v0-z*cd) > 1e-5*lxy {
			t.Errorf("δ=%g: centre v0 %.4f, want Z cos δ = %.4f", dec, v0, z*cd)
		}
		if math.Abs((umax-umin)/2-lxy) > 1e-5*lxy {
			t.Errorf("δ=%g: u semi-axis %.4f, want √(X²+Y²) = %.4f", dec, (umax-umin)/2, lxy)
		}
		// And every point on the ellipse, and |b|² = u² + v² + w².
		b2 := x*x + y*y + z*z
		for k := range d.U {
			e := d.U[k]*d.U[k] + math.Pow((d.V[k]-z*cd)/sd, 2)
			if math.Abs(e-lxy*lxy) > 1e-8*b2 {
				t.Fatalf("δ=%g row %d: off the ellipse by %g", dec, k, e-lxy*lxy)
			}
			if r := d.U[k]*d.U[k] + d.V[k]*d.V[k] + d.W[k]*d.W[k]; math.Abs(r-b2) > 1e-8*b2 {
				t.Fatalf("row %d: |uvw|² = %g, want |b|² = %g", k, r, b2)
			}
		}
	}
}

// TestBaselineXYZPole checks the local-to-equatorial rotation at the north
// pole, where "up" points to the celestial pole (Z) and north to the
// meridian's X = −N (from memory: at φ = 90° the horizon is the equator).
func TestBaselineXYZPole(t *testing.T) {
	a := &Array{Latitude: 90, East: []float64{0, 1}, North: []float64{0, 2}, Up: []float64{0, 3}}
	x, y, z := a.BaselineXYZ(0, 1)
	if math.Abs(x+2) > 1e-12 || y != 1 || math.Abs(z-3) > 1e-12 {
		t.Errorf("XYZ = %g %g %g, want -2 1 3", x, y, z)
	}
}

// TestSynthesizeNoise checks that the noise written to a table matches the
// radiometer equation: the sample standard deviation of the real and
// imaginary parts within 3% of SEFD/√(2 Δν τ · products).
func TestSynthesizeNoise(t *testing.T) {
	for _, products := range []int{1, 2} {
		a, err := ReadArray(strings.NewReader(testArray), "tiny.txt")
		if err != nil {
			t.Fatal(err)
		}
		obs := Observation{Dec: -40, HAStart: -4, HAEnd: 4, Integration: 20,
			Freqs: []float64{99e9, 100e9, 101e9}, ChanWidth: 1e9, Products: products}
		d, err := Synthesize(a, obs)
		if err != nil {
			t.Fatal(err)
		}
		AddNoise(d, rand.New(rand.NewPCG(1, 1)))
		var buf bytes.Buffer
		if err := WriteTable(&buf, d); err != nil {
			t.Fatal(err)
		}
		back, err := readSimTable(buf.Bytes())
		if err != nil {
			t.Fatal(err)
		}
		// 100 Jy / √(2 · 1e9 Hz · 20 s · products): radiometer equation,
		// TMS 2017 ch. 6.
		want := 100 / math.Sqrt(2*1e9*20*float64(products))
		var s2r, s2i float64
		for k := range back.Re {
			s2r += back.Re[k] * back.Re[k]
			s2i += back.Im[k] * back.Im[k]
		}
		n := float64(back.Len())
		if back.Len() < 3000 {
			t.Fatalf("only %d rows", back.Len())
		}
		for _, s := range []float64{math.Sqrt(s2r / n), math.Sqrt(s2i / n)} {
			if math.Abs(s/want-1) > 0.03 {
				t.Errorf("products %d: sample σ %.4g Jy, radiometer σ %.4g Jy", products, s, want)
			}
		}
		if w := back.Weight[0]; math.Abs(w*want*want-1) > 1e-12 {
			t.Errorf("weight %g, want 1/σ² = %g", w, 1/(want*want))
		}
		if back.Meta.Label != "tiny" || back.Meta.Dish != 12 || !back.Meta.HasPhaseCentre {
			t.Errorf("metadata %+v", back.Meta)
		}
	}
}

// readSimTable reads a whole table written by WriteTable.
func readSimTable(b []byte) (*Dataset, error) {
	r, err := NewTableReader(bytes.NewReader(b), "sim.csv", ReadOptions{})
	if err != nil {
		return nil, err
	}
	return ReadAll(r)
}

func TestSynthesizeDeterministicAndErrors(t *testing.T) {
	a, _ := ReadArray(strings.NewReader(testArray), "tiny.txt")
	obs := Observation{Dec: -40, HAStart: -1, HAEnd: 1, Integration: 60, Freqs: []float64{1e11}, ChanWidth: 1e8}
	d1, _ := Synthesize(a, obs)
	d2, _ := Synthesize(a, obs)
	AddNoise(d1, rand.New(rand.NewPCG(3, 4)))
	AddNoise(d2, rand.New(rand.NewPCG(3, 4)))
	for k := range d1.Re {
		if d1.Re[k] != d2.Re[k] || d1.Im[k] != d2.Im[k] {
			t.Fatal("same seed, different noise")
		}
	}
	if _, err := Synthesize(a, Observation{Dec: 80, HAStart: -1, HAEnd: 1, Integration: 60, Freqs: []float64{1e11}, ChanWidth: 1e8}); err == nil || !strings.Contains(err.Error(), "below") {
		t.Errorf("source below the horizon: err = %v", err)
	}
	if _, err := Synthesize(a, Observation{Dec: 0, HAStart: 1, HAEnd: 1, Integration: 60, Freqs: []float64{1e11}}); err == nil {
		t.Error("empty hour-angle range accepted")
	}
}
