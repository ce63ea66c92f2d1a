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

// growthTable holds D, dD/dx and d²D/dx² on nodes x_j = x0 + j h.
type growthTable struct {
	x0, h, invH float64
	n           int       // intervals
	d           []float64 // D, D', D'' per node (3 per node), normalised D(a=1) = 1
}

// growthRHS returns D″ = d²D/d(ln a)² given x = ln a, D and D'.
func (m *Model) growthRHS(x, d, dp float64) float64 {
	a := math.Exp(x)
	a2 := a * a
	de := m.ol * m.deDensity(-x) * a2 * a2
	// a⁴E² and a⁴ dE²/dx.
	e2a4 := m.or + a*(m.om+a*m.ok) + de
	de2a4 := -4*m.or - a*(3*m.om+2*a*m.ok) - 3*(1+m.w0+m.wa*(1-a))*de
	dlnH := 0.5 * de2a4 / e2a4
	omA := m.om * a / e2a4
	return -(2+dlnH)*dp + 1.5*omA*d
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
	g := &growthTable{x0: x0, h: h, invH: 1 / h, n: n, d: make([]float64, 3*(n+1))}
	if m.om == 0 {
		// No matter: nothing sources growth; D is constant and f = 0.
		for j := 0; j <= n; j++ {
			g.d[3*j] = 1
		}
		return g
	}
	aEq := m.or / m.om
	d, dp := growthAInit+2*aEq/3, growthAInit
	for j := 0; ; j++ {
		x := x0 + float64(j)*h
		if j == n {
			x = 0
		}
		g.d[3*j], g.d[3*j+1], g.d[3*j+2] = d, dp, m.growthRHS(x, d, dp)
		if j == n {
			break
		}
		k1d, k1v := dp, m.growthRHS(x, d, dp)
		k2d, k2v := dp+0.5*h*k1v, m.growthRHS(x+0.5*h, d+0.5*h*k1d, dp+0.5*h*k1v)
		k3d, k3v := dp+0.5*h*k2v, m.growthRHS(x+0.5*h, d+0.5*h*k2d, dp+0.5*h*k2v)
		k4d, k4v := dp+h*k3v, m.growthRHS(x+h, d+h*k3d, dp+h*k3v)
		d += h / 6 * (k1d + 2*k2d + 2*k3d + k4d)
		dp += h / 6 * (k1v + 2*k2v + 2*k3v + k4v)
	}
	norm := 1 / g.d[3*n]
	for i := range g.d {
		g.d[i] *= norm
	}
	return g
}

// at returns the Hermite-interpolated D and D' at x = ln a ∈ [x0, 0].
func (g *growthTable) at(x float64) (d, dp float64) {
	s := (x - g.x0) * g.invH
	j := int(s)
	if j >= g.n {
		j = g.n - 1
	}
	if j < 0 {
		j = 0
	}
	u := s - float64(j)
	p := g.d[3*j : 3*j+6 : 3*j+6]
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
