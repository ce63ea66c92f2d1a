package figures

import (
	"image/color"
	"math"
)

// ClassNames are the web classes by code: the number of collapsed axes
// (0 void, 1 sheet, 2 filament, 3 knot), the project's convention.
var ClassNames = [4]string{"void", "sheet", "filament", "knot"}

// ClassColors are the colours of the web classes by code, the same in every
// figure. The palette is our own. Its design follows two published
// principles for colour-vision-deficient readers: (1) the colours step
// monotonically in CIE 1976 lightness L* (about 82, 61, 42 and 23, void to
// knot, in steps of about 19), and lightness is what every dichromat and a
// greyscale printer still sees (Brettel, Viénot & Mollon 1997, who show that
// dichromatic vision keeps the luminance channel); (2) the hues run along the
// yellow–blue axis (yellow, orange, plum, navy), the opponent axis that
// protanopes and deuteranopes keep, and avoid telling classes apart only by
// red against green (Okabe & Ito 2008, "Color Universal Design"). The order
// of lightness follows the order of collapse, so darker means denser.
var ClassColors = [4]color.NRGBA{
	{R: 0xEB, G: 0xCB, B: 0x4F, A: 0xFF}, // void: straw yellow
	{R: 0xD9, G: 0x7A, B: 0x2B, A: 0xFF}, // sheet: orange
	{R: 0x8E, G: 0x4A, B: 0x8F, A: 0xFF}, // filament: plum
	{R: 0x1D, G: 0x35, B: 0x6B, A: 0xFF}, // knot: navy
}

// UnlabelledColor is the colour of galaxies without a web label (outside the
// footprint or the n(z) range): a neutral mid grey.
var UnlabelledColor = color.NRGBA{R: 0x9A, G: 0x9A, B: 0x9A, A: 0xFF}

// OutsideColor fills parts of a map that lie outside the surveyed volume.
var OutsideColor = color.NRGBA{R: 0xD8, G: 0xD8, B: 0xD8, A: 0xFF}

// EdgeColor draws survey boundaries and hole edges.
var EdgeColor = color.NRGBA{R: 0x20, G: 0x20, B: 0x20, A: 0xFF}

// ClassColor returns the colour of web code c, UnlabelledColor for a code
// outside 0–3 (a null label).
func ClassColor(c int) color.NRGBA {
	if c < 0 || c > 3 {
		return UnlabelledColor
	}
	return ClassColors[c]
}

// ClassLabel returns the legend text of web code c: name and code.
func ClassLabel(c int) string {
	if c < 0 || c > 3 {
		return "no label"
	}
	return ClassNames[c] + " (" + string(rune('0'+c)) + ")"
}

// densityStops are the anchors of the density colour ramp (low to high):
// from near-white (L* ≈ 99) to a mid blue-green (L* ≈ 61), kept light so
// that the class colours of the galaxies drawn on top keep their contrast,
// and reading in greyscale as lightness alone (a single-hue sequential
// ramp, Brewer 1994's advice for ordered data).
var densityStops = [...]color.NRGBA{
	{R: 0xFB, G: 0xFB, B: 0xF7, A: 0xFF},
	{R: 0xDD, G: 0xEB, B: 0xE6, A: 0xFF},
	{R: 0xB9, G: 0xD3, B: 0xCF, A: 0xFF},
	{R: 0x93, G: 0xB9, B: 0xB8, A: 0xFF},
	{R: 0x6E, G: 0x9C, B: 0xA0, A: 0xFF},
}

// DensityColor maps t in [0, 1] (clamped; NaN gives OutsideColor) onto the
// density ramp, interpolating linearly in linear-light RGB between stops.
func DensityColor(t float64) color.NRGBA {
	if math.IsNaN(t) {
		return OutsideColor
	}
	t = math.Max(0, math.Min(1, t))
	n := len(densityStops) - 1
	f := t * float64(n)
	i := int(f)
	if i >= n {
		return densityStops[n]
	}
	u := f - float64(i)
	a, b := densityStops[i], densityStops[i+1]
	mix := func(x, y uint8) uint8 {
		l := (1-u)*srgbToLinear(float64(x)/255) + u*srgbToLinear(float64(y)/255)
		return uint8(math.Round(255 * linearToSRGB(l)))
	}
	return color.NRGBA{R: mix(a.R, b.R), G: mix(a.G, b.G), B: mix(a.B, b.B), A: 0xFF}
}

// srgbToLinear is the sRGB transfer function's inverse (IEC 61966-2-1).
func srgbToLinear(v float64) float64 {
	if v <= 0.04045 {
		return v / 12.92
	}
	return math.Pow((v+0.055)/1.055, 2.4)
}

// linearToSRGB is the sRGB transfer function (IEC 61966-2-1).
func linearToSRGB(v float64) float64 {
	if v <= 0.0031308 {
		return 12.92 * v
	}
	return 1.055*math.Pow(v, 1/2.4) - 0.055
}

// Lightness returns the CIE 1976 L* (0 black to 100 white) of an sRGB colour
// under the D65 white: L* = 116 f(Y) − 16 with f(t) = t^(1/3) above
// (6/29)³ and t/(3(6/29)²) + 4/29 below (CIE 15:2004), Y from the sRGB
// primaries' luminance coefficients (IEC 61966-2-1).
func Lightness(c color.Color) float64 {
	r, g, b, _ := c.RGBA()
	y := 0.2126*srgbToLinear(float64(r)/65535) + 0.7152*srgbToLinear(float64(g)/65535) + 0.0722*srgbToLinear(float64(b)/65535)
	const e = 6.0 / 29
	var f float64
	if y > e*e*e {
		f = math.Cbrt(y)
	} else {
		f = y/(3*e*e) + 4.0/29
	}
	return 116*f - 16
}
