package par

import (
	"sync/atomic"
	"testing"
)

// Each function must visit every index of [0, n) exactly once.
func TestEveryIndexOnce(t *testing.T) {
	for _, n := range []int{0, 1, 7, 512, 1000, 4097} {
		check := func(name string, run func(mark func(i int))) {
			t.Helper()
			seen := make([]atomic.Int32, n)
			run(func(i int) { seen[i].Add(1) })
			for i := range seen {
				if c := seen[i].Load(); c != 1 {
					t.Fatalf("%s n=%d: index %d visited %d times", name, n, i, c)
				}
			}
		}
		check("Ranges", func(mark func(int)) {
			Ranges(n, 3, func(_, lo, hi int) {
				for i := lo; i < hi; i++ {
					mark(i)
				}
			})
		})
		check("Items", func(mark func(int)) { Items(n, func(_, i int) { mark(i) }) })
		check("Chunks", func(mark func(int)) {
			Chunks(n, 64, func(lo, hi int) {
				if hi-lo > 64 {
					t.Errorf("chunk [%d, %d) longer than 64", lo, hi)
				}
				for i := lo; i < hi; i++ {
					mark(i)
				}
			})
		})
	}
}

func TestRangesSingleWorkerCallsOnce(t *testing.T) {
	calls := 0
	Ranges(0, 1, func(w, lo, hi int) {
		calls++
		if w != 0 || lo != 0 || hi != 0 {
			t.Errorf("got (%d, %d, %d), want (0, 0, 0)", w, lo, hi)
		}
	})
	if calls != 1 {
		t.Errorf("%d calls for n = 0, want 1", calls)
	}
}
