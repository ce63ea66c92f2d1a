package footprint

import (
	"math"
	"strings"
	"testing"

	"github.com/filigree-survey/filigree/mask/region"
)

// TestCentreOfCap checks that the centre of a cap is its centre (by
// symmetry) and that the mean vector's length is (1 + cos θ)/2, the mean of
// cos over a cap of radius θ (uniform in cos on the sphere, Archimedes'
// hat-box theorem).
func TestCentreOfCap(t *testing.T) {
	r, err := region.Parse("cap.reg", strings.NewReader("include cap centre=200,-35 radius=10\n"))
	if err != nil {
		t.Fatal(err)
	}
	ra, dec, l, err := Centre(FromRegion(r))
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(ra-200) > 0.05 || math.Abs(dec+35) > 0.05 {
		t.Errorf("centre (%.3f, %.3f), want (200, -35)", ra, dec)
	}
	if want := (1 + math.Cos(10*math.Pi/180)) / 2; math.Abs(l-want) > 1e-3 {
		t.Errorf("mean vector length %.5f, want %.5f", l, want)
	}
}
