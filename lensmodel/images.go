package lensmodel

import (
	"errors"
	"fmt"
	"math"
	"reflect"
	"sort"
	"strings"
)

// Centre is the centre of a mass component in arcsec.
type Centre struct {
	X, Y float64
}

// Centred is implemented by mass distributions that know the centres of
// their components. CriticalCurves and FindImages refine their grids to the
// finest level there, start extra Newton iterations there (central images
// hide within a core radius of a centre), and test each centre for a
// singularity that removes the central image. Without it, a Lens is
// searched component by component, and a component struct with float64
// fields X and Y (every component of this package except Shear and Sheet)
// is taken to be centred there.
type Centred interface {
	Centres() []Centre
}

// centresOf lists the centres of m's components.
func centresOf(m Mass) []Centre {
	switch v := m.(type) {
	case Centred:
		return v.Centres()
	case Lens:
		var cs []Centre
		for _, c := range v {
			cs = append(cs, centresOf(c)...)
		}
		return cs
	case Shear, Sheet:
		// Uniform fields: their X, Y are a reference point, not a centre.
		return nil
	}
	// The components of this package (SIE, PointMass, PowerLaw, NFW, …)
	// are structs with float64 fields X and Y for their centre.
	rv := reflect.ValueOf(m)
	if rv.Kind() == reflect.Pointer {
		rv = rv.Elem()
	}
	if rv.Kind() != reflect.Struct {
		return nil
	}
	fx, fy := rv.FieldByName("X"), rv.FieldByName("Y")
	if fx.IsValid() && fy.IsValid() && fx.Kind() == reflect.Float64 && fy.Kind() == reflect.Float64 {
		return []Centre{{fx.Float(), fy.Float()}}
	}
	return nil
}

// singularKind classifies the deflection field at a component centre.
type singularKind int

const (
	regularCentre     singularKind = iota // α → 0 continuously: a central image can form
	boundedSingular                       // |α| stays finite but does not vanish (isothermal cusp)
	unboundedSingular                     // |α| grows without bound (point mass, cusps steeper than isothermal)
)

// singularProbe is the smallest distance in arcsec from a centre at which
// the deflection is sampled to detect a singularity.
const singularProbe = 1e-8

// radialDeflection returns the mean over directions of α(c + r e)·e, the
// mean radial deflection on a circle of radius r about c (positive for
// attracting mass, since β = θ − α). Smooth fields (other components,
// shear) contribute O(r); a singular centre a finite or growing amount.
func radialDeflection(m Mass, c Centre, r float64) float64 {
	const n = 16
	var sum float64
	for k := 0; k < n; k++ {
		s, co := math.Sincos(2 * math.Pi * (float64(k) + 0.25) / n)
		ax, ay := m.Deflect(c.X+r*co, c.Y+r*s)
		sum += ax*co + ay*s
	}
	return sum / n
}

// singularity decides whether the central image at c is infinitely
// demagnified: the mean radial deflection at 10⁻⁸″ is not smaller than 0.9
// times its value at 10⁻⁶″ (for κ ∝ r^−t this holds when t ≳ 0.98; a core of
// radius s ≳ 10⁻⁷″ counts as regular) and exceeds 10⁻⁷″.
func singularity(m Mass, c Centre) singularKind {
	near := radialDeflection(m, c, singularProbe)
	far := radialDeflection(m, c, 100*singularProbe)
	if !(near > 1e-7) || near < 0.9*far {
		return regularCentre
	}
	if near > 3*far {
		return unboundedSingular
	}
	return boundedSingular
}

// ImageKind says whether an image is at a minimum, saddle point or maximum
// of the Fermat potential.
type ImageKind int

// The kinds of image, from the eigenvalues of A (Schneider, Ehlers & Falco
// 1992, sect. 5.4).
const (
	Minimum ImageKind = iota // det A > 0, tr A > 0: positive parity
	Saddle                   // det A < 0: negative parity
	Maximum                  // det A > 0, tr A < 0: positive parity (central images)
)

// String returns "minimum", "saddle" or "maximum".
func (k ImageKind) String() string {
	switch k {
	case Minimum:
		return "minimum"
	case Saddle:
		return "saddle"
	case Maximum:
		return "maximum"
	}
	return fmt.Sprintf("ImageKind(%d)", int(k))
}

// Image is one image of a point source.
type Image struct {
	X, Y   float64   // position in arcsec
	Mu     float64   // signed magnification 1/det A (negative for saddles)
	Parity int       // +1 for minima and maxima, −1 for saddle points
	Kind   ImageKind // minimum, saddle or maximum of the Fermat potential
	// Fermat is the Fermat potential φ = ½|θ − β|² − ψ(θ) in arcsec².
	Fermat float64
	// Delay is the arrival time after the first image in days,
	// ImageOptions.DelayScale × (φ − φ_first); zero when DelayScale is 0.
	Delay float64
}

// ImageOptions are the settings of FindImages. The zero value is the
// documented default for every field.
type ImageOptions struct {
	// CentreX, CentreY and HalfWidth give the square searched in arcsec.
	// HalfWidth 0 means automatic: CurveOptions' automatic half-width plus
	// the source's distance from the centre.
	CentreX, CentreY, HalfWidth float64
	// Grid is the number of base cells per side, at most 512; 0 means 64.
	Grid int
	// Depth is the number of quadtree refinements, at most 14; 0 means 10.
	Depth int
	// DelayScale converts Fermat potential differences (arcsec²) into days,
	// e.g. Cosmology.DelayScale(zl, zs); 0 leaves Delay zero.
	DelayScale float64
	// Tol is the accepted residual |θ − α(θ) − β| in arcsec; 0 means 1e-10.
	Tol float64
	// MaxCells bounds the number of cells examined; 0 means 4 000 000.
	MaxCells int
}

// ImageResult is what FindImages returns.
type ImageResult struct {
	// Images are sorted by arrival time, the first-arriving image first.
	Images []Image
	// SingularCentres are the component centres where the deflection does
	// not vanish (singular isothermal cores, point masses, steeper cusps).
	// A central image that would form there is infinitely demagnified: it
	// is absent from Images, and for non-singular lenses the image count
	// would be one larger.
	SingularCentres []Centre
}

// CentralNote returns a sentence for users when a singular centre removes
// the central image, and "" otherwise.
func (r *ImageResult) CentralNote() string {
	if len(r.SingularCentres) == 0 {
		return ""
	}
	var b strings.Builder
	b.WriteString("the central image is infinitely demagnified (singular mass profile) at ")
	for i, c := range r.SingularCentres {
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "(%.4g, %.4g)", c.X, c.Y)
	}
	b.WriteString(" arcsec; a core or shallower inner profile is needed for a visible central image")
	return b.String()
}

// FindImages returns every image of a point source at (bx, by) in arcsec
// behind the lens m.
//
// The image plane is tiled by an adaptive quadtree of squares, each split
// into two triangles that are mapped to the source plane through the lens
// equation β = θ − α(θ). A cell is split further when the source lies in
// (a generous box around) its mapped footprint and the map is not close to
// linear over it (mapped midpoints more than 2% of the footprint away from
// the means of their ends), det A changes sign or varies fast within it,
// or when it holds a component centre; this finds
// the close image pairs near critical curves and the faint central images
// of cored lenses. Every mapped triangle that contains the source seeds a
// damped Newton iteration on the lens equation (as do the centres); the
// converged solutions are de-duplicated. Newton's method is also started
// from the source position, so the outer image of a distant source is
// found even outside the square.
//
// References:
//   - Schneider P., Ehlers J., Falco E. E., 1992, Gravitational Lenses
//     (Springer), sect. 5.3 (Fermat potential, time delay eq. 5.45) and
//     sect. 5.4 (image classification by the eigenvalues of A).
//   - Keeton C. R., 2001, arXiv:astro-ph/0102340 (the tiling-and-Newton
//     strategy for solving the lens equation).
func FindImages(m Mass, bx, by float64, opt ImageOptions) (*ImageResult, error) {
	if math.IsNaN(bx) || math.IsNaN(by) || math.IsInf(bx, 0) || math.IsInf(by, 0) {
		return nil, fmt.Errorf("lensmodel: source position (%v, %v) is not finite", bx, by)
	}
	centres := centresOf(m)
	fast := prepared(m)
	s, err := opt.settings(fast, bx, by, centres)
	if err != nil {
		return nil, err
	}
	g := s.curve.newGrid(m, fast, true)
	m = fast
	var beta blockCache[[2]float64]
	mapped := func(i, j int) (float64, float64) {
		if i%g.stride == 0 && j%g.stride == 0 {
			k := (i/g.stride)*g.nc + j/g.stride
			return g.cbx[k], g.cby[k]
		}
		b := beta.get(i, j, func() [2]float64 {
			x, y := g.pos(i, j)
			ax, ay := m.Deflect(x, y)
			return [2]float64{x - ax, y - ay}
		})
		return b[0], b[1]
	}
	f := finder{m: m, bx: bx, by: by, tol: s.tol, scale: s.curve.half}
	err = g.walk(s.curve.maxCells, func(i, j, size int) bool {
		if f.overflow {
			return false
		}
		if g.containsCentre(i, j, size, centres) {
			return true
		}
		// Bounding box of the mapped 3×3 samples, enlarged by half its size.
		h := size / 2
		var px, py [3][3]float64
		lox, loy, hix, hiy := math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)
		for a := 0; a <= 2; a++ {
			for b := 0; b <= 2; b++ {
				x, y := mapped(i+a*h, j+b*h)
				px[a][b], py[a][b] = x, y
				lox, hix = math.Min(lox, x), math.Max(hix, x)
				loy, hiy = math.Min(loy, y), math.Max(hiy, y)
			}
		}
		ext := math.Max(hix-lox, hiy-loy)
		pad := 0.5*ext + 1e-12
		if !(bx >= lox-pad && bx <= hix+pad && by >= loy-pad && by <= hiy+pad) {
			return false
		}
		// Split where the map is far from linear over the cell, so that the
		// triangles' linear interpolation misses no image: compare the
		// mapped midpoints with the means of the mapped ends.
		dev := math.Max(
			math.Hypot(px[1][1]-(px[0][0]+px[2][2])/2, py[1][1]-(py[0][0]+py[2][2])/2),
			math.Hypot(px[1][1]-(px[2][0]+px[0][2])/2, py[1][1]-(py[2][0]+py[0][2])/2))
		for k := 0; k <= 2; k += 2 {
			dev = math.Max(dev, math.Hypot(px[1][k]-(px[0][k]+px[2][k])/2, py[1][k]-(py[0][k]+py[2][k])/2))
			dev = math.Max(dev, math.Hypot(px[k][1]-(px[k][0]+px[k][2])/2, py[k][1]-(py[k][0]+py[k][2])/2))
		}
		if !(dev <= s.nonlin*ext) {
			return true
		}
		return g.refineDet(i, j, size, s.curve.varTol)
	}, func(i, j, size int) {
		v := [4][2]int{{i, j}, {i + size, j}, {i + size, j + size}, {i, j + size}}
		var p, q [4][2]float64
		for k, c := range v {
			p[k][0], p[k][1] = g.pos(c[0], c[1])
			q[k][0], q[k][1] = mapped(c[0], c[1])
		}
		f.triangle(p[0], p[1], p[2], q[0], q[1], q[2])
		f.triangle(p[0], p[2], p[3], q[0], q[2], q[3])
	})
	if err != nil {
		return nil, err
	}
	res := &ImageResult{}
	// The outermost image of a source far from the lens lies near the
	// source itself, possibly outside the square.
	f.newton(bx, by)
	for _, c := range centres {
		switch singularity(m, c) {
		case regularCentre:
			// Central images of small cores lie within a few core radii.
			f.newton(c.X, c.Y)
			for _, r := range []float64{1e-6, 1e-4, 1e-2} {
				d := math.Hypot(bx-c.X, by-c.Y)
				ux, uy := 1.0, 0.0
				if d > 0 {
					ux, uy = (bx-c.X)/d, (by-c.Y)/d
				}
				f.newton(c.X+r*ux, c.Y+r*uy)
				f.newton(c.X-r*ux, c.Y-r*uy)
			}
		default:
			res.SingularCentres = append(res.SingularCentres, c)
		}
	}
	if f.overflow {
		return nil, fmt.Errorf("%w: more than %d images of the source at (%g, %g)", ErrRingSource, MaxImages, bx, by)
	}
	res.Images = f.images
	sort.Slice(res.Images, func(a, b int) bool { return res.Images[a].Fermat < res.Images[b].Fermat })
	if s.delayScale != 0 && len(res.Images) > 0 {
		f0 := res.Images[0].Fermat
		for k := range res.Images {
			res.Images[k].Delay = s.delayScale * (res.Images[k].Fermat - f0)
		}
	}
	return res, nil
}

type imageSettings struct {
	curve      curveSettings
	nonlin     float64
	tol        float64
	delayScale float64
}

func (o ImageOptions) settings(m Mass, bx, by float64, centres []Centre) (imageSettings, error) {
	co := CurveOptions{CentreX: o.CentreX, CentreY: o.CentreY, HalfWidth: o.HalfWidth, Grid: o.Grid, Depth: o.Depth, MaxCells: o.MaxCells}
	if co.Depth == 0 {
		co.Depth = 10
	}
	s := imageSettings{tol: o.Tol, delayScale: o.DelayScale, nonlin: 0.02}
	if s.tol == 0 {
		s.tol = 1e-10
	}
	if !(s.tol > 0) {
		return s, fmt.Errorf("lensmodel: images: Tol = %v, want > 0", o.Tol)
	}
	if math.IsNaN(s.delayScale) || math.IsInf(s.delayScale, 0) {
		return s, fmt.Errorf("lensmodel: images: DelayScale = %v is not finite", o.DelayScale)
	}
	auto := co.HalfWidth == 0
	var err error
	if s.curve, err = co.settings(m, centres); err != nil {
		return s, err
	}
	if auto {
		s.curve.half += math.Max(math.Abs(bx-co.CentreX), math.Abs(by-co.CentreY))
	}
	return s, nil
}

// finder accumulates converged, distinct images.
type finder struct {
	m        Mass
	bx, by   float64
	tol      float64
	scale    float64
	images   []Image
	overflow bool // more than MaxImages solutions
}

// triangle seeds Newton's method when the mapped triangle (q0, q1, q2)
// contains the source, from the image-plane point with the same barycentric
// coordinates in (p0, p1, p2).
func (f *finder) triangle(p0, p1, p2, q0, q1, q2 [2]float64) {
	if f.overflow {
		return
	}
	d := (q1[0]-q0[0])*(q2[1]-q0[1]) - (q2[0]-q0[0])*(q1[1]-q0[1])
	if d == 0 || math.IsNaN(d) || math.IsInf(d, 0) {
		return
	}
	u := ((f.bx-q0[0])*(q2[1]-q0[1]) - (q2[0]-q0[0])*(f.by-q0[1])) / d
	v := ((q1[0]-q0[0])*(f.by-q0[1]) - (f.bx-q0[0])*(q1[1]-q0[1])) / d
	// The map deviates from linear by up to nonlin of the footprint within
	// a leaf, so accept sources slightly outside the linear triangle.
	const slack = 0.05
	if u < -slack || v < -slack || u+v > 1+slack {
		return
	}
	f.newton(p0[0]+u*(p1[0]-p0[0])+v*(p2[0]-p0[0]), p0[1]+u*(p1[1]-p0[1])+v*(p2[1]-p0[1]))
}

// newton solves θ − α(θ) = β from (x, y) with a backtracking line search on
// the residual and keeps the solution when it converges.
func (f *finder) newton(x, y float64) {
	m := f.m
	res := func(x, y float64) (rx, ry float64) {
		ax, ay := m.Deflect(x, y)
		return x - ax - f.bx, y - ay - f.by
	}
	rx, ry := res(x, y)
	r := math.Hypot(rx, ry)
	for it := 0; it < 100 && !(r <= f.tol); it++ {
		hxx, hxy, hyy := m.Hessian(x, y)
		a11, a12, a22 := 1-hxx, -hxy, 1-hyy
		det := a11*a22 - a12*a12
		if det == 0 || math.IsNaN(det) || math.IsInf(det, 0) {
			return
		}
		dx := -(a22*rx - a12*ry) / det
		dy := -(-a12*rx + a11*ry) / det
		// Keep steps within the search scale; singular points make the
		// Jacobian nearly singular and the raw step huge.
		if l := math.Hypot(dx, dy); l > f.scale {
			dx, dy = dx*f.scale/l, dy*f.scale/l
		}
		t := 1.0
		var nx, ny, nrx, nry, nr float64
		for k := 0; k < 40; k++ {
			nx, ny = x+t*dx, y+t*dy
			nrx, nry = res(nx, ny)
			nr = math.Hypot(nrx, nry)
			if nr < r {
				break
			}
			t /= 2
		}
		if !(nr < r) {
			return
		}
		x, y, rx, ry, r = nx, ny, nrx, nry, nr
	}
	if !(r <= f.tol) {
		return
	}
	f.add(x, y)
}

// dupDist is the distance in arcsec below which two solutions are the same
// image.
const dupDist = 1e-7

// MaxImages is the number of distinct images beyond which FindImages gives
// up with ErrRingSource: only a source on a caustic (e.g. exactly behind
// the centre of a circular lens, imaged into an Einstein ring) has so many.
const MaxImages = 100

// ErrRingSource is returned, wrapped, when the images of a point source
// form a continuum: the source sits on a caustic of a lens, such as the
// point caustic of a circularly symmetric lens.
var ErrRingSource = errors.New("lensmodel: the images form a ring or arc (source on a caustic); move the source off it")

func (f *finder) add(x, y float64) {
	if len(f.images) >= MaxImages {
		f.overflow = true
		return
	}
	for _, im := range f.images {
		if math.Hypot(im.X-x, im.Y-y) < dupDist {
			return
		}
	}
	m := f.m
	hxx, hxy, hyy := m.Hessian(x, y)
	det := (1-hxx)*(1-hyy) - hxy*hxy
	tr := 2 - hxx - hyy
	im := Image{X: x, Y: y, Mu: 1 / det, Parity: 1, Kind: Minimum}
	switch {
	case det < 0:
		im.Parity, im.Kind = -1, Saddle
	case tr < 0:
		im.Kind = Maximum
	}
	dx, dy := x-f.bx, y-f.by
	im.Fermat = 0.5*(dx*dx+dy*dy) - m.Potential(x, y)
	f.images = append(f.images, im)
}
