package tess_test

import (
	"fmt"

	"github.com/filigree-survey/filigree/reconstruct/tess"
)

// The unit cube's eight corners are co-spherical, the most degenerate
// input for a Delaunay tessellation: the symbolic perturbation picks one of
// its triangulations (always the same one, whatever the seed, since the
// perturbed points have a unique Delaunay tessellation), and the volumes
// add up to the cube's (a triangulation of the cube has 5 or 6
// tetrahedra).
func Example() {
	xyz := []float64{
		0, 0, 0, 1, 0, 0, 0, 1, 0, 1, 1, 0,
		0, 0, 1, 1, 0, 1, 0, 1, 1, 1, 1, 1,
		0, 0, 0, // a duplicate of the first corner
	}
	t, err := tess.New(xyz, tess.Options{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	vol := 0.0
	for _, v := range t.Volumes(nil) {
		vol += v
	}
	cells := t.VoronoiVolumes(nil)
	sum := 0.0
	for _, c := range cells[:8] { // the distinct points
		sum += c
	}
	fmt.Printf("%d points, %d duplicate, %d tetrahedra, volume %.3g\n", t.NumPoints(), t.Duplicates(), t.NumTets(), vol)
	fmt.Printf("point 8 is represented by point %d, with the same cell volume: %v\n", t.Rep()[8], cells[8] == cells[0])
	fmt.Printf("contiguous Voronoi cells sum to %.3g (each tetrahedron counted by its 4 corners)\n", sum)
	fmt.Println(len(t.HullFaces())/3, "hull faces")

	_, err = tess.New([]float64{0, 0, 0, 1, 0, 0, 0, 1, 0, 1, 1, 0}, tess.Options{})
	fmt.Println(err)
	// Output:
	// 9 points, 1 duplicate, 6 tetrahedra, volume 1
	// point 8 is represented by point 0, with the same cell volume: true
	// contiguous Voronoi cells sum to 4 (each tetrahedron counted by its 4 corners)
	// 12 hull faces
	// tess: 4 distinct points, all points coplanar: a 3-D tessellation needs four points not in one plane
}
