package uv

import (
	"errors"
	"io"
	"strconv"
	"testing"
)

// rowsText is an io.Reader that produces a header and rows lines of a
// table on the fly, so that the text is never held whole by the test.
type rowsText struct {
	rows, done int
	pending    []byte
}

func (r *rowsText) Read(p []byte) (int, error) {
	n := 0
	for n < len(p) {
		if len(r.pending) == 0 {
			switch {
			case r.done < 0:
				return n, io.EOF
			case r.done == 0 && r.pending == nil:
				r.pending = []byte("# label: generated\nu,v,w,re,im,weight,time,ant1,ant2\n")
			case r.done == r.rows:
				r.done = -1
				continue
			default:
				k := r.done
				b := r.pending[:0]
				b = strconv.AppendFloat(b, 1000+float64(k%9973)*1.25, 'f', 4, 64)
				b = append(b, ',')
				b = strconv.AppendFloat(b, -500-float64(k%7919)*0.75, 'f', 4, 64)
				b = append(b, ",12.5,0.0123456,-0.0004321,250000,"...)
				b = strconv.AppendInt(b, int64(4.9e9)+int64(k/100)*10, 10)
				b = append(b, ',')
				b = strconv.AppendInt(b, int64(k%40), 10)
				b = append(b, ',')
				b = strconv.AppendInt(b, int64(40+k%17), 10)
				b = append(b, '\n')
				r.pending = b
				r.done++
			}
		}
		c := copy(p[n:], r.pending)
		n += c
		r.pending = r.pending[c:]
		if len(r.pending) == 0 {
			r.pending = r.pending[:0]
		}
	}
	return n, nil
}

// The reader holds one chunk of text and of columns, not the file: 2·10⁶
// rows (about 120 MB of text, 104 MB of columns if they were held) read in
// chunks of DefaultChunkRows keep the heap under 48 MB. One chunk's text is
// about 4 MB and its parsed columns about 3.4 MB per copy; the heap sampled
// also holds garbage not yet collected, up to about as much again as is
// live (GOGC = 100), hence the margin.
func TestReadTableMemoryBounded(t *testing.T) {
	if testing.Short() {
		t.Skip("2·10⁶ rows")
	}
	const rows = 2000000
	var chunk Dataset
	got, bytesIn := 0, 0
	peak := heapDuring(t, func(sample func()) {
		src := &rowsText{rows: rows}
		r, err := NewTableReader(src, "generated.csv", ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for n := 0; ; n++ {
			err := r.Next(&chunk)
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				t.Fatal(err)
			}
			got += chunk.Len()
			bytesIn += chunk.Len() * 60
			if n%4 == 0 {
				sample()
			}
		}
		if rep := r.Report(); rep.Rows != rows || rep.Used != rows {
			t.Errorf("report %+v, want %d rows used", rep, rows)
		}
	})
	if got != rows {
		t.Errorf("%d rows read, want %d", got, rows)
	}
	t.Logf("%d rows (≈ %d MB of text): peak heap %.1f MB", got, bytesIn>>20, float64(peak)/(1<<20))
	if peak > 48<<20 {
		t.Errorf("peak heap %.1f MB, want ≤ 48 MB", float64(peak)/(1<<20))
	}
}
