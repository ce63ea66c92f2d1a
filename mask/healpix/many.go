package healpix

import (
	"runtime"
	"sync"
)

// manyChunk is the smallest number of directions given to one goroutine.
const manyChunk = 1 << 14

// Ang2PixNestMany stores in dst[i] the NESTED pixel at nside containing the
// direction (theta[i], phi[i]), as Ang2PixNest does (including -1 for
// invalid angles), spreading the work over runtime.GOMAXPROCS(0)
// goroutines. It panics if the three slices differ in length or nside is not
// a valid Nside.
func Ang2PixNestMany(dst []int64, nside int, theta, phi []float64) {
	if len(theta) != len(dst) || len(phi) != len(dst) {
		panic("healpix: Ang2PixNestMany slice lengths differ")
	}
	o := Order(nside)
	n := len(dst)
	workers := min(runtime.GOMAXPROCS(0), (n+manyChunk-1)/manyChunk)
	if workers <= 1 {
		ang2pixNestRange(dst, o, theta, phi)
		return
	}
	var wg sync.WaitGroup
	step := (n + workers - 1) / workers
	for lo := 0; lo < n; lo += step {
		hi := min(lo+step, n)
		wg.Add(1)
		go func() {
			defer wg.Done()
			ang2pixNestRange(dst[lo:hi], o, theta[lo:hi], phi[lo:hi])
		}()
	}
	wg.Wait()
}

func ang2pixNestRange(dst []int64, order int, theta, phi []float64) {
	phi = phi[:len(dst)]
	theta = theta[:len(dst)]
	for i := range dst {
		z, sth, haveSth, ok := thetaLoc(theta[i], phi[i])
		if !ok {
			dst[i] = -1
			continue
		}
		dst[i] = loc2nest(order, z, phi[i], sth, haveSth)
	}
}
