package uv

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"strconv"
	"sync"
	"syscall"
	"testing"
)

// cpuSeconds returns the CPU time used by this process so far.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}

func newTestRand(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 1)) }

var benchTables = struct {
	sync.Once
	export, roundTrip []byte
}{}

// benchTableText makes two 10⁶-row, 10-column tables (u, v, w, re, im,
// weight, freq, time, ant1, ant2): one formatted as exports usually are
// (u, v, w to 0.1 mλ, Jy values with 8 significant digits), one with the
// 17-digit round-trip output of WriteTable.
func benchTableText() (export, roundTrip []byte) {
	benchTables.Do(func() {
		const n = 1000000
		rng := newTestRand(1)
		var b bytes.Buffer
		b.WriteString("# label: bench\nu,v,w,re,im,weight,freq,time,ant1,ant2\n")
		d := &Dataset{Meta: Meta{Label: "bench", Sign: -1}, Freqs: []float64{2.30e11, 2.31e11, 2.32e11, 2.33e11}}
		line := make([]byte, 0, 256)
		for k := range n {
			u, v, w := rng.NormFloat64()*1e5, rng.NormFloat64()*1e5, rng.NormFloat64()*1e3
			re, im, wt := 0.01+rng.NormFloat64()*1e-3, rng.NormFloat64()*1e-3, 1e6*(1+rng.Float64())
			fi := k % 4
			tm := 4.9e9 + float64(k/1000)*2.016
			a1, a2 := rng.IntN(40), 40+rng.IntN(10)
			line = line[:0]
			line = strconv.AppendFloat(line, u, 'f', 4, 64)
			line = strconv.AppendFloat(append(line, ','), v, 'f', 4, 64)
			line = strconv.AppendFloat(append(line, ','), w, 'f', 4, 64)
			line = strconv.AppendFloat(append(line, ','), re, 'e', 7, 64)
			line = strconv.AppendFloat(append(line, ','), im, 'e', 7, 64)
			line = strconv.AppendFloat(append(line, ','), wt, 'e', 7, 64)
			line = strconv.AppendFloat(append(line, ','), d.Freqs[fi], 'g', -1, 64)
			line = strconv.AppendFloat(append(line, ','), tm, 'f', 3, 64)
			line = strconv.AppendInt(append(line, ','), int64(a1), 10)
			line = strconv.AppendInt(append(line, ','), int64(a2), 10)
			b.Write(append(line, '\n'))
			d.U, d.V, d.W = append(d.U, u), append(d.V, v), append(d.W, w)
			d.Re, d.Im, d.Weight = append(d.Re, re), append(d.Im, im), append(d.Weight, wt)
			d.FreqIndex, d.Time = append(d.FreqIndex, uint32(fi)), append(d.Time, tm)
			d.Ant1, d.Ant2 = append(d.Ant1, int16(a1)), append(d.Ant2, int16(a2))
		}
		benchTables.export = b.Bytes()
		var rt bytes.Buffer
		if err := WriteTable(&rt, d); err != nil {
			panic(err)
		}
		benchTables.roundTrip = rt.Bytes()
	})
	return benchTables.export, benchTables.roundTrip
}

// BenchmarkReadTable reads a 10⁶-row, 10-column table from memory. "hold"
// keeps the whole dataset (ReadAll), "stream" reuses one chunk. Run with
// -cpu 1,2 for the per-core rate; rows/s and bytes held per visibility are
// reported as metrics.
func BenchmarkReadTable(b *testing.B) {
	export, roundTrip := benchTableText()
	for _, tc := range []struct {
		name string
		text []byte
	}{{"export", export}, {"roundtrip", roundTrip}} {
		for _, mode := range []string{"hold", "stream"} {
			b.Run(fmt.Sprintf("%s/%s/rows=1e6", tc.name, mode), func(b *testing.B) {
				b.ReportAllocs()
				b.SetBytes(int64(len(tc.text)))
				var rows int
				var held float64
				var chunk Dataset
				cpu0 := cpuSeconds()
				for b.Loop() {
					r, err := NewTableReader(bytes.NewReader(tc.text), "bench.csv", ReadOptions{})
					if err != nil {
						b.Fatal(err)
					}
					if mode == "hold" {
						d, err := ReadAll(r)
						if err != nil {
							b.Fatal(err)
						}
						rows = d.Len()
						held = float64(d.Bytes()) / float64(d.Len())
						continue
					}
					rows = 0
					for {
						err := r.Next(&chunk)
						if errors.Is(err, io.EOF) {
							break
						}
						if err != nil {
							b.Fatal(err)
						}
						rows += chunk.Len()
					}
				}
				if rows != 1000000 {
					b.Fatalf("%d rows", rows)
				}
				b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
				// Rows per CPU-second (user + system, all threads, GC included)
				// is the per-core rate, unaffected by other load on the machine.
				b.ReportMetric(float64(rows)*float64(b.N)/(cpuSeconds()-cpu0), "rows/cpu-s")
				if mode == "hold" {
					b.ReportMetric(held, "B/vis")
				}
			})
		}
	}
}
