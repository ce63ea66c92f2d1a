package edge_test

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/mask/edge"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/region"
)

// ExampleVolume_Distances measures the distance to the edge of a 10° cap
// surveyed between 100 and 500 Mpc/h for a galaxy at its centre.
func ExampleVolume_Distances() {
	r, _ := region.New(region.Shape{Kind: region.Cap, RA: 150, Dec: 2, Radius: 10})
	v, err := edge.NewVolume(footprint.FromRegion(r), 100, 500, 256)
	if err != nil {
		fmt.Println(err)
		return
	}
	d := make([]float64, 2)
	v.Distances(d, []float64{150, 150}, []float64{2, 2}, []float64{300, 120})
	// The exact distances are 300 sin 10° = 52.1 Mpc/h (to the cone) and
	// 120 − 100 = 20 Mpc/h (to the near limit).
	exact := 300 * math.Sin(10*math.Pi/180)
	fmt.Println(math.Abs(d[0]-exact) <= v.ErrorBound(300), d[1])
	// Output: true 20
}
