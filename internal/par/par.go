// Package par runs loops across the cores. Every function calls its
// function argument with disjoint pieces of the index range; results stay
// deterministic as long as each item's effect depends only on the item (or
// on the worker index, for per-worker scratch), never on the scheduling.
package par

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// Ranges splits [0, n) into contiguous ranges, one per worker, and calls
// fn(worker, lo, hi) for each. It uses at most runtime.GOMAXPROCS(0)
// workers and at least minPer items per worker (minPer ≥ 1); with one
// worker it calls fn(0, 0, n) on the calling goroutine, also for n = 0.
func Ranges(n, minPer int, fn func(worker, lo, hi int)) {
	if minPer < 1 {
		panic("par: minPer < 1")
	}
	p := min(runtime.GOMAXPROCS(0), max(1, n/minPer))
	if p <= 1 {
		fn(0, 0, n)
		return
	}
	var wg sync.WaitGroup
	for w := range p {
		lo, hi := n*w/p, n*(w+1)/p
		wg.Go(func() { fn(w, lo, hi) })
	}
	wg.Wait()
}

// Items calls fn(worker, i) for every i in [0, n), handing the items out
// one at a time, in increasing order, to at most runtime.GOMAXPROCS(0)
// workers. With one worker the items run in order on the calling
// goroutine.
func Items(n int, fn func(worker, i int)) {
	p := min(runtime.GOMAXPROCS(0), n)
	if p <= 1 {
		for i := range n {
			fn(0, i)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := range p {
		wg.Go(func() {
			for {
				i := int(next.Add(1)) - 1
				if i >= n {
					return
				}
				fn(w, i)
			}
		})
	}
	wg.Wait()
}

// Chunks calls fn(lo, hi) on consecutive chunks of size items (the last may
// be shorter) covering [0, n), handed out dynamically to at most
// runtime.GOMAXPROCS(0) workers; with one worker the chunks run in order on
// the calling goroutine.
func Chunks(n, size int, fn func(lo, hi int)) {
	if size < 1 {
		panic("par: chunk size < 1")
	}
	p := min(runtime.GOMAXPROCS(0), (n+size-1)/size)
	if p <= 1 {
		for lo := 0; lo < n; lo += size {
			fn(lo, min(lo+size, n))
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for range p {
		wg.Go(func() {
			for {
				lo := int(next.Add(int64(size))) - size
				if lo >= n {
					return
				}
				fn(lo, min(lo+size, n))
			}
		})
	}
	wg.Wait()
}
