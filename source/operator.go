package source

import (
	"fmt"

	"deflect/internal/fftconv"
)

// Operator is the normal system of a pixelated source for a fixed lens,
// applied without forming F:
//
//	F s = Σ_meas Lᵀ A (B ⋆ (A L s)),  b = Σ_meas Lᵀ A D,
//
// the beam convolution B ⋆ running over the bounding box of the mask by
// zero-padded FFTs (internal/fftconv), so one product costs
// O(nnz L + P log P) for a padded box of P pixels instead of the O(N_s²)
// of a dense F, and memory stays O(N_s + P). It is the path of
// InvertMatrixFree for grids of many thousand nodes. An Operator is not
// safe for concurrent use.
type Operator struct {
	mp       *Mapping
	b        []float64
	dataTerm float64
	bw, bh   int   // mask bounding box
	pos      []int // box index of each masked pixel
	terms    []opTerm
	diag     []float64
	// workspace
	img, box []float64
}

// opTerm is one measurement's part of the operator.
type opTerm struct {
	gain []float64 // A at each masked pixel
	conv *fftconv.Conv
}

// NewOperator prepares the matrix-free normal system of mp for the
// measurements, which must all have the mapping's grid size: per
// measurement the beam on every offset of the mask's bounding box (one
// BeamAt call each) and its spectrum, the gains on the mask and b; and
// the exact diagonal of F (for preconditioning), from the columns of L.
func NewOperator(meas []Measurement, mp *Mapping) *Operator {
	m := len(mp.Mask)
	ns := mp.NSource
	op := &Operator{mp: mp, b: make([]float64, ns), diag: make([]float64, ns), pos: make([]int, m)}
	for _, ms := range meas {
		op.dataTerm += ms.DataTerm()
	}
	if m == 0 {
		return op
	}
	ii, jj := make([]int, m), make([]int, m)
	i0, i1, j0, j1 := mp.N, -1, mp.N, -1
	for r, k := range mp.Mask {
		ii[r], jj[r] = k%mp.N, k/mp.N
		i0, i1 = min(i0, ii[r]), max(i1, ii[r])
		j0, j1 = min(j0, jj[r]), max(j1, jj[r])
	}
	op.bw, op.bh = i1-i0+1, j1-j0+1
	for r := range m {
		op.pos[r] = (jj[r]-j0)*op.bw + ii[r] - i0
	}
	op.img = make([]float64, m)
	op.box = make([]float64, op.bw*op.bh)

	// Columns of L (compressed sparse column form) for diag F.
	cnt := make([]int, ns+1)
	for _, c := range mp.Col {
		cnt[c+1]++
	}
	for k := range ns {
		cnt[k+1] += cnt[k]
	}
	cRow, cVal := make([]int, len(mp.Col)), make([]float64, len(mp.Col))
	next := append([]int(nil), cnt[:ns]...)
	for r := range m {
		for p := mp.RowPtr[r]; p < mp.RowPtr[r+1]; p++ {
			c := mp.Col[p]
			cRow[next[c]], cVal[next[c]] = r, mp.Val[p]
			next[c]++
		}
	}
	for _, ms := range meas {
		if ms.Size() != mp.N {
			panic(fmt.Sprintf("source: measurement grid %d differs from mapping grid %d", ms.Size(), mp.N))
		}
		t := opTerm{gain: make([]float64, m)}
		for r := range m {
			t.gain[r] = ms.GainAt(ii[r], jj[r])
			wd := t.gain[r] * ms.DirtyAt(ii[r], jj[r])
			for p := mp.RowPtr[r]; p < mp.RowPtr[r+1]; p++ {
				op.b[mp.Col[p]] += mp.Val[p] * wd
			}
		}
		bw, bh := op.bw, op.bh
		beam := make([]float64, (2*bw-1)*(2*bh-1))
		for dj := -(bh - 1); dj < bh; dj++ {
			for di := -(bw - 1); di < bw; di++ {
				beam[(dj+bh-1)*(2*bw-1)+di+bw-1] = ms.BeamAt(di, dj)
			}
		}
		t.conv = fftconv.New(bw, bh, func(di, dj int) float64 { return beam[(dj+bh-1)*(2*bw-1)+di+bw-1] })
		// F_kk = Σ_{r,q} L_rk L_qk A_r A_q B(Δ_rq) over the column of k.
		for k := range ns {
			var s float64
			for p := cnt[k]; p < cnt[k+1]; p++ {
				r := cRow[p]
				vr := cVal[p] * t.gain[r]
				for q := cnt[k]; q < cnt[k+1]; q++ {
					rq := cRow[q]
					s += vr * cVal[q] * t.gain[rq] * beam[(jj[r]-jj[rq]+bh-1)*(2*bw-1)+ii[r]-ii[rq]+bw-1]
				}
			}
			op.diag[k] += s
		}
		op.terms = append(op.terms, t)
	}
	return op
}

// Len returns the number of source nodes.
func (op *Operator) Len() int { return op.mp.NSource }

// B returns b = Lᵀ A D summed over the measurements (not to be modified).
func (op *Operator) B() []float64 { return op.b }

// DataTerm returns Σ_k w_k |d_k|² summed over the measurements.
func (op *Operator) DataTerm() float64 { return op.dataTerm }

// Diag returns the diagonal of F (not to be modified).
func (op *Operator) Diag() []float64 { return op.diag }

// Box returns the mask's bounding box and the padded FFT size of its
// convolution.
func (op *Operator) Box() (w, h, pw, ph int) {
	if len(op.terms) == 0 {
		return op.bw, op.bh, 0, 0
	}
	pw, ph = op.terms[0].conv.Padded()
	return op.bw, op.bh, pw, ph
}

// Apply stores F s in dst (allocated when nil) and returns it.
func (op *Operator) Apply(dst, s []float64) []float64 {
	ns := op.mp.NSource
	if len(s) != ns {
		panic(fmt.Sprintf("source: %d source values for %d nodes", len(s), ns))
	}
	if dst == nil {
		dst = make([]float64, ns)
	}
	clear(dst)
	if len(op.terms) == 0 {
		return dst
	}
	op.mp.Apply(op.img, s)
	mp := op.mp
	for _, t := range op.terms {
		clear(op.box)
		for r, v := range op.img {
			op.box[op.pos[r]] = t.gain[r] * v
		}
		t.conv.Apply(op.box, op.box)
		for r := range op.img {
			g := t.gain[r] * op.box[op.pos[r]]
			for p := mp.RowPtr[r]; p < mp.RowPtr[r+1]; p++ {
				dst[mp.Col[p]] += mp.Val[p] * g
			}
		}
	}
	return dst
}

// Chi2 returns χ²(s) = DataTerm − 2 bᵀs + sᵀ F s for node values s.
func (op *Operator) Chi2(s []float64) float64 {
	fs := op.Apply(nil, s)
	c := op.dataTerm
	for k, v := range s {
		c += v*fs[k] - 2*v*op.b[k]
	}
	return c
}

// clone returns an operator sharing op's data with its own workspace and
// FFT plans, for use in another goroutine.
func (op *Operator) clone() *Operator {
	c := *op
	c.img = make([]float64, len(op.img))
	c.box = make([]float64, len(op.box))
	c.terms = make([]opTerm, len(op.terms))
	for i, t := range op.terms {
		c.terms[i] = opTerm{gain: t.gain, conv: t.conv.Clone()}
	}
	return &c
}
