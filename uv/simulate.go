package uv

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"strings"
)

// SiderealDay is the length of a sidereal day in seconds, the time in which
// the hour angle of a source advances by 24 h.
const SiderealDay = 86164.0905

// Array is an interferometer: antenna positions in a local horizontal frame,
// the site latitude, the dish diameter and the system equivalent flux
// density used for thermal noise.
type Array struct {
	// Name labels the array in reports and in the tables it makes.
	Name string
	// Latitude is the geodetic latitude of the site in degrees, north
	// positive.
	Latitude float64
	// Dish is the antenna diameter in metres (for the primary beam).
	Dish float64
	// SEFD is the system equivalent flux density of one antenna in Jy;
	// zero means noiseless visibilities.
	SEFD float64
	// East, North, Up are the antenna positions in metres in the local
	// horizontal frame of the site.
	East, North, Up []float64
}

// ReadArray reads an antenna file from r; name is used in error messages.
// The format is text: blank lines and lines starting with '#' are comments;
// "key: value" lines set name, latitude (degrees), dish (metres) and sefd
// (Jy); every other line is one antenna, "east north up" in metres
// separated by spaces, tabs or commas (up may be omitted, meaning 0).
func ReadArray(r io.Reader, name string) (*Array, error) {
	a := &Array{}
	sc := bufio.NewScanner(r)
	line := 0
	haveLat := false
	for sc.Scan() {
		line++
		s := strings.TrimSpace(sc.Text())
		if s == "" || strings.HasPrefix(s, "#") {
			continue
		}
		if k, v, ok := strings.Cut(s, ":"); ok {
			key := strings.ToLower(strings.TrimSpace(k))
			v = strings.TrimSpace(v)
			if key == "name" {
				a.Name = v
				continue
			}
			x, err := strconv.ParseFloat(v, 64)
			if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
				return nil, fmt.Errorf("%s:%d: %s: %q is not a number", name, line, key, v)
			}
			switch key {
			case "latitude":
				if x < -90 || x > 90 {
					return nil, fmt.Errorf("%s:%d: latitude %g is outside [-90, 90] degrees", name, line, x)
				}
				a.Latitude, haveLat = x, true
			case "dish":
				if x <= 0 {
					return nil, fmt.Errorf("%s:%d: dish %g must be > 0 metres", name, line, x)
				}
				a.Dish = x
			case "sefd":
				if x < 0 {
					return nil, fmt.Errorf("%s:%d: sefd %g must be ≥ 0 Jy", name, line, x)
				}
				a.SEFD = x
			default:
				return nil, fmt.Errorf("%s:%d: unknown key %q (expected name, latitude, dish or sefd)", name, line, key)
			}
			continue
		}
		f := strings.FieldsFunc(s, func(c rune) bool { return c == ' ' || c == '\t' || c == ',' })
		if len(f) < 2 || len(f) > 3 {
			return nil, fmt.Errorf("%s:%d: want \"east north [up]\" in metres, got %d fields", name, line, len(f))
		}
		var xyz [3]float64
		for i, fs := range f {
			x, err := strconv.ParseFloat(fs, 64)
			if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
				return nil, fmt.Errorf("%s:%d: field %d: %q is not a number", name, line, i+1, fs)
			}
			xyz[i] = x
		}
		a.East = append(a.East, xyz[0])
		a.North = append(a.North, xyz[1])
		a.Up = append(a.Up, xyz[2])
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if !haveLat {
		return nil, fmt.Errorf("%s: no \"latitude:\" line", name)
	}
	if len(a.East) < 2 {
		return nil, fmt.Errorf("%s: %d antennas; an array needs at least 2", name, len(a.East))
	}
	return a, nil
}

// ReadArrayFile reads the antenna file at path (see ReadArray).
func ReadArrayFile(path string) (*Array, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadArray(f, path)
}

// Observation describes an earth-rotation synthesis: where the source is,
// how long it is tracked, and the frequency channels.
type Observation struct {
	// Dec is the declination of the phase centre in degrees; RA its right
	// ascension (only recorded in the table's metadata).
	RA, Dec float64
	// HAStart and HAEnd bound the hour angle in hours; the integrations
	// are centred at HAStart + (i + ½) Δ for the integration time Δ.
	HAStart, HAEnd float64
	// Integration is the integration time τ per visibility in seconds.
	Integration float64
	// Freqs are the channel centre frequencies in Hz and ChanWidth the
	// channel width Δν in Hz.
	Freqs     []float64
	ChanWidth float64
	// Products is the number of correlation products averaged into the
	// Stokes I visibility (two parallel hands, the usual case): 1 or 2;
	// zero means 2. See RadiometerSigma.
	Products int
	// MinElevation is the elevation limit in degrees: integrations with
	// the source lower are not made. Zero means the horizon.
	MinElevation float64
}

// RadiometerSigma returns the thermal noise σ in Jy of the real part, and
// equally of the imaginary part, of one visibility of a baseline between two
// antennas of system equivalent flux density sefd Jy, for channel width dnu
// Hz and integration time tau s, when products correlation products (1 or 2)
// are averaged:
//
//	σ = SEFD / √(2 Δν τ)            one correlation product,
//	σ = SEFD / √(2 Δν τ) / √2       Stokes I from two products.
//
// The first is the radiometer equation for a complex correlator output, the
// noise of each part being 1/√2 of the noise of the amplitude sum
// SEFD/√(Δν τ) (Thompson, Moran & Swenson 2017, §6.2, the sensitivity of
// a two-element interferometer, eq. 6.50 as we recall the numbering); the
// second averages two independent products.
//
// References:
//
//   - Thompson A. R., Moran J. M. & Swenson G. W. 2017, Interferometry and
//     Synthesis in Radio Astronomy, 3rd ed., Springer, ch. 6 (from memory).
func RadiometerSigma(sefd, dnu, tau float64, products int) float64 {
	if products != 1 && products != 2 {
		panic("uv: RadiometerSigma: products must be 1 or 2")
	}
	return sefd / math.Sqrt(2*dnu*tau*float64(products))
}

// BaselineXYZ returns the equatorial components (X, Y, Z) in metres of the
// baseline from antenna i to antenna j (r_j − r_i) of a: X in the meridian
// plane toward hour angle 0 on the celestial equator, Y toward hour angle
// −6 h (east), Z toward the north celestial pole. From the local east E,
// north N and up U at latitude φ,
//
//	X = −N sin φ + U cos φ,   Y = E,   Z = N cos φ + U sin φ
//
// (Thompson, Moran & Swenson 2017, eq. 4.4 written for east/north/up
// components).
func (a *Array) BaselineXYZ(i, j int) (x, y, z float64) {
	s, c := math.Sincos(a.Latitude * math.Pi / 180)
	de := a.East[j] - a.East[i]
	dn := a.North[j] - a.North[i]
	du := a.Up[j] - a.Up[i]
	return -dn*s + du*c, de, dn*c + du*s
}

// UVW returns the (u, v, w) components, in the units of x, y, z, of the
// equatorial baseline (x, y, z) toward a source at hour angle h and
// declination dec, both in radians (Thompson, Moran & Swenson 2017, eq. 4.1):
//
//	u =  sin H X + cos H Y
//	v = −sin δ cos H X + sin δ sin H Y + cos δ Z
//	w =  cos δ cos H X − cos δ sin H Y + sin δ Z
//
// Over a day (u, v) traces the ellipse u² + ((v − Z cos δ)/sin δ)² = X² + Y².
func UVW(x, y, z, h, dec float64) (u, v, w float64) {
	sh, ch := math.Sincos(h)
	sd, cd := math.Sincos(dec)
	u = sh*x + ch*y
	v = -sd*ch*x + sd*sh*y + cd*z
	w = cd*ch*x - cd*sh*y + sd*z
	return u, v, w
}

// Synthesize returns the rows of an earth-rotation synthesis of a and obs:
// every baseline (i < j), every integration and every channel, with u, v, w
// in wavelengths, time (seconds from the first integration), ant1, ant2,
// chan and freq columns, zero visibilities and the radiometer weights
// 1/σ² (see RadiometerSigma; weight 1 when a.SEFD is zero). Its metadata
// carries the array's name, dish, the mean frequency and the phase centre.
func Synthesize(a *Array, obs Observation) (*Dataset, error) {
	switch {
	case len(a.East) < 2 || len(a.North) != len(a.East) || len(a.Up) != len(a.East):
		return nil, errors.New("uv: Synthesize: the array needs ≥ 2 antennas with east, north and up each")
	case len(a.East) > math.MaxInt16:
		return nil, fmt.Errorf("uv: Synthesize: %d antennas, at most %d", len(a.East), math.MaxInt16)
	case obs.Integration <= 0:
		return nil, fmt.Errorf("uv: Synthesize: integration time %g s must be > 0", obs.Integration)
	case !(obs.HAEnd > obs.HAStart):
		return nil, fmt.Errorf("uv: Synthesize: hour-angle range [%g, %g] h is empty", obs.HAStart, obs.HAEnd)
	case len(obs.Freqs) == 0:
		return nil, errors.New("uv: Synthesize: no frequency channels")
	case obs.Dec < -90 || obs.Dec > 90:
		return nil, fmt.Errorf("uv: Synthesize: declination %g outside [-90, 90] degrees", obs.Dec)
	}
	for _, f := range obs.Freqs {
		if !(f > 0) || math.IsInf(f, 0) {
			return nil, fmt.Errorf("uv: Synthesize: channel frequency %g Hz must be > 0", f)
		}
	}
	products := obs.Products
	if products == 0 {
		products = 2
	}
	if products != 1 && products != 2 {
		return nil, fmt.Errorf("uv: Synthesize: %d correlation products; want 1 or 2", obs.Products)
	}
	weight := 1.0
	if a.SEFD > 0 {
		if !(obs.ChanWidth > 0) {
			return nil, fmt.Errorf("uv: Synthesize: channel width %g Hz must be > 0 for thermal noise", obs.ChanWidth)
		}
		s := RadiometerSigma(a.SEFD, obs.ChanWidth, obs.Integration, products)
		weight = 1 / (s * s)
	}
	// Hour angle advances 2π per sidereal day.
	dha := obs.Integration / SiderealDay * 24 // hours per integration
	nt := int(math.Floor((obs.HAEnd-obs.HAStart)/dha + 1e-9))
	if nt < 1 {
		return nil, fmt.Errorf("uv: Synthesize: hour-angle range %g h is shorter than one integration", obs.HAEnd-obs.HAStart)
	}
	dec := obs.Dec * math.Pi / 180
	lat := a.Latitude * math.Pi / 180
	sinElMin := math.Sin(obs.MinElevation * math.Pi / 180)
	na := len(a.East)
	nb := na * (na - 1) / 2
	d := &Dataset{}
	d.Meta = Meta{Label: a.Name, Dish: a.Dish, RA: obs.RA, Dec: obs.Dec, HasPhaseCentre: true}
	var fsum float64
	for _, f := range obs.Freqs {
		fsum += f
	}
	d.Meta.Freq = fsum / float64(len(obs.Freqs))
	d.Freqs = append([]float64(nil), obs.Freqs...)
	type bl struct {
		i, j    int
		x, y, z float64
	}
	bls := make([]bl, 0, nb)
	for i := 0; i < na; i++ {
		for j := i + 1; j < na; j++ {
			x, y, z := a.BaselineXYZ(i, j)
			bls = append(bls, bl{i, j, x, y, z})
		}
	}
	for t := 0; t < nt; t++ {
		haHours := obs.HAStart + (float64(t)+0.5)*dha
		h := haHours * math.Pi / 12
		sinEl := math.Sin(lat)*math.Sin(dec) + math.Cos(lat)*math.Cos(dec)*math.Cos(h)
		if sinEl < sinElMin {
			continue
		}
		tsec := float64(t) * obs.Integration
		for _, b := range bls {
			um, vm, wm := UVW(b.x, b.y, b.z, h, dec)
			for c, f := range obs.Freqs {
				s := f / SpeedOfLight
				d.U = append(d.U, um*s)
				d.V = append(d.V, vm*s)
				d.W = append(d.W, wm*s)
				d.Re = append(d.Re, 0)
				d.Im = append(d.Im, 0)
				d.Weight = append(d.Weight, weight)
				d.Time = append(d.Time, tsec)
				d.Ant1 = append(d.Ant1, int16(b.i))
				d.Ant2 = append(d.Ant2, int16(b.j))
				d.Chan = append(d.Chan, int32(c))
				d.FreqIndex = append(d.FreqIndex, uint32(c))
			}
		}
	}
	if d.Len() == 0 {
		return nil, fmt.Errorf("uv: Synthesize: the source (declination %g°) is below %g° elevation at latitude %g° for the whole hour-angle range", obs.Dec, obs.MinElevation, a.Latitude)
	}
	return d, nil
}

// AddNoise adds independent Gaussian noise of standard deviation 1/√w_k to
// the real and the imaginary part of every row of d, drawing from rnd.
func AddNoise(d *Dataset, rnd *rand.Rand) {
	if rnd == nil {
		panic("uv: AddNoise: nil *rand.Rand")
	}
	for k, w := range d.Weight {
		s := 1 / math.Sqrt(w)
		d.Re[k] += s * rnd.NormFloat64()
		d.Im[k] += s * rnd.NormFloat64()
	}
}
