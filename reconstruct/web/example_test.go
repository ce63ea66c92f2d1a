package web_test

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/web"
)

// A Gaussian filament along z, δ = 3·exp(−(x²+y²)/2s²) with s = 3 Mpc/h,
// smoothed with R = 2 Mpc/h: on its axis two eigenvalues equal
// (δ_R(0) − ⟨δ⟩)/2 = 1.018 and the third (along the axis) is zero, so the
// axis is a filament. 12 Mpc/h off the axis the pull towards it is
// compressive across (λ = 0.168, mostly A's'²/ρ² of the 2D Gauss law) and
// stretching along x (λ = −0.202): a sheet at λ_th = 0.1, a void at the
// default 0.2. (At λ_th = 0 the code of such a point would rest on the
// rounding noise of the zero eigenvalue along z.)
func ExampleFields_Sample() {
	g := grid.Geometry{N: 32, L: 64} // 2 Mpc/h cells
	delta := make([]float64, g.Len())
	for i := 0; i < g.N; i++ {
		for j := 0; j < g.N; j++ {
			x := (float64(i)+0.5)*g.H() - 33 // cell centres; axis at x = y = 33, a cell centre
			y := (float64(j)+0.5)*g.H() - 33
			for k := 0; k < g.N; k++ {
				delta[g.Index(i, j, k)] = 3 * math.Exp(-(x*x+y*y)/(2*3*3))
			}
		}
	}
	f, err := web.Tidal(delta, g, 2)
	if err != nil {
		panic(err)
	}
	pos := []float64{33, 33, 10, 45, 33, 10} // on the axis; 12 Mpc/h off it
	for _, th := range []float64{0.1, web.DefaultThreshold} {
		_, l1, l2, l3, code := f.Sample(pos, th)
		for p := range code {
			fmt.Printf("λ_th %.1f: λ = %6.3f %6.3f %6.3f  code %d\n", th, round(l1[p]), round(l2[p]), round(l3[p]), code[p])
		}
	}
	// Output:
	// λ_th 0.1: λ =  1.018  1.018  0.000  code 2
	// λ_th 0.1: λ =  0.168  0.000 -0.202  code 1
	// λ_th 0.2: λ =  1.018  1.018  0.000  code 2
	// λ_th 0.2: λ =  0.168  0.000 -0.202  code 0
}

// round rounds to 3 decimals, printing tiny values of either sign as 0.
func round(v float64) float64 { return math.Round(v*1000)/1000 + 0 }
