package match

import (
	"math/rand/v2"
	"testing"
)

// Every internal node's rows must lie on the right side of its split (the
// invariant the search's pruning relies on, Bentley 1975), for random
// points, heavy duplication (the partition's equal-key path) and sorted
// input (the order that defeats naive pivots), at sizes that use Floyd &
// Rivest's sampling step (ranges over 600 rows).
func TestTreeInvariant(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	const n = 20000
	for name, gen := range map[string]func(i, a int) float64{
		"random":     func(i, a int) float64 { return rng.Float64() },
		"duplicates": func(i, a int) float64 { return float64(rng.IntN(5)) },
		"sorted":     func(i, a int) float64 { return float64(i*(a+1)) / n },
	} {
		pts := make([]float64, 3*n)
		for i := 0; i < n; i++ {
			for a := 0; a < 3; a++ {
				pts[3*i+a] = gen(i, a)
			}
		}
		orig := append([]float64(nil), pts...)
		tr := newTree(pts)
		seen := make([]bool, n)
		for p, j := range tr.idx {
			if seen[j] {
				t.Fatalf("%s: row %d twice", name, j)
			}
			seen[j] = true
			for a := 0; a < 3; a++ {
				if tr.pts[3*p+a] != orig[3*int(j)+a] {
					t.Fatalf("%s: point %d moved without its index", name, j)
				}
			}
		}
		var walk func(node, lo, hi int)
		walk = func(node, lo, hi int) {
			if node >= len(tr.split) {
				if hi-lo > leafSize {
					t.Fatalf("%s: leaf of %d rows", name, hi-lo)
				}
				return
			}
			mid := lo + (hi-lo)/2
			ax, v := int(tr.axis[node]), tr.split[node]
			for i := lo; i < hi; i++ {
				if x := tr.pts[3*i+ax]; (i < mid && x > v) || (i >= mid && x < v) {
					t.Fatalf("%s: node %d row %d on the wrong side of its split", name, node, i)
				}
			}
			walk(2*node+1, lo, mid)
			walk(2*node+2, mid, hi)
		}
		walk(0, 0, n)
	}
}
