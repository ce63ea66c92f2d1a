package footprint_test

import (
	"fmt"
	"log"

	"github.com/filigree-survey/filigree/mask/footprint"
)

// The MOC was written by pymoc 0.5.0, whose area_sq_deg is 1165.7788732;
// the cap is the 10° region of cap.reg.
func ExampleOpen() {
	moc, err := footprint.Open("../../testdata/footprint/moc_ring7.fits")
	if err != nil {
		log.Fatal(err)
	}
	disc, err := footprint.Open("../../testdata/footprint/cap.reg")
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("MOC area %.4f deg², resolution %.3f°\n", moc.Area(), moc.Resolution())
	fmt.Printf("completeness at (180, -60): %g, at (180, -50): %g\n", moc.Completeness(180, -60), moc.Completeness(180, -50))
	both := footprint.Intersect(moc, disc)
	fmt.Printf("MOC ∩ cap summed at Nside %d\n", both.SumNside())
	// Output:
	// MOC area 1165.7789 deg², resolution 0.458°
	// completeness at (180, -60): 0, at (180, -50): 1
	// MOC ∩ cap summed at Nside 256
}
