package healpix_test

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/mask/healpix"
)

// The pixel numbers below agree with healpy 1.16.1:
// ang2pix(1024, 150.1, 2.2, lonlat=True) and query_disc(16, ang2vec(150.1, 2.2,
// lonlat=True), 0.05, nest=True).
func Example() {
	const nside = 1024
	fmt.Println(healpix.RADec2PixNest(nside, 150.1, 2.2), healpix.RADec2PixRing(nside, 150.1, 2.2))

	theta, phi := healpix.RADec2Ang(150.1, 2.2)
	c := [3]float64{math.Sin(theta) * math.Cos(phi), math.Sin(theta) * math.Sin(phi), math.Cos(theta)}
	r, err := healpix.QueryDisc(16, c, 0.05, false, true)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(r)
	// Output:
	// 6978115 6049452
	// [{1702 1704} {1709 1710}]
}
