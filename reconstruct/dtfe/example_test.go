package dtfe_test

import (
	"fmt"

	"github.com/filigree-survey/filigree/reconstruct/dtfe"
	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/tess"
)

// The eight corners of a cube of side 2 and its centre: the centre is the
// only point inside the hull, and its contiguous Voronoi cell is the whole
// cube (every tetrahedron has it as a corner), so its density is 4 × 1 / 8.
// The field integrates to the 9 points' mass, and is undefined outside the
// cube.
func Example() {
	xyz := []float64{
		0, 0, 0, 2, 0, 0, 0, 2, 0, 2, 2, 0,
		0, 0, 2, 2, 0, 2, 0, 2, 2, 2, 2, 2,
		1, 1, 1,
	}
	t, err := tess.New(xyz, tess.Options{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	f, err := dtfe.New(t, xyz, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("centre: density %.3g, on hull %v; corner 0 on hull %v\n", f.Density()[8], f.OnHull(8), f.OnHull(0))
	fmt.Printf("integral %.6g\n", f.Integral())
	rho, ok := f.At([3]float64{1, 1, 1})
	fmt.Printf("At(centre) = %.3g %v\n", rho, ok)
	_, ok = f.At([3]float64{3, 1, 1})
	fmt.Println("At outside:", ok)
	g := grid.Geometry{N: 4, L: 4, Origin: [3]float64{-1, -1, -1}}
	cells := make([]float64, g.Len())
	fmt.Println("grid nodes outside the cube:", f.SampleNodes(cells, g))
	// Output:
	// centre: density 0.5, on hull false; corner 0 on hull true
	// integral 9
	// At(centre) = 0.5 true
	// At outside: false
	// grid nodes outside the cube: 56
}
