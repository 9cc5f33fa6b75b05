package source

import (
	"fmt"
	"runtime"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// Measurement is the compressed, exact χ² of one dataset (or frequency
// group) on the N×N sky grid: for a model sky image I in Jy per pixel,
//
//	χ²(I) = DataTerm − 2 Σ_j A_j I_j D_j + Σ_j Σ_j' A_j I_j B(Δ_jj') A_j' I_j',
//
// with A_j = GainAt(i_j, j_j) the primary-beam gain, D_j = DirtyAt(i_j, j_j)
// the unnormalised dirty image and B(Δ) = BeamAt(i_j − i_j', j_j − j_j') the
// unnormalised dirty beam (symmetric, |di|, |dj| ≤ N − 1); pixel (i, j) is
// at flat index j·N + i as in Pixels. The χ² of several Measurements on the
// same grid add.
type Measurement interface {
	Size() int
	DirtyAt(i, j int) float64
	BeamAt(di, dj int) float64
	GainAt(i, j int) float64
	DataTerm() float64
}

// Normal is the linear system of a pixelated source s for a fixed lens:
//
//	χ²(s) = DataTerm − 2 bᵀs + sᵀ F s,  F = Lᵀ A B A L,  b = Lᵀ A D,
//
// summed over the measurements, with L the Mapping restricted to its mask.
type Normal struct {
	F        *mat.SymDense
	B        []float64
	DataTerm float64
}

// NewNormal computes the normal system of mp for the measurements, which
// must all have the mapping's grid size. F is accumulated by direct BeamAt
// look-ups over all pairs of masked pixels (O(M²/2) pairs, using the
// symmetry of B, times the non-zeros of L's rows), split over runtime.GOMAXPROCS(0) goroutines with a fixed
// partition, so the result does not depend on scheduling.
func NewNormal(meas []Measurement, mp *Mapping) *Normal {
	ns := mp.NSource
	m := len(mp.Mask)
	nm := &Normal{F: mat.NewSymDense(ns, nil), B: make([]float64, ns)}
	if m == 0 {
		for _, ms := range meas {
			nm.DataTerm += ms.DataTerm()
		}
		return nm
	}
	ii, jj := make([]int, m), make([]int, m)
	imin, imax, jmin, jmax := mp.N, -1, mp.N, -1
	for r, k := range mp.Mask {
		ii[r], jj[r] = k%mp.N, k/mp.N
		imin, imax = min(imin, ii[r]), max(imax, ii[r])
		jmin, jmax = min(jmin, jj[r]), max(jmax, jj[r])
	}
	wi, wj := imax-imin, jmax-jmin
	stride := 2*wj + 1
	beam := make([]float64, (2*wi+1)*stride)
	gain, wd := make([]float64, m), make([]float64, m)
	off := make([]int, m) // beam-table offset of each masked pixel
	for r := range m {
		off[r] = ii[r]*stride + jj[r]
	}
	workers := max(1, min(runtime.GOMAXPROCS(0), m/64))
	acc := make([][]float64, workers)
	for w := range acc {
		acc[w] = make([]float64, ns*ns)
	}
	for _, ms := range meas {
		if ms.Size() != mp.N {
			panic(fmt.Sprintf("source: measurement grid %d differs from mapping grid %d", ms.Size(), mp.N))
		}
		nm.DataTerm += ms.DataTerm()
		for di := -wi; di <= wi; di++ {
			for dj := -wj; dj <= wj; dj++ {
				beam[(di+wi)*stride+dj+wj] = ms.BeamAt(di, dj)
			}
		}
		for r := range m {
			gain[r] = ms.GainAt(ii[r], jj[r])
			wd[r] = gain[r] * ms.DirtyAt(ii[r], jj[r])
		}
		for r := range m {
			for p := mp.RowPtr[r]; p < mp.RowPtr[r+1]; p++ {
				nm.B[mp.Col[p]] += mp.Val[p] * wd[r]
			}
		}
		var wg sync.WaitGroup
		for w := range workers {
			f := acc[w]
			wg.Go(func() {
				tmp := make([]float64, ns)
				// Rows are dealt out in turn, so the triangular work is
				// balanced and the partition fixed.
				for r := w; r < m; r += workers {
					if mp.RowPtr[r] == mp.RowPtr[r+1] {
						continue
					}
					// G += L_rᵀ tmp with tmp = ½ w_rr L_r + Σ_{q>r} w_rq L_q,
					// w_rq = A_r B(Δ_rq) A_q; then F = G + Gᵀ.
					clear(tmp)
					base := (ii[r]+wi)*stride + jj[r] + wj
					gr := gain[r]
					for q := r; q < m; q++ {
						p0, p1 := mp.RowPtr[q], mp.RowPtr[q+1]
						wgt := gr * gain[q] * beam[base-off[q]]
						if q == r {
							wgt /= 2
						}
						cols, vals := mp.Col[p0:p1], mp.Val[p0:p1]
						for p, c := range cols {
							tmp[c] += wgt * vals[p]
						}
					}
					for p := mp.RowPtr[r]; p < mp.RowPtr[r+1]; p++ {
						row := f[mp.Col[p]*ns : (mp.Col[p]+1)*ns]
						v := mp.Val[p]
						for c, x := range tmp {
							row[c] += v * x
						}
					}
				}
			})
		}
		wg.Wait()
	}
	for a := range ns {
		for c := a; c < ns; c++ {
			var s float64
			for w := range acc {
				s += acc[w][a*ns+c] + acc[w][c*ns+a]
			}
			nm.F.SetSym(a, c, s)
		}
	}
	return nm
}

// Chi2 returns χ²(s) = DataTerm − 2 bᵀs + sᵀ F s for node values s.
func (nm *Normal) Chi2(s []float64) float64 {
	v := mat.NewVecDense(len(s), s)
	return nm.DataTerm - 2*mat.Dot(mat.NewVecDense(len(nm.B), nm.B), v) + mat.Inner(v, nm.F, v)
}
