package mock

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/cosmo"
)

// Schechter is a galaxy luminosity function in absolute magnitude
// (Schechter 1976, ApJ 203, 297):
//
//	φ(M) dM = 0.4 ln 10 φ* x^(α+1) exp(−x) dM,  x = 10^(0.4 (M* − M)),
//
// with M* in M − 5 log₁₀ h and φ* in h³ Mpc⁻³.
type Schechter struct {
	PhiStar, MStar, Alpha float64
}

// DefaultSchechter is a present-day optical luminosity function of the
// usual shape. From memory: Blanton et al. 2003 (ApJ 592, 819) give for
// the r band at z = 0.1 φ* = 1.49 × 10⁻² h³ Mpc⁻³, M* − 5 log h = −20.44,
// α = −1.05; the demo uses these round values as an illustration only.
var DefaultSchechter = Schechter{PhiStar: 1.49e-2, MStar: -20.44, Alpha: -1.05}

// Density returns the number density (h³ Mpc⁻³) of galaxies with absolute
// magnitude between mBright and mFaint (mBright < mFaint), by 400-point
// composite Simpson integration in x = 10^(0.4(M* − M)) on a logarithmic
// grid (ln x), where the integrand x^(α+1) e^(−x) is smooth. It is 0 when
// mFaint ≤ mBright.
func (s Schechter) Density(mBright, mFaint float64) float64 {
	if !(mFaint > mBright) {
		return 0
	}
	// ln x limits: the faint end has the small x.
	lo := 0.4 * math.Ln10 * (s.MStar - mFaint)
	hi := 0.4 * math.Ln10 * (s.MStar - mBright)
	// Beyond x = 50 the integrand is below e^-50: clip for accuracy.
	hi = math.Min(hi, math.Log(50))
	if lo >= hi {
		return 0
	}
	const n = 400
	h := (hi - lo) / n
	f := func(u float64) float64 { return math.Exp((s.Alpha+1)*u - math.Exp(u)) }
	sum := f(lo) + f(hi)
	for i := 1; i < n; i++ {
		w := 2.0
		if i%2 == 1 {
			w = 4
		}
		sum += w * f(lo+float64(i)*h)
	}
	// φ(M) dM = φ* x^(α+1) e^(−x) d ln x.
	return s.PhiStar * sum * h / 3
}

// FluxLimited is the mean density of a survey limited in apparent
// magnitude to Bright ≤ m ≤ Faint: n̄(z) = ∫ φ(M) dM over the absolute
// magnitudes M − 5 log h = m − 5 log₁₀(D_L / (Mpc/h)) − 25 − K(z), with
// the K-correction K(z) = KSlope · z (a linear approximation; 0 by
// default), capped at Cap (h³ Mpc⁻³) if Cap > 0 — a flux-limited density
// diverges as z → 0 for α < −1.
type FluxLimited struct {
	LF          Schechter
	Bright      float64
	Faint       float64
	KSlope, Cap float64
	Model       *cosmo.Model
}

// NBar returns n̄(z) in h³ Mpc⁻³; 0 for z ≤ 0.
func (f FluxLimited) NBar(z float64) float64 {
	if !(z > 0) {
		return 0
	}
	dl := f.Model.LuminosityDistance(z) * f.Model.LittleH() // Mpc/h
	dm := 5*math.Log10(dl) + 25 + f.KSlope*z
	n := f.LF.Density(f.Bright-dm, f.Faint-dm)
	if f.Cap > 0 && n > f.Cap {
		n = f.Cap
	}
	return n
}

// Validate checks the parameters.
func (f FluxLimited) Validate() error {
	if f.Model == nil {
		return fmt.Errorf("mock: flux limit needs a cosmology")
	}
	if !(f.Faint > f.Bright) {
		return fmt.Errorf("mock: magnitude limits %v (bright) and %v (faint): the faint limit must be larger", f.Bright, f.Faint)
	}
	if !(f.LF.PhiStar > 0) || f.LF.Alpha <= -2 {
		return fmt.Errorf("mock: luminosity function φ* = %v, α = %v: want φ* > 0, α > −2", f.LF.PhiStar, f.LF.Alpha)
	}
	return nil
}
