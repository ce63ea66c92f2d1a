package laguerre_test

import (
	"fmt"

	"github.com/filigree-survey/filigree/reconstruct/laguerre"
)

// Two points in the unit box; raising the weight of the first moves the
// bisector from x = 0.5 to x = 0.5 + Δψ = 0.6.
func Example() {
	xyz := []float64{
		0.25, 0.5, 0.5,
		0.75, 0.5, 0.5,
	}
	psi := []float64{0.1, 0}
	opt := laguerre.Options{Hi: [3]float64{1, 1, 1}}
	var cells laguerre.Cells
	if err := laguerre.Compute(xyz, psi, opt, &cells); err != nil {
		fmt.Println(err)
		return
	}
	for i := 0; i < 2; i++ {
		fmt.Printf("cell %d: volume %.3f centroid x %.3f", i, cells.Volume[i], cells.Centroid[3*i])
		for k := cells.NbrStart[i]; k < cells.NbrStart[i+1]; k++ {
			fmt.Printf(", neighbour %d area %.3f", cells.Nbr[k], cells.Area[k])
		}
		fmt.Println()
	}
	// Output:
	// cell 0: volume 0.600 centroid x 0.300, neighbour 1 area 1.000
	// cell 1: volume 0.400 centroid x 0.800, neighbour 0 area 1.000
}
