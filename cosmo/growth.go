package cosmo

import "math"

// The linear growth factor solves, in x = ln a,
//
//	D'' + (2 + dln H/dx) D' − (3/2) Ωm(a) D = 0,
//
// the equation δ̈ + 2Hδ̇ = 4πGρ_m δ for sub-horizon matter perturbations
// (Peebles 1980, The Large-Scale Structure of the Universe, §10) rewritten
// in ln a, with Ωm(a) = Ωm a⁻³/E². Dark energy, curvature and radiation enter
// only through H (they are taken as smooth), so the equation holds for CPL
// dark energy and any curvature. It is integrated by the classical
// fourth-order Runge–Kutta method from a_i = 10^-6 to a = 1 with 2^10 steps
// per e-fold (global error ~1e-13), starting on the growing mode of a
// matter + radiation universe, D ∝ 1 + (3/2) a/a_eq with a_eq = Ωr/Ωm
// (Mészáros 1974, A&A 37, 225; D ∝ a without radiation). Other components
// are negligible at a_i; any error in the start is a decaying mode, down by
// (a_i/a)^{5/2} in matter domination. D and D' are stored at every step and
// interpolated by cubic Hermite polynomials using D' and D″ (from the ODE).
const (
	growthAInit    = 1e-6
	growthStepLog2 = 10
)

// growthTable holds D, dD/dx and d²D/dx² on nodes x_j = x0 + j h, and the
// same for the second-order growth factor D2.
type growthTable struct {
	x0, h, invH float64
	n           int       // intervals
	d           []float64 // D, D', D'' per node (3 per node), normalised D(a=1) = 1
	d2          []float64 // D2, D2', D2'' per node, in the same normalisation
}

// growthCoeffs returns the coefficients of the growth equation at x = ln a,
// D″ = −damp D′ + src D, with damp = 2 + dln H/dx and src = (3/2) Ωm(a).
func (m *Model) growthCoeffs(x float64) (damp, src float64) {
	a := math.Exp(x)
	a2 := a * a
	de := m.ol * m.deDensity(-x) * a2 * a2
	// a⁴E² and a⁴ dE²/dx.
	e2a4 := m.or + a*(m.om+a*m.ok) + de
	de2a4 := -4*m.or - a*(3*m.om+2*a*m.ok) - 3*(1+m.w0+m.wa*(1-a))*de
	dlnH := 0.5 * de2a4 / e2a4
	omA := m.om * a / e2a4
	return 2 + dlnH, 1.5 * omA
}

// growthRHS returns D″ = d²D/d(ln a)² given x = ln a, D and D'.
func (m *Model) growthRHS(x, d, dp float64) float64 {
	damp, src := m.growthCoeffs(x)
	return -damp*dp + src*d
}

// growth2RHS returns D2″ for the second-order growth factor given x, D2, D2'
// and the first-order D:
//
//	D2″ + (2 + dln H/dx) D2′ − (3/2) Ωm(a) D2 = −(3/2) Ωm(a) D²,
//
// the equation for the time dependence of the second-order Lagrangian
// displacement (Bouchet, Colombi, Hivon & Juszkiewicz 1995, A&A 296, 575,
// §3; Scoccimarro 1998, MNRAS 299, 1097, eq. A4) written in ln a.
func (m *Model) growth2RHS(x, d2, dp2, d float64) float64 {
	damp, src := m.growthCoeffs(x)
	return -damp*dp2 + src*(d2-d*d)
}

// growthTab returns the growth table, building it on first use.
func (m *Model) growthTab() *growthTable {
	m.growthOnce.Do(func() { m.growth = m.buildGrowth() })
	return m.growth
}

func (m *Model) buildGrowth() *growthTable {
	x0 := math.Log(growthAInit)
	n := int(math.Ceil(-x0 * (1 << growthStepLog2)))
	h := -x0 / float64(n)
	g := &growthTable{x0: x0, h: h, invH: 1 / h, n: n,
		d: make([]float64, 3*(n+1)), d2: make([]float64, 3*(n+1))}
	if m.om == 0 {
		// No matter: nothing sources growth; D is constant, f = 0, D2 = 0.
		for j := 0; j <= n; j++ {
			g.d[3*j] = 1
		}
		return g
	}
	// y = (D, D', D2, D2'). D2 starts on its matter-era growing mode
	// D2 = −(3/7) D² (Bouchet et al. 1995); the radiation-era mismatch is a
	// decaying mode like D's.
	aEq := m.or / m.om
	d0 := growthAInit + 2*aEq/3
	y := [4]float64{d0, growthAInit, -3.0 / 7 * d0 * d0, -6.0 / 7 * d0 * growthAInit}
	rhs := func(x float64, y [4]float64) [4]float64 {
		damp, src := m.growthCoeffs(x)
		return [4]float64{y[1], -damp*y[1] + src*y[0], y[3], -damp*y[3] + src*(y[2]-y[0]*y[0])}
	}
	step := func(y, k [4]float64, c float64) [4]float64 {
		for i := range y {
			y[i] += c * k[i]
		}
		return y
	}
	for j := 0; ; j++ {
		x := x0 + float64(j)*h
		if j == n {
			x = 0
		}
		f := rhs(x, y)
		g.d[3*j], g.d[3*j+1], g.d[3*j+2] = y[0], y[1], f[1]
		g.d2[3*j], g.d2[3*j+1], g.d2[3*j+2] = y[2], y[3], f[3]
		if j == n {
			break
		}
		// Classical fourth-order Runge–Kutta.
		k1 := f
		k2 := rhs(x+0.5*h, step(y, k1, 0.5*h))
		k3 := rhs(x+0.5*h, step(y, k2, 0.5*h))
		k4 := rhs(x+h, step(y, k3, h))
		for i := range y {
			y[i] += h / 6 * (k1[i] + 2*k2[i] + 2*k3[i] + k4[i])
		}
	}
	// D → cD turns D2 → c²D2, so D2 scales with the square of D's norm.
	norm := 1 / g.d[3*n]
	for i := range g.d {
		g.d[i] *= norm
		g.d2[i] *= norm * norm
	}
	return g
}

// at returns the Hermite-interpolated D and D' at x = ln a ∈ [x0, 0].
func (g *growthTable) at(x float64) (d, dp float64) { return g.interp(g.d, x) }

// interp Hermite-interpolates a node array (value, slope, curvature per
// node) at x = ln a ∈ [x0, 0].
func (g *growthTable) interp(tab []float64, x float64) (d, dp float64) {
	s := (x - g.x0) * g.invH
	j := int(s)
	if j >= g.n {
		j = g.n - 1
	}
	if j < 0 {
		j = 0
	}
	u := s - float64(j)
	p := tab[3*j : 3*j+6 : 3*j+6]
	h := g.h
	// Cubic Hermite for D with slopes D', and for D' with slopes D''.
	h00 := (1 + 2*u) * (1 - u) * (1 - u)
	h10 := u * (1 - u) * (1 - u)
	h01 := u * u * (3 - 2*u)
	h11 := u * u * (u - 1)
	d = h00*p[0] + h10*h*p[1] + h01*p[3] + h11*h*p[4]
	dp = h00*p[1] + h10*h*p[2] + h01*p[4] + h11*h*p[5]
	return d, dp
}

// Growth returns the linear growth factor D(z) of matter perturbations,
// normalised to D(0) = 1, from the linear growth ODE in ln a integrated by
// fourth-order Runge–Kutta from a = 10^-6 (radiation, curvature and CPL dark
// energy all enter through E(z); matter alone clusters), interpolated
// between steps by cubic Hermite polynomials. For Einstein–de Sitter D = 1/(1+z) exactly;
// for flat ΛCDM it equals Heath's (1977) integral. A model without matter
// has D = 1. NaN for z outside [0, MaxRedshift].
func (m *Model) Growth(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	d, _ := m.growthTab().at(-math.Log1p(z))
	return d
}

// GrowthRate returns the linear growth rate f(z) = dln D/dln a, from the same
// ODE solution as Growth. In flat ΛCDM it is close to Ωm(z)^0.55 (Linder
// 2005); it is 1 for Einstein–de Sitter and 0 without matter. NaN for z
// outside [0, MaxRedshift].
func (m *Model) GrowthRate(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	d, dp := m.growthTab().at(-math.Log1p(z))
	return dp / d
}

// SecondOrderGrowth returns the second-order growth factor D2(z) of the
// Lagrangian displacement, in the normalisation where the first-order D(0) =
// 1: second-order LPT displacements are Ψ = −D ∇φ1 + D2 ∇φ2 with ∇²φ2 the
// second-order source built from φ1 (Bouchet et al. 1995; Scoccimarro
// 1998). D2 is negative, close to −(3/7) D² Ωm(z)^(−1/143) (Bouchet et al.
// 1995, eq. 29) and exactly −(3/7) D² for Einstein–de Sitter. It solves
// D2″ + (2 + dln H/dln a) D2′ − (3/2) Ωm(a) D2 = −(3/2) Ωm(a) D² alongside
// the first-order equation. Zero without matter; NaN for z outside [0,
// MaxRedshift].
func (m *Model) SecondOrderGrowth(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	g := m.growthTab()
	d2, _ := g.interp(g.d2, -math.Log1p(z))
	return d2
}

// SecondOrderGrowthRate returns f2 = dln D2/dln a, close to 2 Ωm(z)^(6/11)
// (Bouchet et al. 1995, eq. 30) and exactly 2 for Einstein–de Sitter. Zero
// without matter; NaN for z outside [0, MaxRedshift].
func (m *Model) SecondOrderGrowthRate(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	g := m.growthTab()
	d2, dp2 := g.interp(g.d2, -math.Log1p(z))
	if d2 == 0 {
		return 0
	}
	return dp2 / d2
}
