package match

import (
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// mortonOrder returns the rows of the n points whose unit vector (or any
// position scaled into [−1, 1]³) pos(i) gives, in Z-order (Morton 1966) of
// a 2^10 grid per axis, ties by row. Matching left rows in this order makes
// consecutive queries walk the same branches of the tree, which keeps them
// in cache; results are stored by row, so the order changes no result.
func mortonOrder(n int, pos func(i int) (x, y, z float64)) []int32 {
	keys := make([]uint64, n)
	parallel.For(n, 1<<14, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			x, y, z := pos(i)
			keys[i] = (spread(quantize(x))<<2|spread(quantize(y))<<1|spread(quantize(z)))<<32 | uint64(i)
		}
	})
	// LSD radix sort on the 32 high bits, 8 at a time; the row in the low
	// bits makes every key distinct, so the order is total.
	tmp := make([]uint64, n)
	for shift := uint(32); shift < 64; shift += 8 {
		var cnt [257]int
		for _, k := range keys {
			cnt[(k>>shift)&0xff+1]++
		}
		for b := 1; b < 257; b++ {
			cnt[b] += cnt[b-1]
		}
		for _, k := range keys {
			b := (k >> shift) & 0xff
			tmp[cnt[b]] = k
			cnt[b]++
		}
		keys, tmp = tmp, keys
	}
	out := make([]int32, n)
	for i, k := range keys {
		out[i] = int32(uint32(k))
	}
	return out
}

// quantize maps [−1, 1] onto 0 … 1023, clamping (and sending NaN to 0).
func quantize(v float64) uint64 {
	q := math.Floor((v + 1) * 512)
	if !(q >= 0) {
		return 0
	}
	return uint64(min(q, 1023))
}

// spread moves bit k of a 10-bit v to bit 3k.
func spread(v uint64) uint64 {
	v &= 0x3ff
	v = (v | v<<16) & 0x30000ff
	v = (v | v<<8) & 0x300f00f
	v = (v | v<<4) & 0x30c30c3
	v = (v | v<<2) & 0x9249249
	return v
}
