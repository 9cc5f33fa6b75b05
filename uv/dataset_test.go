package uv

import (
	"errors"
	"io"
	"testing"
)

func TestChunksCoverEveryRowOnce(t *testing.T) {
	const n = 10
	d := &Dataset{Meta: Meta{Label: "a", Freq: 1e11}}
	for k := range n {
		d.U = append(d.U, float64(k))
		d.V = append(d.V, -float64(k))
		d.Re = append(d.Re, 1)
		d.Im = append(d.Im, 0)
		d.Weight = append(d.Weight, 2)
	}
	for _, size := range []int{1, 3, 10, 11} {
		cr := d.Chunks(size)
		var next float64
		var c Dataset
		for {
			err := cr.Next(&c)
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				t.Fatal(err)
			}
			if c.Len() > size || c.Len() == 0 {
				t.Fatalf("size %d: chunk of %d rows", size, c.Len())
			}
			if c.Meta.Label != "a" || c.FreqAt(0) != 1e11 || c.W != nil {
				t.Fatalf("size %d: chunk metadata or optional columns wrong: %+v", size, c.Meta)
			}
			for k := range c.Len() {
				if c.U[k] != next || c.V[k] != -next {
					t.Fatalf("size %d: row %v out of order, got u=%v", size, next, c.U[k])
				}
				next++
			}
		}
		if next != n {
			t.Fatalf("size %d: read %v rows, want %d", size, next, n)
		}
	}
}
