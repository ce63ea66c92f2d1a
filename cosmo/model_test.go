package cosmo

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestRedshiftAtComovingDistance checks the Newton inverse: z → D_C → z
// returns z within 1e-9 for z ≤ 10 and within 1e-9 (1+z) up to MaxRedshift.
func TestRedshiftAtComovingDistance(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 5))
	for name, p := range referenceModels {
		m, err := New(p)
		if err != nil {
			t.Fatal(err)
		}
		var worst float64
		for i := 0; i < 500; i++ {
			z := 10 * r.Float64()
			if i%5 == 0 {
				z = math.Exp(r.Float64() * math.Log(MaxRedshift))
			}
			if i%17 == 0 {
				z = 1e-7 * r.Float64()
			}
			got, err := m.RedshiftAtComovingDistance(m.ComovingDistance(z))
			if err != nil {
				t.Fatalf("%s z=%v: %v", name, z, err)
			}
			e := math.Abs(got - z)
			if z > 10 {
				e /= 1 + z
			}
			worst = math.Max(worst, e)
			if e > 1e-9 {
				t.Errorf("%s: z=%v → D_C → z=%.15g (error %.2g)", name, z, got, e)
			}
		}
		t.Logf("%s: largest inverse round-trip error %.2g", name, worst)
		if z, err := m.RedshiftAtComovingDistance(0); z != 0 || err != nil {
			t.Errorf("%s: inverse at 0 = %v, %v", name, z, err)
		}
		for _, d := range []float64{-1, math.NaN(), math.Inf(1), 1e6} {
			var de *DomainError
			if _, err := m.RedshiftAtComovingDistance(d); !errors.As(err, &de) {
				t.Errorf("%s: inverse at %v: error %v, want *DomainError", name, d, err)
			}
		}
	}
}

// TestDomain checks the documented edges: z = 0 gives exactly 0, negative,
// NaN and too-large redshifts give NaN.
func TestDomain(t *testing.T) {
	p, _ := Preset(DefaultPreset)
	m, _ := New(p)
	zeroAt0 := map[string]func(float64) float64{
		"ComovingDistance": m.ComovingDistance, "TransverseComovingDistance": m.TransverseComovingDistance,
		"AngularDiameterDistance": m.AngularDiameterDistance, "LuminosityDistance": m.LuminosityDistance,
		"DifferentialComovingVolume": m.DifferentialComovingVolume, "LookbackTime": m.LookbackTime,
	}
	for name, f := range zeroAt0 {
		if v := f(0); v != 0 {
			t.Errorf("%s(0) = %v, want 0", name, v)
		}
	}
	all := map[string]func(float64) float64{
		"E": m.E, "DistanceModulus": m.DistanceModulus, "Growth": m.Growth, "GrowthRate": m.GrowthRate,
		"OmegaM": m.OmegaM, "volume": func(z float64) float64 { return m.ComovingVolume(0, z, 1) },
	}
	for k, v := range zeroAt0 {
		all[k] = v
	}
	for name, f := range all {
		for _, z := range []float64{-1e-9, -0.5, -2, math.NaN(), math.Inf(1), MaxRedshift * (1 + 1e-9)} {
			if v := f(z); !math.IsNaN(v) {
				t.Errorf("%s(%v) = %v, want NaN", name, z, v)
			}
		}
		if v := f(MaxRedshift); math.IsNaN(v) {
			t.Errorf("%s(MaxRedshift) is NaN", name)
		}
	}
	if !math.IsInf(m.DistanceModulus(0), -1) {
		t.Errorf("DistanceModulus(0) = %v, want -Inf", m.DistanceModulus(0))
	}
	if m.E(0) != 1 {
		t.Errorf("E(0) = %.17g, want 1", m.E(0))
	}
	for _, sr := range []float64{-1, 13, math.NaN()} {
		if v := m.ComovingVolume(0, 1, sr); !math.IsNaN(v) {
			t.Errorf("ComovingVolume over %v sr = %v, want NaN", sr, v)
		}
	}
}

// TestNewValidation checks that nonsense parameters are refused.
func TestNewValidation(t *testing.T) {
	bad := map[string]Params{
		"H0 zero":       LambdaCDM(0, 0.3, 0),
		"H0 negative":   LambdaCDM(-70, 0.3, 0),
		"H0 given as h": LambdaCDM(0.7, 0.3, 0),
		"Omega_m < 0":   LambdaCDM(70, -0.1, 0),
		"NaN":           LambdaCDM(70, math.NaN(), 0),
		"Inf w0":        {H0: 70, OmegaM: 0.3, W0: math.Inf(-1)},
		"T < 0":         {H0: 70, OmegaM: 0.3, W0: -1, TCMB: -1},
		"Neff < 0":      {H0: 70, OmegaM: 0.3, W0: -1, TCMB: 2.7, Neff: -1},
		"Omega_b > Om":  {H0: 70, OmegaM: 0.3, W0: -1, OmegaB: 0.4},
		"sigma8 < 0":    {H0: 70, OmegaM: 0.3, W0: -1, Sigma8: -0.8},
		"bounce":        {H0: 70, OmegaM: 0.3, OmegaL: 2.5, FixOmegaL: true, W0: -1},
		"no big bang":   {H0: 70, OmegaM: 0.05, OmegaL: 1.5, FixOmegaL: true, W0: -1},
		// Negative Ω_Λ = −0.2 with w → 1 early grows as (1+z)^6: E² < 0 at high z.
		"negative Omega_L with w > 0 early": {H0: 70, OmegaM: 0.3, OmegaK: 0.9, W0: -1, Wa: 2},
	}
	for name, p := range bad {
		if m, err := New(p); err == nil {
			t.Errorf("%s: New accepted %v", name, m)
		} else if !strings.HasPrefix(err.Error(), "cosmo: ") {
			t.Errorf("%s: error %q lacks the package prefix", name, err)
		}
	}
	// A negative cosmological constant is fine while E² > 0 (Ω_Λ = −0.3).
	if _, err := New(Params{H0: 70, OmegaM: 0.3, OmegaK: 1, W0: -1}); err != nil {
		t.Errorf("Ω_Λ = −0.3, Ωk = 1: %v", err)
	}
	if _, err := New(LambdaCDM(0.7, 0.3, 0)); err == nil || !strings.Contains(err.Error(), "not h") {
		t.Errorf("H0 = 0.7: error %v should say H0 is not h", err)
	}
}

// TestParamsRoundTrip checks that Params() rebuilds the same model and that
// KeyValues and String carry every parameter.
func TestParamsRoundTrip(t *testing.T) {
	for name, p := range referenceModels {
		m, err := New(p)
		if err != nil {
			t.Fatal(err)
		}
		m2, err := New(m.Params())
		if err != nil {
			t.Fatal(err)
		}
		if m.String() != m2.String() {
			t.Errorf("%s: %s\nrebuilt: %s", name, m, m2)
		}
		if got, want := m2.ComovingDistance(1), m.ComovingDistance(1); got != want {
			t.Errorf("%s: rebuilt model D_C(1) = %v, want %v", name, got, want)
		}
		kv := m.KeyValues()
		if len(kv) != 15 || kv[0][0] != "name" || kv[1][0] != "H0" {
			t.Errorf("%s: KeyValues = %v", name, kv)
		}
		if strings.ContainsAny(m.String(), "\n\t") {
			t.Errorf("String is not one line: %q", m.String())
		}
	}
	// Ω_Λ as input: Ωk derived.
	m, _ := New(Params{H0: 70, OmegaM: 0.3, OmegaL: 0.6, FixOmegaL: true, W0: -1})
	if got := m.Params().OmegaK; math.Abs(got-0.1) > 1e-15 {
		t.Errorf("derived Ωk = %v, want 0.1", got)
	}
	// Default Neff with a temperature.
	m, _ = New(Params{H0: 70, OmegaM: 0.3, W0: -1, TCMB: 2.7255})
	if m.Params().Neff != DefaultNeff {
		t.Errorf("Neff = %v, want default %v", m.Params().Neff, DefaultNeff)
	}
}

// TestPresets checks the preset table.
func TestPresets(t *testing.T) {
	names := PresetNames()
	for i := 1; i < len(names); i++ {
		if names[i-1] >= names[i] {
			t.Errorf("PresetNames not sorted: %v", names)
		}
	}
	for _, n := range names {
		p, err := Preset(n)
		if err != nil {
			t.Fatal(err)
		}
		if p.Name != n {
			t.Errorf("preset %q has Name %q", n, p.Name)
		}
		if _, err := New(p); err != nil {
			t.Errorf("preset %q: %v", n, err)
		}
	}
	if _, err := Preset("no-such-model"); err == nil || !strings.Contains(err.Error(), "planck2018") {
		t.Errorf("unknown preset: error %v should list the known names", err)
	}
	p, err := Preset(" Planck2018 ")
	if err != nil {
		t.Fatal(err)
	}
	// from memory: Planck 2018 VI (A&A 641, A6), Table 2, TT,TE,EE+lowE+lensing+BAO.
	want := map[string][2]float64{
		"H0": {p.H0, 67.66}, "Omega_m": {p.OmegaM, 0.3111}, "Omega_b h^2": {p.OmegaB * 0.6766 * 0.6766, 0.02242},
		"n_s": {p.Ns, 0.9665}, "sigma8": {p.Sigma8, 0.8102}, "T_CMB": {p.TCMB, 2.7255}, "N_eff": {p.Neff, 3.046},
	}
	for k, v := range want {
		if math.Abs(v[0]-v[1]) > 1e-12 {
			t.Errorf("planck2018 %s = %v, want %v", k, v[0], v[1])
		}
	}
	m, _ := New(p)
	// Flat: Ω_Λ = 1 − Ωm − Ωr.
	if d := math.Abs(m.om + m.ol + m.or - 1); d > 1e-15 || m.ok != 0 {
		t.Errorf("planck2018 not flat: Ωm + Ω_Λ + Ωr = %v, Ωk = %v", m.om+m.ol+m.or, m.ok)
	}
}

// TestPhotonDensity checks Ω_γ h² for T = 2.7255 K.
func TestPhotonDensity(t *testing.T) {
	// from memory: Ω_γ h² = 2.473e-5 for T_CMB = 2.7255 K (Fixsen 2009 temperature).
	if got := omegaGammaH2(2.7255); math.Abs(got/2.473e-5-1) > 2e-4 {
		t.Errorf("Ω_γ h² = %.6g, want 2.473e-5", got)
	}
	// Ω_γ ∝ T⁴.
	if got := omegaGammaH2(2 * 2.7255); math.Abs(got/(16*omegaGammaH2(2.7255))-1) > 1e-15 {
		t.Errorf("Ω_γ not ∝ T⁴")
	}
	// 7/8 (4/11)^{4/3} = 0.22710731766 as in astropy 5.2.1 (FLRW.nu_relative_density).
	if math.Abs(neutrinoFactor-0.22710731766) > 1e-11 {
		t.Errorf("neutrino factor %.15g", neutrinoFactor)
	}
	// The parsec of IAU 2015 B2 as astropy 5.2.1 has it: u.Mpc.to(u.km).
	if relDiff(mpcKm, 3.085677581491367e19) > 1e-15 {
		t.Errorf("Mpc = %.17g km", mpcKm)
	}
}

// TestGaussLegendre checks the quadrature rules: an n-point rule integrates
// polynomials of degree ≤ 2n−1 exactly (Gauss 1814), and the nodes equal
// gonum's.
func TestGaussLegendre(t *testing.T) {
	for _, r := range []glRule{gl5, gl10, newGLRule(1), newGLRule(7)} {
		n := len(r.x)
		for k := 0; k < 2*n; k++ {
			got := r.apply(func(x float64) float64 { return math.Pow(x, float64(k)) }, 0, 1)
			if math.Abs(got-1/float64(k+1)) > 1e-15 {
				t.Errorf("%d-point rule: ∫₀¹ x^%d = %.17g, want %.17g", n, k, got, 1/float64(k+1))
			}
		}
	}
	if got := integrate(math.Sin, 0, math.Pi, 0.3); math.Abs(got-2) > 1e-15 {
		t.Errorf("∫₀^π sin = %.17g, want 2", got)
	}
	if got := integrate(func(x float64) float64 { return 1 / (1 + 1e4*x*x) }, -1, 1, 2); math.Abs(got/(2*math.Atan(100)/100)-1) > 1e-13 {
		t.Errorf("Runge integrand: %.17g, want %.17g", got, 2*math.Atan(100)/100)
	}
}

// TestParamsFromKeyValues checks that a model rebuilt from its recorded
// key-value pairs has the same parameters and the same distances.
func TestParamsFromKeyValues(t *testing.T) {
	for _, name := range PresetNames() {
		p, _ := Preset(name)
		m, err := New(p)
		if err != nil {
			t.Fatal(err)
		}
		q, err := ParamsFromKeyValues(m.KeyValues())
		if err != nil {
			t.Fatal(err)
		}
		m2, err := New(q)
		if err != nil {
			t.Fatal(err)
		}
		if m.ComovingDistance(1) != m2.ComovingDistance(1) || m.Params().Sigma8 != m2.Params().Sigma8 {
			t.Errorf("%s: rebuilt model differs: %v vs %v", name, m.ComovingDistance(1), m2.ComovingDistance(1))
		}
	}
	if _, err := ParamsFromKeyValues([][2]string{{"H0", "70"}}); err == nil {
		t.Error("incomplete record accepted")
	}
}
