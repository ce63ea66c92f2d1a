package randoms_test

import (
	"fmt"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/randoms"
	"github.com/filigree-survey/filigree/mask/region"
	"github.com/filigree-survey/filigree/mask/selection"
)

// ExampleSample draws randoms in a 10° cap with a flat n(z) between
// z = 0.05 and 0.15.
func ExampleSample() {
	r, _ := region.New(region.Shape{Kind: region.Cap, RA: 150, Dec: 2, Radius: 10})
	fp := footprint.FromRegion(r)
	m, _ := cosmo.New(cosmo.LambdaCDM(70, 0.3, 0))
	nz := &selection.NZ{Edges: []float64{0.05, 0.1, 0.15}, Counts: []float64{100, 100}}
	nbar, _ := selection.NewNBar(nz, m, fp.EffectiveArea()/region.SqDegPerSr)
	ra, dec, z, err := randoms.Sample(1000, fp, nbar, m, 1)
	if err != nil {
		fmt.Println(err)
		return
	}
	inside := 0
	for i := range ra {
		if fp.Completeness(ra[i], dec[i]) > 0 && z[i] >= 0.05 && z[i] <= 0.15 {
			inside++
		}
	}
	fmt.Println(len(ra), "randoms,", inside, "inside")
	// Output: 1000 randoms, 1000 inside
}

// ExampleFillParticles fills the hole of a footprint and a 20 Mpc/h buffer
// around it.
func ExampleFillParticles() {
	r, _ := region.New(
		region.Shape{Kind: region.Cap, RA: 150, Dec: 2, Radius: 10},
		region.Shape{Kind: region.Cap, Exclude: true, RA: 151, Dec: 3, Radius: 2})
	f, err := randoms.FillParticles(footprint.FromRegion(r),
		randoms.FillOptions{Density: 1e-3, RMin: 100, RMax: 400}, 1)
	if err != nil {
		fmt.Println(err)
		return
	}
	kinds := map[randoms.Kind]bool{}
	for _, k := range f.Kind {
		kinds[k] = true
	}
	fmt.Println("mass", f.Mass, "kinds", kinds[randoms.Hole], kinds[randoms.AngularBuffer], kinds[randoms.RadialBuffer])
	// Output: mass 1000 kinds true true true
}
