package figures

import "math"

// Mollweide projects a direction on the unit sphere onto the plane of the
// Mollweide equal-area projection (Snyder 1987, "Map Projections — A Working
// Manual", USGS Professional Paper 1395, the Mollweide chapter; page and
// equation numbers from memory: pp. 249–252, eqs. 31-1 to 31-3):
//
//	2θ + sin 2θ = π sin φ
//	x = (2√2/π) λ cos θ,   y = √2 sin θ,
//
// with longitude λ measured from the central meridian and latitude φ, both
// in radians. The whole sphere fills the ellipse x²/8 + y²/2 ≤ 1: the
// equator runs from x = −2√2 to 2√2, the poles sit at y = ±√2. λ outside
// [−π, π] is wrapped into it; NaN input gives NaN.
//
// The auxiliary angle θ is found by Newton's method on
// f(θ) = 2θ + sin 2θ − π sin φ, f′ = 2 + 2cos 2θ, started at θ = φ. Near the
// poles f′ → 0 and Newton slows down and loses digits to cancellation (as
// Snyder notes), so for |φ| > 60° the equation is rewritten in the
// co-angle δ = π/2 − |θ|: 2δ − sin 2δ = π(1 − sin|φ|) = 2π sin²(π/4 − |φ|/2),
// with both sides computed without cancellation (a Taylor series for
// 2δ − sin 2δ at small δ), and cos θ = sin δ is then exact to rounding.
func Mollweide(lambda, phi float64) (x, y float64) {
	if math.IsNaN(lambda) || math.IsNaN(phi) {
		return math.NaN(), math.NaN()
	}
	lambda = wrapPi(lambda)
	c, s := mollweideCosSin(phi)
	return 2 * math.Sqrt2 / math.Pi * lambda * c, math.Sqrt2 * s
}

// mollweideTheta solves 2θ + sin 2θ = π sin φ for θ (see Mollweide).
func mollweideTheta(phi float64) float64 {
	c, s := mollweideCosSin(phi)
	return math.Atan2(s, c)
}

// mollweideCosSin returns cos θ and sin θ of the auxiliary angle of
// latitude phi (radians; clamped to [−π/2, π/2]).
func mollweideCosSin(phi float64) (c, s float64) {
	phi = math.Max(-math.Pi/2, math.Min(math.Pi/2, phi))
	if math.Abs(phi) <= math.Pi/3 {
		target := math.Pi * math.Sin(phi)
		th := phi
		for it := 0; it < 50; it++ {
			step := (2*th + math.Sin(2*th) - target) / (2 + 2*math.Cos(2*th))
			th -= step
			if math.Abs(step) < 1e-15 {
				break
			}
		}
		return math.Cos(th), math.Sin(th)
	}
	// Polar form in δ = π/2 − |θ|.
	q := math.Sin(math.Pi/4 - math.Abs(phi)/2)
	r := 2 * math.Pi * q * q
	if r == 0 {
		return 0, math.Copysign(1, phi)
	}
	d := math.Cbrt(3 * r / 4) // 2δ − sin 2δ ≈ (4/3)δ³
	for it := 0; it < 50; it++ {
		sd := math.Sin(d)
		dp := 4 * sd * sd // d/dδ (2δ − sin 2δ)
		if dp == 0 {
			break
		}
		step := (twoDeltaMinusSin(d) - r) / dp
		d -= step
		if math.Abs(step) <= 1e-16*d {
			break
		}
	}
	return math.Sin(d), math.Copysign(math.Cos(d), phi)
}

// twoDeltaMinusSin returns 2δ − sin 2δ without cancellation for small δ
// (Taylor series u³/3! − u⁵/5! + u⁷/7! − … in u = 2δ, which for u < 0.1
// is exact to rounding after five terms).
func twoDeltaMinusSin(d float64) float64 {
	u := 2 * d
	if u >= 0.1 {
		return u - math.Sin(u)
	}
	u2 := u * u
	return u * u2 / 6 * (1 - u2/20*(1-u2/42*(1-u2/72*(1-u2/110))))
}

// MollweideInverse returns the longitude λ (from the central meridian) and
// latitude φ in radians of the plane point (x, y) (Snyder 1987, eqs. 31-5 to
// 31-7: θ = asin(y/√2), φ = asin((2θ + sin 2θ)/π), λ = πx/(2√2 cos θ)).
// ok is false for points outside the ellipse x²/8 + y²/2 ≤ 1.
func MollweideInverse(x, y float64) (lambda, phi float64, ok bool) {
	if !(x*x/8+y*y/2 <= 1) {
		return math.NaN(), math.NaN(), false
	}
	s := y / math.Sqrt2
	th := math.Asin(math.Max(-1, math.Min(1, s)))
	phi = math.Asin(math.Max(-1, math.Min(1, (2*th+math.Sin(2*th))/math.Pi)))
	c := math.Cos(th)
	if c < 1e-15 {
		return 0, phi, true
	}
	lambda = math.Pi * x / (2 * math.Sqrt2 * c)
	if math.Abs(lambda) > math.Pi {
		return math.NaN(), math.NaN(), false
	}
	return lambda, phi, true
}

// wrapPi wraps an angle in radians into [−π, π].
func wrapPi(a float64) float64 {
	if a >= -math.Pi && a <= math.Pi {
		return a
	}
	a = math.Mod(a+math.Pi, 2*math.Pi)
	if a < 0 {
		a += 2 * math.Pi
	}
	return a - math.Pi
}
