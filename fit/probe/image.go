package probe

import (
	"errors"
	"math"

	"deflect/uv"
	"deflect/uv/nufft"
)

// Imager makes dirty images of visibilities at the rows of a Rows on a small
// cut-out of a user's image grid around the probed position, with the
// imaging weights (natural, uniform or Briggs) of the full grid, so that its
// pixels equal those of the user's dirty image,
//
//	I(x) = Σ_k W_k Re(V_k exp(+2πi (u_k l + v_k m))) / Σ_k W_k   (Jy/beam).
//
// An Imager is not safe for concurrent use; Clone makes one that is
// independent.
type Imager struct {
	// Cut is the cut-out grid, on the pixel lattice of the full grid.
	Cut uv.Grid
	// Inside lists the flat indices of Cut's pixels within the radius of
	// the position.
	Inside []int
	// Noise is the expected rms of the image in Jy/beam from the weights,
	// √(Σ W_k²/w_k) / Σ W_k.
	Noise float64

	iw    []float64
	sumW  float64
	phase []complex128
	x, y  []float64
	tol   float64
	plan  *nufft.Plan
	coef  []complex128
}

// NewImager returns an Imager for the rows of r imaged on the full grid g
// with the given weighting, cut out around (x0, y0) to cover radius arcsec.
func NewImager(r *Rows, g uv.Grid, w uv.Weighting, robust, x0, y0, radius float64) (*Imager, error) {
	if r.Len() == 0 {
		return nil, errors.New("probe: no visibilities to image")
	}
	d := &uv.Dataset{U: r.U, V: r.V, Weight: r.W, Re: make([]float64, r.Len()), Im: make([]float64, r.Len())}
	iw, err := uv.ImagingWeights(d, g, w, robust)
	if err != nil {
		return nil, err
	}
	fi, fj := g.Pix(x0, y0)
	ci, cj := math.Round(fi), math.Round(fj)
	xc, yc := g.XY(int(ci), int(cj))
	n := 2*int(math.Ceil(radius/g.Pixel)) + 4
	n = uv.FFTSize(n)
	im := &Imager{Cut: uv.Grid{N: n, Pixel: g.Pixel, X0: xc, Y0: yc}, iw: iw, tol: 1e-9}
	var sumW2 float64
	p := 2 * math.Pi * g.Pixel / uv.ArcsecPerRadian
	lc, mc := xc/uv.ArcsecPerRadian, yc/uv.ArcsecPerRadian
	im.phase = make([]complex128, r.Len())
	im.x = make([]float64, r.Len())
	im.y = make([]float64, r.Len())
	for k := range iw {
		im.sumW += iw[k]
		sumW2 += iw[k] * iw[k] / r.W[k]
		s, c := math.Sincos(2 * math.Pi * (r.U[k]*lc + r.V[k]*mc))
		im.phase[k] = complex(iw[k]*c, iw[k]*s)
		im.x[k], im.y[k] = -p*r.U[k], p*r.V[k]
	}
	im.Noise = math.Sqrt(sumW2) / im.sumW
	disc := Disc{X: x0, Y: y0, R: radius}
	for k := 0; k < im.Cut.Len(); k++ {
		x, y := im.Cut.Centre(k)
		if disc.Contains(x, y) || (x-x0)*(x-x0)+(y-y0)*(y-y0) == radius*radius {
			im.Inside = append(im.Inside, k)
		}
	}
	if len(im.Inside) == 0 {
		// A radius below half a pixel still probes the nearest pixel.
		im.Inside = []int{(n/2)*n + n/2}
	}
	return im, im.init()
}

func (im *Imager) init() error {
	plan, err := nufft.NewPlan(im.Cut.N, im.tol)
	if err != nil {
		return err
	}
	plan.SetPoints(im.x, im.y)
	im.plan = plan
	im.coef = make([]complex128, len(im.x))
	return nil
}

// Clone returns an independent Imager sharing the read-only tables of im.
func (im *Imager) Clone() (*Imager, error) {
	c := *im
	c.plan, c.coef = nil, nil
	return &c, c.init()
}

// Image returns the dirty image of the visibilities vis (one per row) on Cut,
// in Jy/beam, into dst (allocated when nil).
func (im *Imager) Image(dst []float64, vis []complex128) []float64 {
	for k, v := range vis {
		im.coef[k] = v * im.phase[k]
	}
	f := im.plan.Type1(nil, im.coef, +1)
	if dst == nil {
		dst = make([]float64, len(f))
	}
	for k := range f {
		dst[k] = real(f[k]) / im.sumW
	}
	return dst
}

// Peak returns the largest pixel value of img inside the radius and the
// sky position of that pixel.
func (im *Imager) Peak(img []float64) (peak, x, y float64) {
	best := im.Inside[0]
	for _, k := range im.Inside {
		if img[k] > img[best] {
			best = k
		}
	}
	x, y = im.Cut.Centre(best)
	return img[best], x, y
}

// ValueAt returns the value of img at the cut-out pixel nearest (x, y).
func (im *Imager) ValueAt(img []float64, x, y float64) float64 {
	fi, fj := im.Cut.Pix(x, y)
	i, j := int(math.Round(fi)), int(math.Round(fj))
	n := im.Cut.N
	i, j = max(0, min(n-1, i)), max(0, min(n-1, j))
	return img[j*n+i]
}
