package probe

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"

	"gonum.org/v1/gonum/mat"

	"deflect/fit"
	"deflect/lensmodel"
	"deflect/source"
	"deflect/uv"
)

// ExactLikelihood returns ln L(θ) of m for the datasets data (data[i] is the
// dataset of m.Data[i]) with the model visibilities of sky,
//
//	ln L = −½ Σ_k w_k |d_k − V_k(θ)|² − Σ_k ln(2π/w_k),
//
// the Gaussian likelihood of the real and imaginary parts with its
// normalisation, so that evidences of different models compare. The model
// visibilities are exact at every (u, v) (rendered grid through the NUFFT,
// point images summed directly), so the cost grows with the number of
// visibilities; the fit package's compressed likelihood does not.
func ExactLikelihood(sky *Sky, data []*uv.Dataset) func(theta []float64) float64 {
	var norm float64
	for _, d := range data {
		for k, w := range d.Weight {
			if !d.Flagged(k) {
				norm -= math.Log(2 * math.Pi / w)
			}
		}
	}
	return func(theta []float64) float64 {
		var chi2 float64
		for i, d := range data {
			vis, err := sky.Visibilities(theta, i, d, Disc{})
			if err != nil {
				return math.Inf(-1)
			}
			for k, v := range vis {
				if d.Flagged(k) {
					continue
				}
				dr, di := d.Re[k]-real(v), d.Im[k]-imag(v)
				chi2 += d.Weight[k] * (dr*dr + di*di)
			}
		}
		return -0.5*chi2 + norm
	}
}

// ModelFit is the best fit of one model file to the data.
type ModelFit struct {
	Name string `json:"name"`
	// Theta is the best-fit free-parameter vector (maximum a posteriori),
	// in the order of Model.Free, with ParamNames naming them.
	Theta      []float64 `json:"theta"`
	ParamNames []string  `json:"params"`
	// Chi2 is χ² at Theta, LogLike ln L and Visibilities the number of
	// complex visibilities (2 real values each).
	Chi2         float64 `json:"chi2"`
	LogLike      float64 `json:"log_like"`
	Visibilities int     `json:"visibilities"`
	// BIC = k ln n − 2 ln L with k free parameters and n = 2 × Visibilities
	// real data values (Schwarz 1978).
	BIC float64 `json:"bic"`
	// LogZ is the evidence: from nested sampling for a fit directory
	// that has it (LogZErr its error), otherwise the Laplace
	// approximation,
	//
	//	ln Z ≈ ln L(θ̂) + ln π(θ̂) + (k/2) ln 2π + ½ ln det Σ,
	//
	// Σ the inverse Hessian of −ln(L π) at θ̂; NaN when Σ is not available
	// (LogZNote says why).
	LogZ     float64  `json:"-"`
	LogZJSON *float64 `json:"log_z"` // LogZ, null when NaN
	LogZErr  float64  `json:"log_z_err,omitempty"`
	LogZNote string   `json:"log_z_note,omitempty"`
	// LogZMethod says how ln Z was computed.
	LogZMethod string `json:"log_z_method"`
	// Evaluations counts likelihood calls.
	Evaluations int `json:"evaluations"`

	// Samples, when not nil, are equally weighted posterior draws of the
	// free parameters (from a fit directory's posterior.csv); otherwise
	// predictions draw from N(Theta, Cov).
	Samples [][]float64 `json:"-"`

	Model *fit.Model    `json:"-"`
	Cov   *mat.SymDense `json:"-"`
}

// FitModel finds the maximum a posteriori parameters of m for its datasets,
// with the fit package's compressed likelihood (fit.NewLikelihood) and
// optimiser (fit.Optimize, the method "optimize" of deflect fit), from the
// model file's start values with one start and at most evals likelihood
// calls per phase (0 means 400), and the Laplace evidence.
func FitModel(ctx context.Context, name string, m *fit.Model, evals int, seed uint64) (*ModelFit, error) {
	if evals == 0 {
		evals = 400
	}
	l, err := fit.NewLikelihood(m, fit.LikelihoodOptions{})
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	mf := &ModelFit{Name: name, Model: m, Visibilities: l.Visibilities(), LogZMethod: "Laplace approximation at the optimum"}
	for _, q := range m.Free {
		mf.ParamNames = append(mf.ParamNames, q.Name)
	}
	kfree := len(m.Free)
	if kfree == 0 {
		mf.Theta = []float64{}
		mf.LogLike = l.LogLike(mf.Theta)
		mf.Evaluations = 1
		mf.LogZ = mf.LogLike
	} else {
		res, err := fit.Optimize(ctx, l.Problem(),
			fit.OptimizeSettings{Starts: -1, Start: m.Start(), MaxEvaluations: evals}, rand.New(rand.NewPCG(seed, 7)))
		if err != nil {
			return nil, fmt.Errorf("%s: %w", name, err)
		}
		mf.Theta, mf.LogLike, mf.Evaluations = res.X, res.LogLike, res.Evaluations
		if res.Covariance == nil {
			// The adaptive rendering at the default tolerance makes ln L
			// jagged on the scale of the Hessian's finite-difference
			// steps; a smoother rendering often gives a positive
			// definite Hessian. Polish the optimum and take the Hessian
			// there, with a tenth of the default tolerance.
			if ref, err := refineLaplace(ctx, m, res.X, seed); err == nil {
				mf.Evaluations += ref.Evaluations
				if ref.Covariance != nil {
					res.Covariance, res.LogPost = ref.Covariance, ref.LogPost
					mf.LogZMethod = fmt.Sprintf("Laplace approximation at the optimum, ln(L π) and Hessian from a rendering at RenderTol %g (at the default %g the Hessian was not positive definite)", laplaceRenderTol, fit.DefaultRenderTol)
				} else {
					res.CovarianceErr = fmt.Errorf("%v; also at RenderTol %g: %v", res.CovarianceErr, laplaceRenderTol, ref.CovarianceErr)
				}
			}
		}
		mf.Cov = res.Covariance
		mf.LogZ = math.NaN()
		if res.Covariance != nil {
			var chol mat.Cholesky
			if chol.Factorize(res.Covariance) {
				mf.LogZ = res.LogPost + 0.5*float64(kfree)*math.Log(2*math.Pi) + 0.5*chol.LogDet()
			} else {
				mf.LogZNote = "covariance not positive definite"
			}
		} else {
			mf.LogZNote = "no covariance at the optimum"
			if res.CovarianceErr != nil {
				mf.LogZNote += ": " + res.CovarianceErr.Error()
			}
		}
	}
	ev, err := l.Evaluate(mf.Theta)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	for _, d := range ev.Datasets {
		mf.Chi2 += d.Chi2 / (d.NoiseScale * d.NoiseScale)
	}
	mf.finish(kfree)
	return mf, nil
}

// laplaceRenderTol is the rendering tolerance of the second attempt at the
// Hessian (a tenth of fit.DefaultRenderTol). On the demo's cored halo the
// Hessian is not positive definite at 3e-2 and 1e-2 and is at 3e-3.
const laplaceRenderTol = 3e-3

// refineLaplace re-optimises m from x with the smoother rendering
// laplaceRenderTol and few likelihood calls, for the Hessian there.
func refineLaplace(ctx context.Context, m *fit.Model, x []float64, seed uint64) (*fit.OptimizeResult, error) {
	l, err := fit.NewLikelihood(m, fit.LikelihoodOptions{RenderTol: laplaceRenderTol})
	if err != nil {
		return nil, err
	}
	return fit.Optimize(ctx, l.Problem(),
		fit.OptimizeSettings{Starts: -1, Start: x, MaxEvaluations: 20}, rand.New(rand.NewPCG(seed, 8)))
}

// finish sets the BIC and the JSON form of ln Z.
func (mf *ModelFit) finish(kfree int) {
	if !math.IsNaN(mf.LogZ) {
		z := mf.LogZ
		mf.LogZJSON = &z
	}
	mf.BIC = float64(kfree)*math.Log(2*float64(mf.Visibilities)) - 2*mf.LogLike
}

// ModelTest compares a model that cannot make a central image (A) with one
// that can (B).
//
// References:
//
//   - Schwarz G. 1978, Annals of Statistics 6, 461 (the BIC and ln Z ≈
//     −BIC/2).
type ModelTest struct {
	A, B *ModelFit
	// DeltaChi2 = χ²_A − χ²_B and DeltaBIC = BIC_A − BIC_B (positive:
	// B preferred); LnBayes = ln Z_B − ln Z_A (Laplace approximation).
	DeltaChi2  float64 `json:"delta_chi2"`
	DeltaBIC   float64 `json:"delta_bic"`
	LnBayes    float64 `json:"-"`
	LnBayesErr float64 `json:"ln_bayes_factor_err,omitempty"`
	// LnBayesFrom names how LnBayes was obtained: "nested sampling",
	// "Laplace approximation" or "Schwarz approximation ΔBIC/2".
	LnBayesFrom string   `json:"ln_bayes_factor_from"`
	LnBayesJS   *float64 `json:"ln_bayes_factor_b_over_a"` // LnBayes, null when NaN
	// Method says how the fits and evidences were computed.
	Method string `json:"method"`
}

// CompareModels returns the model test of the fits a (no central image) and
// b (a central image).
func CompareModels(a, b *ModelFit) *ModelTest {
	method := "maximum a posteriori by Nelder–Mead and BFGS (fit.Optimize) on the compressed likelihood; evidence by " + a.LogZMethod
	if a.LogZMethod != b.LogZMethod {
		method += " (" + a.Name + ") and " + b.LogZMethod + " (" + b.Name + ")"
	}
	lnB := b.LogZ - a.LogZ
	var js *float64
	if !math.IsNaN(lnB) {
		js = &lnB
	}
	dBIC := a.BIC - b.BIC
	from := "Laplace approximation"
	if a.LogZMethod == "nested sampling" && b.LogZMethod == "nested sampling" {
		from = "nested sampling"
	}
	if math.IsNaN(lnB) {
		from = "Schwarz approximation ΔBIC/2"
		// Schwarz (1978): ln Z ≈ −BIC/2 to O(1), so ln B ≈ ΔBIC/2.
		lnB = dBIC / 2
		js = &lnB
		method += "; an evidence was unavailable (" + strings.TrimSpace(a.LogZNote+" "+b.LogZNote) +
			"), so ln B is the Schwarz approximation ΔBIC/2, good to O(1)"
	}
	return &ModelTest{A: a, B: b, LnBayesJS: js, LnBayesErr: math.Hypot(a.LogZErr, b.LogZErr),
		DeltaChi2: a.Chi2 - b.Chi2, DeltaBIC: dBIC, LnBayes: lnB, LnBayesFrom: from,
		Method: method}
}

// Prediction is the central image a model predicts.
type Prediction struct {
	Model string `json:"model"`
	// Present is false when the model makes no image of the source centre
	// within the radius; Note then says why (e.g. a singular core).
	Present bool   `json:"present"`
	Note    string `json:"note,omitempty"`
	// X, Y and Mu are the position (arcsec) and signed magnification of the
	// image of the first source component's centre (lensmodel.FindImages).
	X  float64 `json:"x_arcsec"`
	Y  float64 `json:"y_arcsec"`
	Mu float64 `json:"magnification"`
	// Flux is the model's flux inside the radius at the reference
	// frequency, Jy: the lensed rendering of the extended components summed
	// over the pixels whose centres lie inside, plus the point images
	// inside (exact for extended sources, which a point at the source
	// centre with |μ| S is not: part of a source may lie outside the
	// caustic that bounds the central image). FluxErr is its standard
	// deviation over Samples posterior draws (0 when there are none),
	// ErrFrom naming the posterior used.
	Flux    float64 `json:"flux_jy"`
	FluxErr float64 `json:"flux_err_jy"`
	// PointFlux is what the direct test would measure of the model's
	// emission inside the radius: the point-source flux fitted at the
	// measured position to the visibilities of that emission alone, with
	// the data's (u, v) and weights. It equals Flux for an unresolved image
	// and is smaller for a resolved one, and is what the measured flux is
	// compared with; PointFluxErr its spread over the posterior draws.
	PointFlux    float64 `json:"point_fit_flux_jy"`
	PointFluxErr float64 `json:"point_fit_flux_err_jy"`
	Samples      int     `json:"samples"`
	ErrFrom      string  `json:"err_from,omitempty"`
}

// centralImage returns the image of the first source component's centre
// nearest (x0, y0) within radius, for the model m at theta.
func centralImage(m *fit.Model, theta []float64, x0, y0, radius float64) (lensmodel.Image, bool, string, error) {
	lens, err := m.Lens(theta)
	if err != nil {
		return lensmodel.Image{}, false, "", err
	}
	src, err := m.Source(theta, 0)
	if err != nil {
		return lensmodel.Image{}, false, "", err
	}
	if len(src.Components) == 0 {
		return lensmodel.Image{}, false, "", errors.New("probe: the model has no parametric source")
	}
	bx, by := src.Components[0].Centre()
	res, err := lensmodel.FindImages(lens, bx, by, lensmodel.ImageOptions{})
	if err != nil {
		return lensmodel.Image{}, false, "", err
	}
	best, bd := -1, math.Inf(1)
	for i, im := range res.Images {
		if d := math.Hypot(im.X-x0, im.Y-y0); d <= radius && d < bd {
			best, bd = i, d
		}
	}
	if best < 0 {
		return lensmodel.Image{}, false, res.CentralNote(), nil
	}
	return res.Images[best], true, "", nil
}

// discFlux returns the model's flux inside disc at the reference frequency
// refFreq, Jy: rendered pixels of g inside plus point images inside.
func discFlux(m *fit.Model, theta []float64, g uv.Grid, refFreq float64, disc Disc) (float64, error) {
	lens, err := m.Lens(theta)
	if err != nil {
		return 0, err
	}
	src, err := m.Source(theta, refFreq)
	if err != nil {
		return 0, err
	}
	// Render only a box about the disc, at finer settings than a fit's.
	n := uv.FFTSize(2*int(math.Ceil(disc.R/g.Pixel)) + 4)
	fi, fj := g.Pix(disc.X, disc.Y)
	xc, yc := g.XY(int(math.Round(fi)), int(math.Round(fj)))
	box := uv.Grid{N: n, Pixel: g.Pixel, X0: xc, Y0: yc}
	img, _ := source.Render(nil, box, lens, src, source.RenderOptions{Tol: 1e-3, MaxDepth: 4})
	var f float64
	for k, v := range img {
		if x, y := box.Centre(k); disc.Contains(x, y) {
			f += v
		}
	}
	pts, err := source.LensedPoints(lens, src, source.PointOptions{})
	if err != nil {
		return 0, err
	}
	for _, p := range pts {
		if disc.Contains(p.X, p.Y) {
			f += p.Flux
		}
	}
	return f, nil
}

// Predict returns the central image the fit mf predicts within radius of
// (x0, y0) on the sky grid g (fluxes at refFreq Hz), with the spread of its
// flux over at most nsamp posterior draws: mf.Samples when set, otherwise
// draws (seeded by seed) from the Laplace posterior N(θ̂, Σ). pointFit,
// when not nil, returns the direct-test flux of the model's emission inside
// the radius for a parameter vector (see Prediction.PointFlux).
func Predict(mf *ModelFit, g uv.Grid, refFreq, x0, y0, radius float64, nsamp int, seed uint64,
	pointFit func(m *fit.Model, theta []float64) (float64, error)) (*Prediction, error) {
	im, ok, note, err := centralImage(mf.Model, mf.Theta, x0, y0, radius)
	if err != nil {
		return nil, err
	}
	p := &Prediction{Model: mf.Name, Present: ok, Note: note}
	disc := Disc{X: x0, Y: y0, R: radius}
	if ok {
		p.X, p.Y, p.Mu = im.X, im.Y, im.Mu
	}
	if p.Flux, err = discFlux(mf.Model, mf.Theta, g, refFreq, disc); err != nil {
		return nil, err
	}
	if pointFit != nil {
		if p.PointFlux, err = pointFit(mf.Model, mf.Theta); err != nil {
			return nil, err
		}
	}
	draws := mf.Samples
	p.ErrFrom = "posterior samples"
	if draws == nil && mf.Cov != nil && nsamp >= 2 {
		var chol mat.Cholesky
		if chol.Factorize(mf.Cov) {
			var lt mat.TriDense
			chol.LTo(&lt)
			k := len(mf.Theta)
			rnd := rand.New(rand.NewPCG(seed, 11))
			z := make([]float64, k)
			for range nsamp {
				for i := range z {
					z[i] = rnd.NormFloat64()
				}
				th := make([]float64, k)
				for i := range th {
					th[i] = mf.Theta[i]
					for j := 0; j <= i; j++ {
						th[i] += lt.At(i, j) * z[j]
					}
				}
				draws = append(draws, th)
			}
			p.ErrFrom = "Laplace approximation of the posterior"
		}
	}
	var fs, ps []float64
	for i, th := range draws {
		if i >= nsamp {
			break
		}
		f, err := discFlux(mf.Model, th, g, refFreq, disc)
		if err != nil {
			continue // a draw outside the physical domain
		}
		pf := 0.0
		if pointFit != nil {
			if pf, err = pointFit(mf.Model, th); err != nil {
				continue
			}
		}
		fs, ps = append(fs, f), append(ps, pf)
	}
	if len(fs) > 1 {
		p.FluxErr, p.PointFluxErr, p.Samples = sampleSD(fs), sampleSD(ps), len(fs)
	} else {
		p.ErrFrom = ""
	}
	return p, nil
}

func sampleSD(x []float64) float64 {
	var s, s2 float64
	for _, v := range x {
		s += v
		s2 += v * v
	}
	n := float64(len(x))
	m := s / n
	return math.Sqrt(math.Max(0, (s2-n*m*m)/(n-1)))
}
