package nufft

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// workers returns the number of goroutines to use for count independent items.
func workers(count int) int {
	p := runtime.GOMAXPROCS(0)
	if p > count {
		p = count
	}
	if p < 1 {
		p = 1
	}
	return p
}

// parallelRange splits [0, count) into contiguous chunks, one per worker, and
// calls fn(worker, lo, hi) for each. Each item's result must depend only on the
// item, never on the chunking, for the caller to stay deterministic.
func parallelRange(count int, fn func(worker, lo, hi int)) {
	p := workers(count)
	if p == 1 {
		fn(0, 0, count)
		return
	}
	var wg sync.WaitGroup
	for w := range p {
		lo := count * w / p
		hi := count * (w + 1) / p
		wg.Add(1)
		go func() {
			defer wg.Done()
			fn(w, lo, hi)
		}()
	}
	wg.Wait()
}

// parallelItems calls fn(worker, item) for the items in order (item =
// first, first+stride, …, < count), handed out dynamically to the workers.
func parallelItems(first, stride, count int, fn func(worker, item int)) {
	n := 0
	if first < count {
		n = (count - first + stride - 1) / stride
	}
	p := workers(n)
	if p <= 1 {
		for it := first; it < count; it += stride {
			fn(0, it)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := range p {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				k := int(next.Add(1)) - 1
				if k >= n {
					return
				}
				fn(w, first+k*stride)
			}
		}()
	}
	wg.Wait()
}
