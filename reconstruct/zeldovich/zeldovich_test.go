package zeldovich

import (
	"math"
	"testing"

	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// TestPlaneWave checks the inversion on a single mode: for the displacement
// Ψ = A sin(k q_x) e_x the linear density is δ = −∇·Ψ = −A k cos(k x)
// (Zel'dovich 1970, to first order), so with b = 1 and no smoothing the
// estimate must return Ψ exactly at the cell centres; with bias b and
// δ_g = b δ the same; with smoothing R the amplitude is exp(−k²R²/2) A.
func TestPlaneWave(t *testing.T) {
	g := grid.Geometry{N: 32, L: 200}
	k := 2 * math.Pi / g.L * 3
	A := 1.7
	for _, tc := range []struct{ b, r float64 }{{1, 0}, {1.5, 0}, {1, 8}} {
		delta := make([]float64, g.Len())
		for i := 0; i < g.N; i++ {
			x := (float64(i) + 0.5) * g.H()
			for j := 0; j < g.N*g.N; j++ {
				delta[i*g.N*g.N+j] = -tc.b * A * k * math.Cos(k*x)
			}
		}
		f, err := Displacement(delta, g, tc.r, tc.b)
		if err != nil {
			t.Fatal(err)
		}
		s := math.Exp(-0.5 * k * k * tc.r * tc.r)
		var worst float64
		for i := 0; i < g.N; i++ {
			x := (float64(i) + 0.5) * g.H()
			for j := 0; j < g.N; j++ {
				for l := 0; l < g.N; l++ {
					id := g.Index(i, j, l)
					worst = math.Max(worst, math.Abs(f.Psi[0][id]-s*A*math.Sin(k*x)))
					worst = math.Max(worst, math.Abs(f.Psi[1][id])+math.Abs(f.Psi[2][id]))
				}
			}
		}
		if worst > 1e-10 {
			t.Errorf("b=%v R=%v: largest error %.3g Mpc/h", tc.b, tc.r, worst)
		}
	}
	if _, err := Displacement(make([]float64, g.Len()), g, 1, 0); err == nil {
		t.Error("bias 0 accepted")
	}
}
