package mock

import (
	"math"
	"testing"

	"github.com/filigree-survey/filigree/cosmo"
	"gonum.org/v1/gonum/mathext"
)

// TestSchechterDensity checks the integral of the Schechter function: for
// all galaxies brighter than M_f it is φ* Γ(α+1, x_f), x_f = 10^(0.4(M*−M_f)),
// the upper incomplete gamma function (gonum's mathext.GammaIncRegComp
// times math.Gamma), which tends to φ* Γ(α+1) for α > −1.
func TestSchechterDensity(t *testing.T) {
	s := Schechter{PhiStar: 0.01, MStar: -20, Alpha: -0.5}
	if got, want := s.Density(-40, 40), 0.01*math.Gamma(0.5); math.Abs(got/want-1) > 1e-6 {
		t.Errorf("all magnitudes: %v, φ*Γ(α+1) = %v", got, want)
	}
	for _, faint := range []float64{-22, -20, -18, 10} {
		xf := math.Pow(10, 0.4*(s.MStar-faint))
		want := 0.01 * mathext.GammaIncRegComp(0.5, xf) * math.Gamma(0.5)
		if got := s.Density(-40, faint); math.Abs(got/want-1) > 1e-6 {
			t.Errorf("M < %v: %v, φ*Γ(α+1, x_f) = %v", faint, got, want)
		}
	}
	if s.Density(-19, -20) != 0 {
		t.Error("empty magnitude range should give 0")
	}
}

// TestFluxLimitedFalls checks that n̄(z) of a flux-limited survey falls
// with redshift and respects its cap.
func TestFluxLimitedFalls(t *testing.T) {
	p, _ := cosmo.Preset("planck2018")
	m, _ := cosmo.New(p)
	f := FluxLimited{LF: DefaultSchechter, Bright: 14, Faint: 17.7, Model: m, Cap: 0.02}
	if err := f.Validate(); err != nil {
		t.Fatal(err)
	}
	prev := math.Inf(1)
	for z := 0.01; z < 0.3; z += 0.01 {
		n := f.NBar(z)
		if n > prev+1e-15 || n > 0.02 {
			t.Errorf("n̄(%.2f) = %v after %v", z, n, prev)
		}
		prev = n
	}
}
