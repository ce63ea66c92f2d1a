package tess

import (
	"math/rand/v2"
	"testing"
)

// TestUnshuffle checks unshuffle against the definition: for every m up to
// 300 and a few large ones, block 2k must end in slot k and block 2k+1 in
// slot m+k.
func TestUnshuffle(t *testing.T) {
	sizes := []int{0, 1, 2, 3, 4, 5}
	for m := 6; m <= 300; m++ {
		sizes = append(sizes, m)
	}
	sizes = append(sizes, 1<<16, 1<<16+1, 99991)
	for _, m := range sizes {
		a := make([]int32, 8*m)
		for i := range a {
			a[i] = int32(i)
		}
		unshuffle(a)
		for k := 0; k < m; k++ {
			for w := 0; w < 4; w++ {
				if a[4*k+w] != int32(8*k+w) || a[4*(m+k)+w] != int32(8*k+4+w) {
					t.Fatalf("m = %d: slot %d or %d holds the wrong block", m, k, m+k)
				}
			}
		}
	}
}

// TestSpread3 checks the bit interleaving of hilbert3 against its
// definition, bit by bit.
func TestSpread3(t *testing.T) {
	for _, x := range []uint32{0, 1, 2, 3, 0x1fffff, 0x155555, 0xaaaaa, 123456, 1<<20 | 1} {
		var want uint64
		for k := 0; k < 21; k++ {
			want |= uint64(x>>k&1) << (3 * k)
		}
		if got := spread3(x); got != want {
			t.Errorf("spread3(%#x) = %#x, want %#x", x, got, want)
		}
	}
}

// TestHilbert3 checks the branch-free hilbert3 against Skilling's (2004)
// transform written with branches, as in his paper, followed by the plain
// bit-by-bit interleave, on random cells; and that consecutive keys of a
// 2^3 grid walk between face-adjacent cells (the defining property of the
// Hilbert curve).
func TestHilbert3(t *testing.T) {
	ref := func(c [3]uint32, nbits int) uint64 {
		m := uint32(1) << (nbits - 1)
		for q := m; q > 1; q >>= 1 {
			p := q - 1
			for i := 0; i < 3; i++ {
				if c[i]&q != 0 {
					c[0] ^= p
				} else {
					t := (c[0] ^ c[i]) & p
					c[0] ^= t
					c[i] ^= t
				}
			}
		}
		c[1] ^= c[0]
		c[2] ^= c[1]
		t := uint32(0)
		for q := m; q > 1; q >>= 1 {
			if c[2]&q != 0 {
				t ^= q - 1
			}
		}
		c[0] ^= t
		c[1] ^= t
		c[2] ^= t
		var key uint64
		for bit := nbits - 1; bit >= 0; bit-- {
			key = key<<3 | uint64(c[0]>>bit&1)<<2 | uint64(c[1]>>bit&1)<<1 | uint64(c[2]>>bit&1)
		}
		return key
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for it := 0; it < 100000; it++ {
		nbits := 1 + rng.IntN(19)
		var c [3]uint32
		for k := range c {
			c[k] = rng.Uint32() & (1<<nbits - 1)
		}
		if got, want := hilbert3(c, nbits), ref(c, nbits); got != want {
			t.Fatalf("hilbert3(%v, %d) = %d, want %d", c, nbits, got, want)
		}
	}
	cell := map[uint64][3]uint32{}
	for x := uint32(0); x < 8; x++ {
		for y := uint32(0); y < 8; y++ {
			for z := uint32(0); z < 8; z++ {
				cell[hilbert3([3]uint32{x, y, z}, 3)] = [3]uint32{x, y, z}
			}
		}
	}
	for k := uint64(1); k < 512; k++ {
		a, b := cell[k-1], cell[k]
		d := 0
		for i := 0; i < 3; i++ {
			d += int(max(a[i], b[i]) - min(a[i], b[i]))
		}
		if d != 1 {
			t.Fatalf("cells %d %v and %d %v are not adjacent", k-1, a, k, b)
		}
	}
}
