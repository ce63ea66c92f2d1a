package cosmo

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"sync"
)

// Model is a background cosmology built by New. Its methods are safe for
// concurrent use; the interpolation tables behind the vectorised methods and
// the growth factor are built once, on first use.
type Model struct {
	p Params // as given, with derived fields filled in

	om, ok, ol      float64 // matter, curvature, dark energy today
	ogamma, onu, or float64 // photons, massless neutrinos, their sum
	w0, wa          float64
	deExp           float64 // 3(1 + w0 + wa)
	lambda          bool    // w0 = -1, wa = 0: constant dark-energy density
	hubbleDist      float64 // c/H0 in Mpc
	hubbleTime      float64 // 1/H0 in Gyr
	sqrtAbsOk       float64

	tabOnce sync.Once
	tab     *distTable

	growthOnce sync.Once
	growth     *growthTable
}

// New returns the model with parameters p, or an error describing the first
// parameter that makes no sense: H0 < 1 km/s/Mpc (H0 is not h), a negative
// or non-finite density, temperature or Neff, Ωb outside [0, Ωm], or a model
// whose E(z)² = H(z)²/H0² is not positive for all 0 ≤ z ≤ 10^6 (a bounce, or
// no big bang), which the distance integrals and the growth ODE need. It
// also refuses loitering models whose E(z)²/(1+z)² dips below 10^-4 (within
// about 10^-4 of a bounce, e.g. Ωm = 0.3 with Ω_Λ above 1.7133 instead of
// the bounce limit 1.7135): (1+z)/E then spikes so sharply that neither the
// tables nor the stated accuracy could follow it at bounded cost.
func New(p Params) (*Model, error) {
	finite := func(name string, v float64) error {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("cosmo: %s = %v is not a finite number", name, v)
		}
		return nil
	}
	for _, f := range []struct {
		name string
		v    float64
	}{{"H0", p.H0}, {"OmegaM", p.OmegaM}, {"OmegaK", p.OmegaK}, {"OmegaL", p.OmegaL},
		{"W0", p.W0}, {"Wa", p.Wa}, {"TCMB", p.TCMB}, {"Neff", p.Neff},
		{"OmegaB", p.OmegaB}, {"Ns", p.Ns}, {"Sigma8", p.Sigma8}} {
		if err := finite(f.name, f.v); err != nil {
			return nil, err
		}
	}
	switch {
	case p.H0 <= 0:
		return nil, fmt.Errorf("cosmo: H0 = %g km/s/Mpc must be positive", p.H0)
	case p.H0 < 1:
		return nil, fmt.Errorf("cosmo: H0 = %g km/s/Mpc is below 1; H0 is in km/s/Mpc, not h (H0 = 100 h)", p.H0)
	case p.OmegaM < 0:
		return nil, fmt.Errorf("cosmo: OmegaM = %g must be ≥ 0", p.OmegaM)
	case p.TCMB < 0:
		return nil, fmt.Errorf("cosmo: TCMB = %g K must be ≥ 0 (0 switches radiation off)", p.TCMB)
	case p.Neff < 0:
		return nil, fmt.Errorf("cosmo: Neff = %g must be ≥ 0", p.Neff)
	case p.OmegaB < 0 || p.OmegaB > p.OmegaM:
		return nil, fmt.Errorf("cosmo: OmegaB = %g must lie in [0, OmegaM = %g]", p.OmegaB, p.OmegaM)
	case p.Ns < 0:
		return nil, fmt.Errorf("cosmo: Ns = %g must be ≥ 0 (0 means not given)", p.Ns)
	case p.Sigma8 < 0:
		return nil, fmt.Errorf("cosmo: Sigma8 = %g must be ≥ 0 (0 means not given)", p.Sigma8)
	}
	m := &Model{om: p.OmegaM, w0: p.W0, wa: p.Wa}
	h := p.H0 / 100
	if p.TCMB > 0 {
		if p.Neff == 0 {
			p.Neff = DefaultNeff
		}
		m.ogamma = omegaGammaH2(p.TCMB) / (h * h)
		m.onu = neutrinoFactor * p.Neff * m.ogamma
		m.or = m.ogamma + m.onu
	} else {
		p.Neff = 0 // no radiation, so no neutrino species to report
	}
	if p.FixOmegaL {
		m.ol = p.OmegaL
		m.ok = 1 - m.om - m.ol - m.or
		p.OmegaK = m.ok
	} else {
		m.ok = p.OmegaK
		m.ol = 1 - m.om - m.ok - m.or
		p.OmegaL = m.ol
	}
	m.p = p
	m.deExp = 3 * (1 + p.W0 + p.Wa)
	m.lambda = p.W0 == -1 && p.Wa == 0
	m.hubbleDist = SpeedOfLight / p.H0
	m.hubbleTime = mpcKm / p.H0 / gyrSeconds
	m.sqrtAbsOk = math.Sqrt(math.Abs(m.ok))

	// E² > 0 for 0 ≤ z ≤ 10^6: sample q = E²/(1+z)² on a grid in
	// y = ln(1+z) and refine every discrete local minimum by golden-section
	// search, so a narrow dip below zero between samples (a model at the
	// edge of a bounce) is found too.
	y, q, yDip, qDip := m.minQ(math.Log(1e6 + 1))
	if !(q > 0) {
		return nil, fmt.Errorf("cosmo: H(z)² = %.3g H0² (1+z)² ≤ 0 at z = %.6g: this model has no big bang or bounces (%s)",
			q, math.Expm1(y), m.String())
	}
	if qDip < minLoiterQ {
		return nil, fmt.Errorf("cosmo: H(z)² dips to %.3g H0² (1+z)² at z = %.6g: this model loiters too close to a bounce for accurate distances (the limit is %g) (%s)",
			qDip, math.Expm1(yDip), minLoiterQ, m.String())
	}
	return m, nil
}

// minQ returns the smallest value of q = E²/(1+z)² on y ∈ [0, yEnd] and
// where it is, or the first y found where q is not positive (or is NaN);
// and the smallest interior local minimum of q (a dip; +Inf if none). The
// grid samples are refined by golden-section search around every discrete
// local minimum, so a narrow dip between samples is found too.
func (m *Model) minQ(yEnd float64) (yMin, qMin, yDip, qDip float64) {
	const dy = 1.0 / 256
	n := int(math.Ceil(yEnd / dy))
	yAt := func(i int) float64 { return math.Min(float64(i)*dy, yEnd) }
	qPrev2, qPrev := math.NaN(), m.q(0)
	yMin, qMin = 0, qPrev
	yDip, qDip = math.NaN(), math.Inf(1)
	for i := 1; i <= n+1; i++ {
		var qi float64
		if i <= n {
			qi = m.q(yAt(i))
			if !(qi > 0) {
				return yAt(i), qi, yAt(i), qi
			}
			if qi < qMin {
				yMin, qMin = yAt(i), qi
			}
		} else {
			qi = math.Inf(1)
		}
		if i < 2 || !(qPrev <= qPrev2 && qPrev <= qi) {
			qPrev2, qPrev = qPrev, qi
			continue
		}
		// Discrete local minimum at i−1: golden-section search on its
		// bracket.
		a, b := yAt(i-2), yAt(i)
		const r = 0.6180339887498949 // (√5 − 1)/2
		c, d := b-r*(b-a), a+r*(b-a)
		qc, qd := m.q(c), m.q(d)
		for it := 0; it < 80 && b-a > 1e-15*(1+b); it++ {
			if !(qc > 0) {
				return c, qc, c, qc
			}
			if !(qd > 0) {
				return d, qd, d, qd
			}
			if qc < qd {
				b, d, qd = d, c, qc
				c = b - r*(b-a)
				qc = m.q(c)
			} else {
				a, c, qc = c, d, qd
				d = a + r*(b-a)
				qd = m.q(d)
			}
		}
		if !(qc > 0) {
			return c, qc, c, qc
		}
		if qc < qMin {
			yMin, qMin = c, qc
		}
		if i <= n && qc < qDip { // i−1 < n: not the end of the range
			yDip, qDip = c, qc
		}
		qPrev2, qPrev = qPrev, qi
	}
	return yMin, qMin, yDip, qDip
}

// minLoiterQ is the smallest interior minimum of E²/(1+z)² New accepts.
const minLoiterQ = 1e-4

// q returns E²/(1+z)² at y = ln(1+z): Ωr(1+z)² + Ωm(1+z) + Ωk + Ω_DE(z)/(1+z)².
func (m *Model) q(y float64) float64 {
	opz := math.Exp(y)
	ia := 1 / opz
	return (m.or*opz+m.om)*opz + m.ok + m.ol*m.deDensity(y)*ia*ia
}

// deDensity returns ρ_DE(z)/ρ_DE(0) at y = ln(1+z) for CPL dark energy:
// a^{-3(1+w0+wa)} exp(−3 wa (1−a)) (Linder 2003, eq. 6).
func (m *Model) deDensity(y float64) float64 {
	if m.lambda {
		return 1
	}
	return math.Exp(m.deExp*y + 3*m.wa*math.Expm1(-y))
}

// invE returns 1/E at y = ln(1+z), the lookback-time integrand in y.
func (m *Model) invE(y float64) float64 {
	return math.Exp(-y) / math.Sqrt(m.q(y))
}

// chiPrime returns (1+z)/E, the comoving-distance integrand in y = ln(1+z):
// dχ/dy with χ = D_C/D_H.
func (m *Model) chiPrime(y float64) float64 {
	return 1 / math.Sqrt(m.q(y))
}

// validZ reports whether z is in the domain [0, MaxRedshift] of the methods.
func validZ(z float64) bool {
	return z >= 0 && z <= MaxRedshift
}

// Params returns the model's parameters with the derived fields filled in:
// OmegaL (or OmegaK when FixOmegaL is set), and Neff: DefaultNeff when
// TCMB > 0 and Neff was 0, and 0 when TCMB = 0 (radiation off).
// New(m.Params()) rebuilds the same model.
func (m *Model) Params() Params { return m.p }

// H0 returns the Hubble constant in km/s/Mpc.
func (m *Model) H0() float64 { return m.p.H0 }

// LittleH returns h = H0 / (100 km/s/Mpc). A distance in Mpc times h is in
// Mpc/h, the unit of the project's comoving positions.
func (m *Model) LittleH() float64 { return m.p.H0 / 100 }

// OmegaR returns today's radiation density Ωγ + Ων (0 when TCMB = 0).
func (m *Model) OmegaR() float64 { return m.or }

// OmegaM returns the matter density parameter at redshift z,
// Ωm(z) = Ωm (1+z)³ / E(z)², or NaN for z outside [0, MaxRedshift].
func (m *Model) OmegaM(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	return m.om * (1 + z) / m.q(math.Log1p(z))
}

// E returns the dimensionless Hubble rate E(z) = H(z)/H0 (Hogg 1999, eq. 14,
// with CPL dark energy and radiation):
//
//	E² = Ωr(1+z)⁴ + Ωm(1+z)³ + Ωk(1+z)² + Ω_Λ (1+z)^{3(1+w0+wa)} exp(−3 wa z/(1+z)).
//
// It returns NaN for z outside [0, MaxRedshift]; E(0) = 1.
func (m *Model) E(z float64) float64 {
	if !validZ(z) {
		return math.NaN()
	}
	return (1 + z) * math.Sqrt(m.q(math.Log1p(z)))
}

// HubbleDistance returns D_H = c/H0 in Mpc (Hogg 1999, eq. 4).
func (m *Model) HubbleDistance() float64 { return m.hubbleDist }

// HubbleTime returns t_H = 1/H0 in Gyr (Julian years, as astropy), Hogg 1999
// eq. 3.
func (m *Model) HubbleTime() float64 { return m.hubbleTime }

// String describes the model on one line, with every parameter at full
// precision, for provenance records.
func (m *Model) String() string {
	var b strings.Builder
	kv := m.KeyValues()
	b.WriteString(kv[0][1])
	b.WriteString(":")
	for _, e := range kv[1:] {
		b.WriteString(" ")
		b.WriteString(e[0])
		b.WriteString("=")
		b.WriteString(e[1])
	}
	return b.String()
}

// KeyValues returns the model's parameters as ordered key/value pairs for
// provenance records: name, H0 (km/s/Mpc), Omega_m, Omega_k, Omega_L, input
// (which of Omega_k and Omega_L was given), w0, wa, T_CMB (K), N_eff,
// Omega_b, n_s, sigma8, and the derived Omega_gamma and Omega_nu. Numbers
// are written in the shortest form that parses back to the same float64.
func (m *Model) KeyValues() [][2]string {
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	name := m.p.Name
	if name == "" {
		name = "custom"
	}
	input := "Omega_k"
	if m.p.FixOmegaL {
		input = "Omega_L"
	}
	return [][2]string{
		{"name", name},
		{"H0", f(m.p.H0)},
		{"Omega_m", f(m.om)},
		{"Omega_k", f(m.ok)},
		{"Omega_L", f(m.ol)},
		{"input", input},
		{"w0", f(m.w0)},
		{"wa", f(m.wa)},
		{"T_CMB", f(m.p.TCMB)},
		{"N_eff", f(m.p.Neff)},
		{"Omega_b", f(m.p.OmegaB)},
		{"n_s", f(m.p.Ns)},
		{"sigma8", f(m.p.Sigma8)},
		{"Omega_gamma", f(m.ogamma)},
		{"Omega_nu", f(m.onu)},
	}
}

// ParamsFromKeyValues rebuilds the parameters of a model from the pairs
// written by KeyValues (as recorded in the provenance of output files), so
// that New(p) gives the same model. Unknown keys and the derived Omega_gamma
// and Omega_nu are ignored; a missing or malformed key is an error naming
// it.
func ParamsFromKeyValues(kv [][2]string) (Params, error) {
	get := map[string]string{}
	for _, p := range kv {
		get[p[0]] = p[1]
	}
	var p Params
	num := func(key string, dst *float64) error {
		s, ok := get[key]
		if !ok {
			return fmt.Errorf("cosmo: the recorded cosmology has no %s", key)
		}
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			return fmt.Errorf("cosmo: the recorded %s = %q is not a number", key, s)
		}
		*dst = v
		return nil
	}
	p.Name = get["name"]
	for _, f := range []struct {
		key string
		dst *float64
	}{
		{"H0", &p.H0}, {"Omega_m", &p.OmegaM}, {"Omega_k", &p.OmegaK}, {"Omega_L", &p.OmegaL},
		{"w0", &p.W0}, {"wa", &p.Wa}, {"T_CMB", &p.TCMB}, {"N_eff", &p.Neff},
		{"Omega_b", &p.OmegaB}, {"n_s", &p.Ns}, {"sigma8", &p.Sigma8},
	} {
		if err := num(f.key, f.dst); err != nil {
			return Params{}, err
		}
	}
	switch get["input"] {
	case "Omega_L":
		p.FixOmegaL = true
	case "Omega_k", "":
	default:
		return Params{}, fmt.Errorf("cosmo: the recorded input = %q is neither Omega_k nor Omega_L", get["input"])
	}
	return p, nil
}
