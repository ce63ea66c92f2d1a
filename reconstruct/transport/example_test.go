package transport_test

import (
	"fmt"

	"github.com/filigree-survey/filigree/reconstruct/transport"
)

// Two points in the unit box carrying 60% and 40% of the mass: the optimal
// map sends the slab x < 0.6 to the first and the rest to the second, so
// their Lagrangian positions are the slab centroids x = 0.3 and x = 0.8.
func ExampleSolve() {
	pos := []float64{
		0.25, 0.5, 0.5,
		0.75, 0.5, 0.5,
	}
	mass := []float64{3, 2}
	res, err := transport.Solve(pos, mass, transport.Options{Hi: [3]float64{1, 1, 1}, Tol: 1e-9})
	if err != nil {
		fmt.Println(err)
		return
	}
	for i := 0; i < 2; i++ {
		fmt.Printf("point %d: volume %.4f, Lagrangian x %.4f, displacement x %+.4f\n",
			i, res.Volume[i], res.Lagr[3*i], res.Disp[3*i])
	}
	// Output:
	// point 0: volume 0.6000, Lagrangian x 0.3000, displacement x -0.0500
	// point 1: volume 0.4000, Lagrangian x 0.8000, displacement x -0.0500
}
