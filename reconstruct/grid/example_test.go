package grid_test

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// A plane wave δ = cos(2π·2x/L) on an 8³ grid puts all its power in the
// six modes with |k| = 2·2π/L, each with |δ_k| = N³/2 for itself or its
// Hermitian partner, so P = V/N⁶·(N³/2)² averaged over them, i.e. V/12.
func ExamplePowerSpectrum() {
	g := grid.Geometry{N: 8, L: 100}
	delta := make([]float64, g.Len())
	for i := 0; i < g.N; i++ {
		for j := 0; j < g.N; j++ {
			for k := 0; k < g.N; k++ {
				delta[g.Index(i, j, k)] = math.Cos(2 * math.Pi * 2 * float64(i) / float64(g.N))
			}
		}
	}
	f, err := grid.NewFFT(g.N)
	if err != nil {
		panic(err)
	}
	dk := make([]complex128, g.HalfLen())
	f.Forward(dk, delta)
	kf := 2 * math.Pi / g.L
	for _, b := range grid.PowerSpectrum(dk, g, []float64{1.9 * kf, 2.1 * kf}) {
		fmt.Printf("%d modes, P = %.4g (V/12 = %.4g)\n", b.Modes, b.P, g.Volume()/12)
	}
	// Output:
	// 6 modes, P = 8.333e+04 (V/12 = 8.333e+04)
}
