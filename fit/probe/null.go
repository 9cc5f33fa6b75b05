package probe

import (
	"errors"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"
)

// Null is the result of the null simulations: datasets of the base model
// (the best fit without the feature) with the data's (u, v), weights and
// noise, imaged as the data were, and the brightest peak within the radius
// in each. Two images are compared: the residual dirty image (data minus
// the base model; the base model cancels, so it holds noise alone under the
// null hypothesis) — the statistic of the false-alarm probability — and the
// dirty image itself, where the sidelobes of the other images add to the
// noise and can fake a spot.
type Null struct {
	// N is the number of simulations and Seed their seed: simulation i
	// draws its noise from PCG(Seed, i), so the peaks do not depend on the
	// number of cores.
	N    int    `json:"simulations"`
	Seed uint64 `json:"seed"`
	// Observed is the peak of the data's residual dirty image within the
	// radius in Jy/beam, at (ObservedX, ObservedY) arcsec; Peaks the
	// simulated residual peaks.
	Observed  float64   `json:"observed_residual_peak_jy_per_beam"`
	ObservedX float64   `json:"observed_x_arcsec"`
	ObservedY float64   `json:"observed_y_arcsec"`
	Peaks     []float64 `json:"residual_peaks_jy_per_beam"`
	// Exceed counts simulated peaks ≥ Observed. FalseAlarm = Exceed/N
	// with the binomial standard error √(p(1 − p)/N); when Exceed = 0,
	// UpperLimit95 = 3/N is the 95% upper bound on the probability
	// (the "rule of three", from −ln 0.05 ≈ 3; common practice).
	Exceed        int     `json:"exceed"`
	FalseAlarm    float64 `json:"false_alarm_probability"`
	FalseAlarmErr float64 `json:"false_alarm_probability_err"`
	UpperLimit95  float64 `json:"upper_limit_95,omitempty"`
	// Permutation is the permutation-test p-value (1 + Exceed)/(1 + N)
	// (North, Curtis & Sham 2002, eq. 1), the value the probe figure shows.
	Permutation float64 `json:"permutation_p_value"`
	// NullMean and NullSD summarise Peaks.
	NullMean float64 `json:"null_mean_jy_per_beam"`
	NullSD   float64 `json:"null_sd_jy_per_beam"`

	// ImagePeak is the peak of the data's dirty image within the radius
	// (Jy/beam) at (ImageX, ImageY); ImagePeaks the simulated ones
	// (base model plus noise), ImageExceed and ImageFalseAlarm the same
	// comparison for it.
	ImagePeak       float64   `json:"image_peak_jy_per_beam"`
	ImageX          float64   `json:"image_peak_x_arcsec"`
	ImageY          float64   `json:"image_peak_y_arcsec"`
	ImagePeaks      []float64 `json:"image_peaks_jy_per_beam"`
	ImageExceed     int       `json:"image_exceed"`
	ImageFalseAlarm float64   `json:"image_false_alarm_probability"`
	// BaseAt is the base model's dirty image at the image peak, Jy/beam:
	// the sidelobes of the other images there (no noise).
	BaseAt float64 `json:"base_model_at_image_peak_jy_per_beam"`
}

// NullTest runs n simulations of the base model of r, in parallel across
// runtime.GOMAXPROCS(0) workers, each imaged by a clone of im, and compares
// their peaks with the data's.
func NullTest(r *Rows, im *Imager, n int, seed uint64) (*Null, error) {
	if n < 1 {
		return nil, errors.New("probe: NullTest needs at least one simulation")
	}
	out := &Null{N: n, Seed: seed, Peaks: make([]float64, n), ImagePeaks: make([]float64, n)}
	resid := make([]complex128, r.Len())
	for k := range resid {
		resid[k] = r.Data[k] - r.Base[k]
	}
	out.Observed, out.ObservedX, out.ObservedY = im.Peak(im.Image(nil, resid))
	out.ImagePeak, out.ImageX, out.ImageY = im.Peak(im.Image(nil, r.Data))
	base := im.Image(nil, r.Base)
	out.BaseAt = im.ValueAt(base, out.ImageX, out.ImageY)

	sigma := make([]float64, r.Len())
	for k, w := range r.W {
		sigma[k] = 1 / math.Sqrt(w)
	}
	workers := min(runtime.GOMAXPROCS(0), n)
	jobs := make(chan int)
	var wg sync.WaitGroup
	for range workers {
		c, err := im.Clone()
		if err != nil {
			return nil, err
		}
		wg.Go(func() {
			vis := make([]complex128, r.Len())
			var dst []float64
			raw := make([]float64, len(base))
			for i := range jobs {
				rnd := rand.New(rand.NewPCG(seed, uint64(i)))
				for k := range vis {
					vis[k] = complex(sigma[k]*rnd.NormFloat64(), sigma[k]*rnd.NormFloat64())
				}
				dst = c.Image(dst, vis)
				out.Peaks[i], _, _ = c.Peak(dst)
				for k := range raw {
					raw[k] = base[k] + dst[k]
				}
				out.ImagePeaks[i], _, _ = c.Peak(raw)
			}
		})
	}
	for i := range n {
		jobs <- i
	}
	close(jobs)
	wg.Wait()
	var s, s2 float64
	for i, p := range out.Peaks {
		if p >= out.Observed {
			out.Exceed++
		}
		if out.ImagePeaks[i] >= out.ImagePeak {
			out.ImageExceed++
		}
		s += p
		s2 += p * p
	}
	nf := float64(n)
	out.NullMean = s / nf
	out.NullSD = math.Sqrt(math.Max(0, s2/nf-out.NullMean*out.NullMean))
	p := float64(out.Exceed) / nf
	out.FalseAlarm = p
	out.FalseAlarmErr = math.Sqrt(p * (1 - p) / nf)
	if out.Exceed == 0 {
		out.UpperLimit95 = 3 / nf
	}
	out.ImageFalseAlarm = float64(out.ImageExceed) / nf
	out.Permutation = float64(1+out.Exceed) / (1 + nf)
	return out, nil
}
