package match_test

import (
	"fmt"

	"github.com/filigree-survey/filigree/survey/match"
)

// Nearest counterparts within 2 arcsec, across RA 0/360 and at the pole.
func ExampleSky() {
	leftRA := []float64{359.9999, 45, 10}
	leftDec := []float64{0, 89.9999, -30}
	rightRA := []float64{0.0001, 225, 225, 12}
	rightDec := []float64{0, 89.9999, 89.99985, -30}
	r, err := match.Sky(leftRA, leftDec, rightRA, rightDec, 2.0/3600, match.Options{})
	if err != nil {
		panic(err)
	}
	for k := range r.Left {
		fmt.Printf("left %d -> right %d at %.4f arcsec (%d within the radius)\n",
			r.Left[k], r.Right[k], r.Sep[k]*3600, r.Count[r.Left[k]])
	}
	fmt.Println("matched", r.Matched(), "of", len(r.Count))
	// Output:
	// left 0 -> right 0 at 0.7200 arcsec (1 within the radius)
	// left 1 -> right 1 at 0.7200 arcsec (2 within the radius)
	// matched 2 of 3
}
