package cosmo

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// SpeedOfLight is the speed of light in vacuum in km/s (exact, SI 1983).
const SpeedOfLight = 299792.458

// DefaultNeff is the effective number of massless neutrino species used when
// a CMB temperature is given without Neff: the standard-model value 3.046
// (Mangano et al. 2005, Nucl. Phys. B 729, 221).
const DefaultNeff = 3.046

// MaxRedshift is the largest redshift every method of Model accepts. New
// checks that E(z)² > 0 well beyond it (to z = 10^6, where the growth ODE
// starts), so every integral over [0, MaxRedshift] is well defined.
const MaxRedshift = 1e4

// Physical constants, SI unless stated. The defining constants of the 2019 SI
// are exact; G is the CODATA 2018 recommended value; the parsec follows IAU
// 2015 Resolution B2 (pc = 648000/π au) with the au of IAU 2012 Resolution B2.
// astropy 5.2.1 uses the same values (CODATA 2018, IAU 2015), which is why
// the radiation densities below match its own to rounding.
const (
	boltzmannK = 1.380649e-23   // J/K, exact
	planckH    = 6.62607015e-34 // J s, exact
	lightSI    = 299792458.0    // m/s, exact
	newtonG    = 6.67430e-11    // m^3 kg^-1 s^-2, CODATA 2018
	auMetres   = 149597870700.0 // m, exact (IAU 2012 B2)
	// mpcKm is one megaparsec in km: 10^6 × (648000/π) au.
	mpcKm = 1e6 * 648000 / math.Pi * auMetres / 1000
	// gyrSeconds is one gigayear of Julian years (365.25 d), as astropy's u.Gyr.
	gyrSeconds = 1e9 * 365.25 * 86400
)

// omegaGammaH2 returns the photon density parameter times h² for a black body
// at temperature t (K): Ω_γ h² = ρ_γ / (3 H100² / 8πG) with the photon mass
// density ρ_γ = 4σT⁴/c³ (Stefan–Boltzmann law; σ = 2π⁵k⁴/(15h³c²)) and
// H100 = 100 km/s/Mpc. This is exactly astropy's definition (FLRW.__init__:
// Ogamma0 = a_B c⁻² Tcmb0⁴ / ρ_crit with a_B c⁻² = 4σ/c³). For t = 2.7255 K it
// gives Ω_γ h² = 2.4728e-5.
func omegaGammaH2(t float64) float64 {
	sigma := 2 * math.Pow(math.Pi, 5) * math.Pow(boltzmannK, 4) /
		(15 * planckH * planckH * planckH * lightSI * lightSI)
	rhoGamma := 4 * sigma * t * t * t * t / (lightSI * lightSI * lightSI) // kg/m^3
	h100 := 100 / mpcKm                                                   // s^-1
	rhoCrit100 := 3 * h100 * h100 / (8 * math.Pi * newtonG)               // kg/m^3
	return rhoGamma / rhoCrit100
}

// neutrinoFactor is 7/8 (4/11)^{4/3}: the energy density of one massless
// neutrino species relative to the photons after e± annihilation (Weinberg
// 2008, Cosmology, eq. 3.1.21). astropy 5.2.1 uses the literal 0.22710731766
// (FLRW.nu_relative_density), which differs in the 12th digit.
var neutrinoFactor = 7.0 / 8.0 * math.Pow(4.0/11.0, 4.0/3.0)

// Params are the parameters of a cosmological model. Densities are today's
// (z = 0) density parameters. The background is flat or curved ΛCDM with
// CPL dark energy w(a) = w0 + wa (1 − a) (Chevallier & Polarski 2001; Linder
// 2003), matter, and optionally radiation (photons and massless neutrinos)
// from the CMB temperature. The fields are taken literally: W0 = 0 means
// w0 = 0, so a cosmological constant needs W0 = -1 (see LambdaCDM).
type Params struct {
	// Name labels the model in String and KeyValues; "" prints as "custom".
	Name string
	// H0 is the Hubble constant in km/s/Mpc (not h); it must be ≥ 1.
	H0 float64
	// OmegaM is the matter density Ωm (cold dark matter, baryons and, for
	// the presets, massive neutrinos treated as matter); it must be ≥ 0.
	OmegaM float64
	// OmegaK is the curvature density Ωk = −kc²/H0² (> 0 open, < 0 closed).
	// Unless FixOmegaL is set it is an input and Ω_Λ = 1 − Ωm − Ωk − Ωr.
	OmegaK float64
	// OmegaL is the dark-energy density Ω_Λ. It is an input only when
	// FixOmegaL is set, and then Ωk = 1 − Ωm − Ω_Λ − Ωr; otherwise it is
	// ignored by New and filled in by Model.Params.
	OmegaL float64
	// FixOmegaL selects OmegaL as the input and OmegaK as derived.
	FixOmegaL bool
	// W0 and Wa are the CPL dark-energy equation of state parameters.
	W0, Wa float64
	// TCMB is the CMB temperature today in K. Zero (the default for explicit
	// parameters) switches radiation off; a positive value adds photons and
	// Neff species of massless neutrinos.
	TCMB float64
	// Neff is the effective number of massless neutrino species, used only
	// when TCMB > 0; zero then means DefaultNeff. (So photons without
	// neutrinos cannot be asked for; no standard model has them.)
	Neff float64
	// OmegaB is the baryon density Ωb (0 when not given); 0 ≤ Ωb ≤ Ωm. It
	// does not change the background, only later power-spectrum work.
	OmegaB float64
	// Ns is the scalar spectral index n_s (0 when not given).
	Ns float64
	// Sigma8 is the rms linear matter fluctuation in spheres of 8 Mpc/h today
	// (0 when not given).
	Sigma8 float64
}

// LambdaCDM returns the parameters of a ΛCDM model without radiation: Hubble
// constant h0 in km/s/Mpc, matter density omegaM, curvature omegaK,
// Ω_Λ = 1 − Ωm − Ωk, w0 = −1 and wa = 0.
func LambdaCDM(h0, omegaM, omegaK float64) Params {
	return Params{Name: "custom", H0: h0, OmegaM: omegaM, OmegaK: omegaK, W0: -1}
}

// presets maps a preset name to its parameters.
var presets = map[string]Params{
	// Planck Collaboration 2018 VI, "Cosmological parameters", A&A 641, A6
	// (2020), Table 2, last column (TT,TE,EE+lowE+lensing+BAO).
	// from memory: H0 = 67.66, Ωm = 0.3111, Ωb h² = 0.02242, Ωc h² = 0.11933,
	// n_s = 0.9665, σ8 = 0.8102, τ = 0.0561; H0, n_s and σ8 agree with
	// astropy 5.2.1's Planck18 realization (data/Planck18.ecsv), which quotes
	// the same table. Planck's Ωm includes one massive neutrino of 0.06 eV
	// (astropy lists Om0 = 0.30966 without it); here it is counted as matter,
	// right to ~1e-3 in E(z) at z ≲ 100 where 0.06 eV neutrinos are
	// non-relativistic. Radiation is included (Planck's model has it): CMB
	// temperature 2.7255 K (Fixsen 2009, ApJ 707, 916) and Neff = 3.046
	// massless species, so Ω_Λ = 1 − Ωm − Ωr with Ωk = 0.
	"planck2018": {
		Name: "planck2018", H0: 67.66, OmegaM: 0.3111, W0: -1,
		TCMB: 2.7255, Neff: 3.046,
		OmegaB: 0.02242 / (0.6766 * 0.6766), Ns: 0.9665, Sigma8: 0.8102,
	},
	// WMAP nine-year, Hinshaw et al. 2013, ApJS 208, 19, Table 4, last column
	// (WMAP+eCMB+BAO+H0), flat ΛCDM, with radiation (T = 2.725 K, Neff =
	// 3.04) as in that paper. Values as tabulated in astropy 5.2.1's WMAP9
	// realization (data/WMAP9.ecsv): H0 = 69.32, Ωm = 0.2865, Ωb = 0.04628,
	// n_s = 0.9608, σ8 = 0.820.
	"wmap9": {
		Name: "wmap9", H0: 69.32, OmegaM: 0.2865, W0: -1,
		TCMB: 2.725, Neff: 3.04,
		OmegaB: 0.04628, Ns: 0.9608, Sigma8: 0.820,
	},
	// Einstein–de Sitter: flat, matter only, no radiation, h = 0.7. Its
	// distances and growth have closed forms (Hogg 1999 eq. 15 with
	// E = (1+z)^{3/2}; D = a), which makes it a good test model.
	"eds": {Name: "eds", H0: 70, OmegaM: 1, W0: -1},
	// A round-number flat ΛCDM without radiation, H0 = 70, Ωm = 0.3, often
	// used for quick comparisons (astropy's FlatLambdaCDM(70, 0.3, Tcmb0=0)).
	"flat70": {Name: "flat70", H0: 70, OmegaM: 0.3, W0: -1},
}

// DefaultPreset is the name of the preset used when none is chosen.
const DefaultPreset = "planck2018"

// PresetNames returns the names accepted by Preset, sorted, in a new slice.
func PresetNames() []string {
	names := make([]string, 0, len(presets))
	for n := range presets {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}

// Preset returns the parameters of a named model (case-insensitive; see
// PresetNames). The default is DefaultPreset, "planck2018". Presets are flat
// (Ωk = 0, Ω_Λ derived) and FixOmegaL is false.
func Preset(name string) (Params, error) {
	p, ok := presets[strings.ToLower(strings.TrimSpace(name))]
	if !ok {
		return Params{}, fmt.Errorf("cosmo: unknown cosmology %q (known: %s)", name, strings.Join(PresetNames(), ", "))
	}
	return p, nil
}
