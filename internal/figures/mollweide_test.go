package figures

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
)

// TestMollweideKnownPoints checks the closed-form points of the projection
// (Snyder 1987, USGS PP 1395, eqs. 31-1 to 31-3 on the unit sphere): the
// equator at longitude ±180° maps to x = ±2√2, the poles to y = ±√2, the
// centre to the origin, and the equator is linear in longitude.
func TestMollweideKnownPoints(t *testing.T) {
	r2 := math.Sqrt2
	for _, tc := range []struct{ lam, phi, x, y float64 }{
		{math.Pi, 0, 2 * r2, 0},
		{-math.Pi, 0, -2 * r2, 0},
		{0, math.Pi / 2, 0, r2},
		{0, -math.Pi / 2, 0, -r2},
		{0, 0, 0, 0},
		{math.Pi / 2, 0, r2, 0},
		{1.3, math.Pi / 2, 0, r2}, // every longitude meets at the pole
	} {
		x, y := Mollweide(tc.lam, tc.phi)
		if math.Abs(x-tc.x) > 1e-12 || math.Abs(y-tc.y) > 1e-12 {
			t.Errorf("Mollweide(%v, %v) = (%v, %v), want (%v, %v)", tc.lam, tc.phi, x, y, tc.x, tc.y)
		}
	}
}

// TestMollweideAstropy compares with WCSLIB's MOL projection through
// astropy 5.2.1 (Calabretta & Greisen 2002), whose plane coordinates are
// 180/π times ours, to WCSLIB's own tolerance (1e-7°: near the poles it
// solves for θ only to about 1e-8°), and to 40-digit values from mpmath
// 1.2.1 to 1e-9°. The table and the script that made it are in testdata/.
func TestMollweideAstropy(t *testing.T) {
	f, err := os.Open("testdata/mollweide_astropy.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	n := 0
	for sc.Scan() {
		line := sc.Text()
		if strings.HasPrefix(line, "#") || strings.HasPrefix(line, "phi") {
			continue
		}
		var v [6]float64
		for i, s := range strings.Split(line, ",") {
			if v[i], err = strconv.ParseFloat(s, 64); err != nil {
				t.Fatal(err)
			}
		}
		x, y := Mollweide(v[0]*deg, v[1]*deg)
		x, y = x/deg, y/deg
		if math.Abs(x-v[2]) > 1e-7 || math.Abs(y-v[3]) > 1e-7 {
			t.Errorf("(%v°, %v°): got (%.10f, %.10f) deg, astropy (%.10f, %.10f)", v[0], v[1], x, y, v[2], v[3])
		}
		if math.Abs(x-v[4]) > 1e-9 || math.Abs(y-v[5]) > 1e-9 {
			t.Errorf("(%v°, %v°): got (%.12f, %.12f) deg, mpmath (%.12f, %.12f)", v[0], v[1], x, y, v[4], v[5])
		}
		// The inverse (Snyder eqs. 31-5 to 31-7) returns the direction.
		lam, phi, ok := MollweideInverse(x*deg, y*deg)
		if !ok || math.Abs(phi/deg-v[1]) > 1e-7 || (math.Abs(v[1]) < 89.9 && math.Abs(lam/deg-v[0]) > 1e-7) {
			t.Errorf("inverse of (%v°, %v°) = (%v°, %v°), ok %v", v[0], v[1], lam/deg, phi/deg, ok)
		}
		n++
	}
	if n < 40 {
		t.Fatalf("read only %d reference rows", n)
	}
}

// TestMollweideEqualArea checks the defining property: the projected area
// of a latitude band is proportional to its area on the sphere, 2π(sin φ2 −
// sin φ1) over 4π, against the ellipse's area π·2√2·√2 = 4π (the whole
// sphere). The band's plane area is integrated from x-extent(y) = 2·2√2·cos θ
// over y.
func TestMollweideEqualArea(t *testing.T) {
	for _, band := range [][2]float64{{0, 30}, {-60, -10}, {40, 89}} {
		_, ya := Mollweide(0, band[0]*deg)
		_, yb := Mollweide(0, band[1]*deg)
		const n = 20000
		var a float64
		for i := 0; i < n; i++ {
			y := ya + (yb-ya)*(float64(i)+0.5)/n
			th := math.Asin(y / math.Sqrt2)
			a += 4 * math.Sqrt2 * math.Cos(th) * (yb - ya) / n
		}
		want := 2 * math.Pi * (math.Sin(band[1]*deg) - math.Sin(band[0]*deg))
		if math.Abs(a-want) > 1e-6*want {
			t.Errorf("band %v: plane area %v, sphere area %v", band, a, want)
		}
	}
}

func TestMollweideEdges(t *testing.T) {
	if x, y := Mollweide(math.NaN(), 0); !math.IsNaN(x) || !math.IsNaN(y) {
		t.Errorf("NaN input gave (%v, %v)", x, y)
	}
	// Longitude wraps: 190° is −170°.
	x1, _ := Mollweide(190*deg, 0.3)
	x2, _ := Mollweide(-170*deg, 0.3)
	if math.Abs(x1-x2) > 1e-12 {
		t.Errorf("wrap: %v vs %v", x1, x2)
	}
	if _, _, ok := MollweideInverse(2.9, 0); ok {
		t.Error("a point outside the ellipse was accepted")
	}
}
