package cosmo_test

import (
	"fmt"
	"log"

	"github.com/filigree-survey/filigree/cosmo"
)

// Example computes distances in the default Planck 2018 cosmology, in Mpc
// for single values and in Mpc/h for a slice, and inverts a distance.
func Example() {
	p, err := cosmo.Preset("planck2018")
	if err != nil {
		log.Fatal(err)
	}
	m, err := cosmo.New(p)
	if err != nil {
		log.Fatal(err)
	}
	z := 1.0
	fmt.Printf("D_C(z=1) = %.2f Mpc\n", m.ComovingDistance(z))
	fmt.Printf("D_L(z=1) = %.2f Mpc, distance modulus %.3f mag\n", m.LuminosityDistance(z), m.DistanceModulus(z))
	fmt.Printf("lookback time to z=1: %.3f Gyr\n", m.LookbackTime(z))
	fmt.Printf("D(z=1) = %.4f, f(z=1) = %.4f\n", m.Growth(z), m.GrowthRate(z))

	zs := []float64{0.1, 0.5, 1}
	d := make([]float64, len(zs))
	if err := m.ComovingDistancesMpch(d, zs); err != nil {
		log.Fatal(err)
	}
	fmt.Printf("D_C in Mpc/h: %.3f\n", d)

	back, err := m.RedshiftAtComovingDistance(3000)
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("z at D_C = 3000 Mpc: %.6f\n", back)
	// Output:
	// D_C(z=1) = 3395.54 Mpc
	// D_L(z=1) = 6791.08 Mpc, distance modulus 44.160 mag
	// lookback time to z=1: 7.935 Gyr
	// D(z=1) = 0.6081, f(z=1) = 0.8746
	// D_C in Mpc/h: [292.673 1316.925 2297.423]
	// z at D_C = 3000 Mpc: 0.847898
}
