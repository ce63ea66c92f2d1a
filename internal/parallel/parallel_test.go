package parallel

import (
	"runtime"
	"sync/atomic"
	"testing"
)

// Every index is visited exactly once, in chunks whose boundaries are the
// same for any number of goroutines.
func TestForCoversOnce(t *testing.T) {
	for _, procs := range []int{1, 2, 4} {
		old := runtime.GOMAXPROCS(procs)
		for _, n := range []int{0, 1, 7, 100, 1001} {
			seen := make([]int32, n)
			var bad atomic.Bool
			For(n, 10, func(lo, hi int) {
				if lo%10 != 0 || hi-lo > 10 || (hi-lo < 10 && hi != n) {
					bad.Store(true)
				}
				for i := lo; i < hi; i++ {
					atomic.AddInt32(&seen[i], 1)
				}
			})
			for i, s := range seen {
				if s != 1 {
					t.Fatalf("procs %d n %d: index %d visited %d times", procs, n, i, s)
				}
			}
			if bad.Load() {
				t.Errorf("procs %d n %d: chunk boundaries moved", procs, n)
			}
		}
		runtime.GOMAXPROCS(old)
	}
}
