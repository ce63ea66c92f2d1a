// Package parallel runs loops over index ranges on every core, the one way
// filigree's packages split independent work between goroutines.
package parallel

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// For calls body on the consecutive chunks [lo, hi) of [0, n), each chunk
// long except perhaps the last, from up to runtime.GOMAXPROCS(0)
// goroutines that take chunks in turn. The chunk boundaries do not depend
// on the number of goroutines, and body must write only to its own range of
// any shared output, so results do not depend on it either. It panics if
// chunk < 1; n ≤ 0 calls nothing.
func For(n, chunk int, body func(lo, hi int)) {
	if chunk < 1 {
		panic("parallel: For chunk below 1")
	}
	if n <= 0 {
		return
	}
	workers := min(runtime.GOMAXPROCS(0), (n+chunk-1)/chunk)
	if workers <= 1 {
		for lo := 0; lo < n; lo += chunk {
			body(lo, min(lo+chunk, n))
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				lo := int(next.Add(int64(chunk))) - chunk
				if lo >= n {
					return
				}
				body(lo, min(lo+chunk, n))
			}
		}()
	}
	wg.Wait()
}
