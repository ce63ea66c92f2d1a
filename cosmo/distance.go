package cosmo

import (
	"fmt"
	"math"
)

// maxPanelY is the widest panel, in y = ln(1+z), of the direct integrals.
const maxPanelY = 0.5

// chi returns χ = D_C/D_H at y = ln(1+z) by direct adaptive integration of
// dχ/dy = (1+z)/E(z) (Hogg 1999, eq. 15, in the variable ln(1+z), where the
// integrand is smooth and bounded up to high redshift).
func (m *Model) chi(y float64) float64 {
	return integrate(m.chiPrime, 0, y, maxPanelY)
}

// chiBetween returns χ(y2) − χ(y1), with sign.
func (m *Model) chiBetween(y1, y2 float64) float64 {
	if y2 >= y1 {
		return integrate(m.chiPrime, y1, y2, maxPanelY)
	}
	return -integrate(m.chiPrime, y2, y1, maxPanelY)
}

// transverse returns D_M/D_H for χ = D_C/D_H (Hogg 1999, eq. 16):
// sinh(√Ωk χ)/√Ωk for Ωk > 0, χ for Ωk = 0, sin(√|Ωk| χ)/√|Ωk| for Ωk < 0.
func (m *Model) transverse(chi float64) float64 {
	switch {
	case m.ok > 0:
		return math.Sinh(m.sqrtAbsOk*chi) / m.sqrtAbsOk
	case m.ok < 0:
		return math.Sin(m.sqrtAbsOk*chi) / m.sqrtAbsOk
	}
	return chi
}

// ComovingDistance returns the line-of-sight comoving distance D_C to
// redshift z in Mpc (Hogg 1999, eq. 15), by direct adaptive Gauss–Legendre
// integration in ln(1+z) to about 1e-13 relative. It is exactly 0 at z = 0
// and NaN for z < 0, z > MaxRedshift or NaN z. Multiply by LittleH for Mpc/h;
// ComovingDistancesMpch is the fast vectorised form.
func (m *Model) ComovingDistance(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	if z == 0 {
		return 0
	}
	return m.hubbleDist * m.chi(math.Log1p(z))
}

// TransverseComovingDistance returns the transverse comoving distance D_M to
// redshift z in Mpc (Hogg 1999, eq. 16; also called the proper-motion
// distance): D_C when Ωk = 0, D_H/√Ωk sinh(√Ωk D_C/D_H) when open and
// D_H/√|Ωk| sin(√|Ωk| D_C/D_H) when closed (it falls again, and can turn
// negative, beyond the antipode of a closed universe). NaN outside
// [0, MaxRedshift].
func (m *Model) TransverseComovingDistance(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	if z == 0 {
		return 0
	}
	return m.hubbleDist * m.transverse(m.chi(math.Log1p(z)))
}

// AngularDiameterDistance returns D_A = D_M/(1+z) in Mpc (Hogg 1999, eq. 18).
// NaN outside [0, MaxRedshift].
func (m *Model) AngularDiameterDistance(z float64) float64 {
	return m.TransverseComovingDistance(z) / (1 + z)
}

// LuminosityDistance returns D_L = (1+z) D_M in Mpc (Hogg 1999, eq. 21).
// NaN outside [0, MaxRedshift].
func (m *Model) LuminosityDistance(z float64) float64 {
	return m.TransverseComovingDistance(z) * (1 + z)
}

// DistanceModulus returns DM = 5 log10(D_L / 10 pc) in magnitudes (Hogg
// 1999, eq. 25), using |D_L| as astropy does for closed models past the
// antipode. It is −Inf at z = 0 and NaN outside [0, MaxRedshift].
func (m *Model) DistanceModulus(z float64) float64 {
	return 5*math.Log10(math.Abs(m.LuminosityDistance(z))) + 25
}

// DifferentialComovingVolume returns dV_C/dz/dΩ = D_H D_M² / E(z) in
// Mpc³/sr (Hogg 1999, eq. 28, with D_M = (1+z) D_A). It is 0 at z = 0 and
// NaN outside [0, MaxRedshift].
func (m *Model) DifferentialComovingVolume(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	dm := m.TransverseComovingDistance(z)
	return m.hubbleDist * dm * dm / m.E(z)
}

// volumeFactor returns V/(Ω D_H³) for the comoving volume within χ = D_C/D_H
// over solid angle Ω: ∫₀^χ S_k(x)² dx with S_k(x) = D_M/D_H at D_C/D_H = x.
// This is Hogg 1999 eq. 29 written in D_C instead of D_M: with
// s = √|Ωk| χ, D_M/D_H = sinh(s)/√Ωk and √(1 + Ωk D_M²/D_H²) = cosh(s), so
// eq. 29's bracket equals (sinh 2s − 2s)/(4 Ωk^{3/2}) (open) and
// (2s − sin 2s)/(4 |Ωk|^{3/2}) (closed). Unlike eq. 29's arcsin, this form
// stays right past the antipode of a closed universe. For |Ωk χ²| ≤ 1 the
// power series χ³ Σ_{n≥1} 2^{2n−1} (Ωk χ²)^{n−1}/(2n+1)! is used instead, to
// avoid the cancellation as Ωk → 0 (its first term is the flat χ³/3).
func (m *Model) volumeFactor(chi float64) float64 {
	t := m.ok * chi * chi
	c3 := chi * chi * chi
	if math.Abs(t) <= 1 {
		// term_n = 2^{2n-1} t^{n-1}/(2n+1)!; term_{n+1}/term_n = 4t/((2n+2)(2n+3)).
		term := 1.0 / 3
		sum := term
		for n := 1; n < 30; n++ {
			term *= 4 * t / float64((2*n+2)*(2*n+3))
			sum += term
			if math.Abs(term) < 1e-17*math.Abs(sum) {
				break
			}
		}
		return c3 * sum
	}
	u := math.Sqrt(math.Abs(t))
	if t > 0 {
		return c3 * (math.Sinh(2*u) - 2*u) / (4 * u * u * u)
	}
	return c3 * (2*u - math.Sin(2*u)) / (4 * u * u * u)
}

// ComovingVolume returns the comoving volume in Mpc³ between redshifts z1
// and z2 over a solid angle of solidAngleSr steradians (the whole sky is 4π
// sr), from the exact closed form of Hogg 1999 eq. 29 for any curvature
// (see volumeFactor): V(z2) − V(z1), negative when z2 < z1. For thin shells
// (ΔD_C < D_C(z2)/4) it integrates D_H³ S_k(χ)² over χ instead, so the
// result keeps full relative precision however close z1 and z2 are.
// NaN when a redshift is outside [0, MaxRedshift] or the solid angle is
// outside [0, 4π].
func (m *Model) ComovingVolume(z1, z2, solidAngleSr float64) float64 {
	if !validZ(z1) || !validZ(z2) || !(solidAngleSr >= 0 && solidAngleSr <= 4*math.Pi*(1+1e-15)) {
		return math.NaN()
	}
	if z2 < z1 {
		return -m.ComovingVolume(z2, z1, solidAngleSr)
	}
	if z1 == z2 {
		return 0
	}
	y1, y2 := math.Log1p(z1), math.Log1p(z2)
	chi1 := 0.0
	if z1 > 0 {
		chi1 = m.chi(y1)
	}
	var dchi float64
	if z2-z1 <= 0.1*(1+z1) {
		// Integrate in z: y2 − y1 would lose the relative precision of a
		// tiny z2 − z1 to the rounding of ln(1+z).
		dchi = integrate(m.invEz, z1, z2, 0.05*(1+z1))
	} else {
		dchi = m.chiBetween(y1, y2)
	}
	chi2 := chi1 + dchi
	dh3 := m.hubbleDist * m.hubbleDist * m.hubbleDist
	if z1 == 0 || dchi >= 0.25*chi2 {
		return solidAngleSr * dh3 * (m.volumeFactor(chi2) - m.volumeFactor(chi1))
	}
	// Thin shell: composite 10-point Gauss–Legendre in χ with panels no
	// wider than 0.5/√|Ωk|, on which S_k² is resolved to rounding.
	n := 1
	if m.sqrtAbsOk > 0 {
		n = int(math.Ceil(m.sqrtAbsOk * dchi / 0.5))
	}
	// The panel width is dchi/n itself, never a difference of nearby χ.
	w := dchi / float64(n)
	var v float64
	for i := 0; i < n; i++ {
		c := chi1 + w*(float64(i)+0.5)
		var s float64
		for k, x := range gl10.x {
			sk := m.transverse(c + 0.5*w*x)
			s += gl10.w[k] * sk * sk
		}
		v += 0.5 * w * s
	}
	return solidAngleSr * dh3 * v
}

// invEz returns 1/E(z), the integrand of χ in z.
func (m *Model) invEz(z float64) float64 {
	return 1 / ((1 + z) * math.Sqrt(m.q(math.Log1p(z))))
}

// LookbackTime returns the lookback time to redshift z in Gyr (Julian years
// of 365.25 days, as astropy): t_H ∫₀^z dz'/((1+z')E(z')) (Hogg 1999,
// eq. 30), integrated directly in ln(1+z) to about 1e-13 relative. It is 0
// at z = 0 and NaN outside [0, MaxRedshift].
func (m *Model) LookbackTime(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	if z == 0 {
		return 0
	}
	return m.hubbleTime * integrate(m.invE, 0, math.Log1p(z), maxPanelY)
}

// DomainError reports an argument outside the domain of a method: a
// redshift outside [0, MaxRedshift] or a comoving distance outside
// [0, D_C(MaxRedshift)]. Index is the position in the input slice of the
// vectorised methods (the first bad one), or −1 for scalar methods.
type DomainError struct {
	Index    int
	Value    float64
	Quantity string  // "redshift" or "comoving distance (Mpc)" or "comoving distance (Mpc/h)"
	Max      float64 // the largest accepted value; the smallest is 0
}

func (e *DomainError) Error() string {
	if e.Index >= 0 {
		return fmt.Sprintf("cosmo: %s[%d] = %v is outside [0, %.10g]", e.Quantity, e.Index, e.Value, e.Max)
	}
	return fmt.Sprintf("cosmo: %s %v is outside [0, %.10g]", e.Quantity, e.Value, e.Max)
}

// RedshiftAtComovingDistance returns the redshift z at which the
// line-of-sight comoving distance is dMpc (Mpc), the inverse of
// ComovingDistance. It starts from the interpolation table and polishes by
// Newton's method with dD_C/dz = c/H(z), evaluating D_C by direct
// integration, until the step is at rounding level: z is accurate to about
// 1e-13 (1+z) (the tests ask 1e-9 absolute for z ≤ 10). It returns 0 for
// dMpc = 0 and a *DomainError for negative, NaN or too large distances
// (beyond D_C(MaxRedshift)).
func (m *Model) RedshiftAtComovingDistance(dMpc float64) (float64, error) {
	tab := m.table()
	target := dMpc / m.hubbleDist
	if target > tab.chiMax && target <= tab.chiMax*(1+1e-12) {
		target = tab.chiMax // rounding of a distance computed at MaxRedshift
	}
	if !(target >= 0 && target <= tab.chiMax) {
		return math.NaN(), &DomainError{Index: -1, Value: dMpc, Quantity: "comoving distance (Mpc)", Max: tab.chiMax * m.hubbleDist}
	}
	if target == 0 {
		return 0, nil
	}
	y := tab.invert(target)
	c := m.chi(y)
	prev := math.Inf(1)
	for iter := 0; iter < 30; iter++ {
		dy := (c - target) / m.chiPrime(y)
		yn := y - dy
		if yn < 0 {
			yn = 0
		}
		c += m.chiBetween(y, yn)
		y = yn
		ady := math.Abs(dy)
		if ady <= 1e-15*y || ady >= prev {
			break
		}
		prev = ady
	}
	z := math.Expm1(y)
	if z > MaxRedshift {
		z = MaxRedshift
	}
	return z, nil
}
