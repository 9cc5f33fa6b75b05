package probe

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"deflect/fit"
	"deflect/lensmodel"
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
type ModelTest struct {
	A, B *ModelFit
	// DeltaChi2 = χ²_A − χ²_B and DeltaBIC = BIC_A − BIC_B (positive:
	// B preferred); LnBayes = ln Z_B − ln Z_A (Laplace approximation).
	DeltaChi2  float64  `json:"delta_chi2"`
	DeltaBIC   float64  `json:"delta_bic"`
	LnBayes    float64  `json:"-"`
	LnBayesErr float64  `json:"ln_bayes_factor_err,omitempty"`
	LnBayesJS  *float64 `json:"ln_bayes_factor_b_over_a"` // LnBayes, null when NaN
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
	return &ModelTest{A: a, B: b, LnBayesJS: js, LnBayesErr: math.Hypot(a.LogZErr, b.LogZErr),
		DeltaChi2: a.Chi2 - b.Chi2, DeltaBIC: a.BIC - b.BIC, LnBayes: lnB,
		Method: method}
}

// Prediction is the central image a model predicts.
type Prediction struct {
	Model string `json:"model"`
	// Present is false when the model makes no image within the radius;
	// Note then says why (e.g. a singular core).
	Present bool    `json:"present"`
	Note    string  `json:"note,omitempty"`
	X       float64 `json:"x_arcsec"`
	Y       float64 `json:"y_arcsec"`
	Mu      float64 `json:"magnification"`
	// Flux is |μ| times the flux of the source's first component at the
	// reference frequency (the component treated as a point at its
	// centre), Jy; FluxErr its standard deviation over Samples posterior
	// draws (0 when there are none), ErrFrom naming the posterior used.
	Flux    float64 `json:"flux_jy"`
	FluxErr float64 `json:"flux_err_jy"`
	Samples int     `json:"samples"`
	ErrFrom string  `json:"err_from,omitempty"`
}

// centralImage returns the image of the first source component's centre
// nearest (x0, y0) within radius, for the model m at theta.
func centralImage(m *fit.Model, theta []float64, x0, y0, radius float64) (lensmodel.Image, float64, bool, string, error) {
	lens, err := m.Lens(theta)
	if err != nil {
		return lensmodel.Image{}, 0, false, "", err
	}
	src, err := m.Source(theta, 0)
	if err != nil {
		return lensmodel.Image{}, 0, false, "", err
	}
	if len(src.Components) == 0 {
		return lensmodel.Image{}, 0, false, "", errors.New("probe: the model has no parametric source")
	}
	bx, by := src.Components[0].Centre()
	res, err := lensmodel.FindImages(lens, bx, by, lensmodel.ImageOptions{})
	if err != nil {
		return lensmodel.Image{}, 0, false, "", err
	}
	best, bd := -1, math.Inf(1)
	for i, im := range res.Images {
		if d := math.Hypot(im.X-x0, im.Y-y0); d <= radius && d < bd {
			best, bd = i, d
		}
	}
	if best < 0 {
		return lensmodel.Image{}, 0, false, res.CentralNote(), nil
	}
	return res.Images[best], src.Components[0].TotalFlux(), true, "", nil
}

// Predict returns the central image the fit mf predicts within radius of
// (x0, y0), with the spread of its flux over nsamp draws (seeded by seed)
// from the Laplace posterior N(θ̂, Σ).
func Predict(mf *ModelFit, x0, y0, radius float64, nsamp int, seed uint64) (*Prediction, error) {
	im, f, ok, note, err := centralImage(mf.Model, mf.Theta, x0, y0, radius)
	if err != nil {
		return nil, err
	}
	p := &Prediction{Model: mf.Name, Present: ok, Note: note}
	if !ok {
		return p, nil
	}
	p.X, p.Y, p.Mu, p.Flux = im.X, im.Y, im.Mu, math.Abs(im.Mu)*f
	if mf.Samples != nil {
		var s, s2 float64
		n := 0
		for i, th := range mf.Samples {
			if i >= nsamp {
				break
			}
			im, f, ok, _, err := centralImage(mf.Model, th, x0, y0, radius)
			if err != nil {
				continue
			}
			flux := 0.0
			if ok {
				flux = math.Abs(im.Mu) * f
			}
			s, s2, n = s+flux, s2+flux*flux, n+1
		}
		if n > 1 {
			mean := s / float64(n)
			p.FluxErr = math.Sqrt(math.Max(0, (s2-float64(n)*mean*mean)/float64(n-1)))
			p.Samples = n
			p.ErrFrom = "posterior samples"
		}
		return p, nil
	}
	if mf.Cov == nil || nsamp < 2 {
		return p, nil
	}
	var chol mat.Cholesky
	if !chol.Factorize(mf.Cov) {
		return p, nil
	}
	var lt mat.TriDense
	chol.LTo(&lt)
	k := len(mf.Theta)
	rnd := rand.New(rand.NewPCG(seed, 11))
	z := make([]float64, k)
	th := make([]float64, k)
	var s, s2 float64
	n := 0
	for range nsamp {
		for i := range z {
			z[i] = rnd.NormFloat64()
		}
		for i := range th {
			th[i] = mf.Theta[i]
			for j := 0; j <= i; j++ {
				th[i] += lt.At(i, j) * z[j]
			}
		}
		im, f, ok, _, err := centralImage(mf.Model, th, x0, y0, radius)
		flux := 0.0
		if err != nil {
			continue
		}
		if ok {
			flux = math.Abs(im.Mu) * f
		}
		s += flux
		s2 += flux * flux
		n++
	}
	if n > 1 {
		mean := s / float64(n)
		p.FluxErr = math.Sqrt(math.Max(0, (s2-float64(n)*mean*mean)/float64(n-1)))
		p.Samples = n
		p.ErrFrom = "Laplace approximation of the posterior"
	}
	return p, nil
}
