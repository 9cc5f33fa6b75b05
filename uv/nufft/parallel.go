package nufft

import (
	"runtime"

	"deflect/internal/par"
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
	par.Ranges(count, 1, fn)
}

// parallelItems calls fn(worker, item) for the items in order (item =
// first, first+stride, …, < count), handed out dynamically to the workers.
func parallelItems(first, stride, count int, fn func(worker, item int)) {
	n := 0
	if first < count {
		n = (count - first + stride - 1) / stride
	}
	par.Items(n, func(w, k int) { fn(w, first+k*stride) })
}
