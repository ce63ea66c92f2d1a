package grid

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestDistanceToOutsideBruteForce compares the transform with the
// definition (the minimum over all outside cells of the distance between
// centres) on random masks.
func TestDistanceToOutsideBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	g := Geometry{N: 10, L: 25}
	for trial := 0; trial < 5; trial++ {
		in := make([]bool, g.Len())
		for i := range in {
			in[i] = rng.Float64() < 0.97
		}
		d := DistanceToOutside(in, g)
		for i := 0; i < g.N; i++ {
			for j := 0; j < g.N; j++ {
				for k := 0; k < g.N; k++ {
					best := math.Inf(1)
					for a := 0; a < g.N; a++ {
						for b := 0; b < g.N; b++ {
							for c := 0; c < g.N; c++ {
								if !in[g.Index(a, b, c)] {
									dd := float64((a-i)*(a-i) + (b-j)*(b-j) + (c-k)*(c-k))
									best = math.Min(best, dd)
								}
							}
						}
					}
					want := math.Sqrt(best) * g.H()
					if got := d[g.Index(i, j, k)]; math.Abs(got-want) > 1e-12 {
						t.Fatalf("cell (%d,%d,%d): %v, brute force %v", i, j, k, got, want)
					}
				}
			}
		}
	}
	all := make([]bool, g.Len())
	for i := range all {
		all[i] = true
	}
	if d := DistanceToOutside(all, g); !math.IsInf(d[0], 1) {
		t.Errorf("all inside: %v, want +Inf", d[0])
	}
}
