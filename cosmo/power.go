package cosmo

import (
	"errors"
	"fmt"
	"math"
)

// eh98DefaultTCMB is the CMB temperature (K) the transfer function uses
// when the model has none (explicit parameters switch radiation off in the
// background, but the transfer function needs a photon temperature):
// Fixsen 2009, ApJ 707, 916.
const eh98DefaultTCMB = 2.7255

// sigma8Radius is the radius of the top-hat sphere that defines σ8, Mpc/h.
const sigma8Radius = 8.0

// LinearPower is the linear matter power spectrum today,
//
//	P(k) = A k^n_s T(k)²,
//
// with the transfer function T(k) of Eisenstein & Hu (1998, ApJ 496, 605;
// "EH98" below): cold dark matter and baryons, baryon acoustic oscillations
// included, or their no-wiggle fit (EH98 §4.2). A is set so that the rms
// fluctuation in top-hat spheres of 8 Mpc/h equals σ8. Massive neutrinos
// and dark-energy clustering are ignored, as in EH98. Wavenumbers are in
// h/Mpc and P in (Mpc/h)³. A LinearPower is read-only after construction
// and safe for concurrent use.
type LinearPower struct {
	noWiggle bool
	ns       float64
	amp      float64 // A
	h        float64

	// EH98 quantities (Mpc, Mpc⁻¹ in physical units, not h⁻¹).
	omh2, obh2, fb, fc, theta float64
	keq, zeq, zd, s, ksilk    float64
	alphaC, betaC             float64
	alphaB, betaB, betaNode   float64
	alphaGamma, sApprox       float64
}

// PowerOptions choose the transfer function.
type PowerOptions struct {
	// NoWiggle selects EH98's zero-baryon-oscillation fit (their eqs. 26–31):
	// the baryon suppression of power is kept, the acoustic wiggles are not.
	NoWiggle bool
}

// LinearPower returns the linear power spectrum of the model today. The model
// must carry Ωb > 0 (with Ωb < Ωm), n_s > 0 and σ8 > 0, as the presets do;
// otherwise the error says which is missing. The transfer function uses the
// model's CMB temperature, or 2.7255 K when the model has none.
func (m *Model) LinearPower(opt PowerOptions) (*LinearPower, error) {
	p := m.p
	var miss []string
	if !(p.OmegaB > 0) {
		miss = append(miss, "Ωb")
	}
	if !(p.Ns > 0) {
		miss = append(miss, "n_s")
	}
	if !(p.Sigma8 > 0) {
		miss = append(miss, "σ8")
	}
	if len(miss) > 0 {
		return nil, fmt.Errorf("cosmo: the linear power spectrum needs %v; the model %q has none", miss, m.p.Name)
	}
	if !(p.OmegaB < p.OmegaM) {
		return nil, fmt.Errorf("cosmo: Ωb = %g must be below Ωm = %g for the power spectrum", p.OmegaB, p.OmegaM)
	}
	tcmb := p.TCMB
	if tcmb <= 0 {
		tcmb = eh98DefaultTCMB
	}
	lp := &LinearPower{noWiggle: opt.NoWiggle, ns: p.Ns, h: p.H0 / 100}
	lp.setupEH98(p.OmegaM, p.OmegaB, lp.h, tcmb)
	lp.amp = 1
	s := lp.Sigma(sigma8Radius)
	if !(s > 0) || math.IsInf(s, 0) {
		return nil, errors.New("cosmo: σ(8 Mpc/h) of the unnormalised spectrum is not finite")
	}
	lp.amp = (p.Sigma8 / s) * (p.Sigma8 / s)
	return lp, nil
}

// setupEH98 computes the scale-independent quantities of EH98 §2–3.
func (lp *LinearPower) setupEH98(om, ob, h, tcmb float64) {
	lp.theta = tcmb / 2.7
	t2 := lp.theta * lp.theta
	omh2 := om * h * h
	obh2 := ob * h * h
	lp.omh2, lp.obh2 = omh2, obh2
	lp.fb = ob / om
	lp.fc = (om - ob) / om
	lp.zeq = 2.50e4 * omh2 / (t2 * t2) // eq. 2
	lp.keq = 7.46e-2 * omh2 / t2       // eq. 3, Mpc⁻¹
	b1 := 0.313 * math.Pow(omh2, -0.419) * (1 + 0.607*math.Pow(omh2, 0.674))
	b2 := 0.238 * math.Pow(omh2, 0.223)
	lp.zd = 1291 * math.Pow(omh2, 0.251) / (1 + 0.659*math.Pow(omh2, 0.828)) * (1 + b1*math.Pow(obh2, b2)) // eq. 4
	r := func(z float64) float64 { return 31.5 * obh2 / (t2 * t2) * (1000 / z) }                           // eq. 5
	req, rd := r(lp.zeq), r(lp.zd)
	lp.s = 2 / (3 * lp.keq) * math.Sqrt(6/req) *
		math.Log((math.Sqrt(1+rd)+math.Sqrt(rd+req))/(1+math.Sqrt(req))) // eq. 6
	lp.ksilk = 1.6 * math.Pow(obh2, 0.52) * math.Pow(omh2, 0.73) * (1 + math.Pow(10.4*omh2, -0.95)) // eq. 7

	// CDM suppression, eqs. 11–12.
	a1 := math.Pow(46.9*omh2, 0.670) * (1 + math.Pow(32.1*omh2, -0.532))
	a2 := math.Pow(12.0*omh2, 0.424) * (1 + math.Pow(45.0*omh2, -0.582))
	lp.alphaC = math.Pow(a1, -lp.fb) * math.Pow(a2, -lp.fb*lp.fb*lp.fb)
	bb1 := 0.944 / (1 + math.Pow(458*omh2, -0.708))
	bb2 := math.Pow(0.395*omh2, -0.0266)
	lp.betaC = 1 / (1 + bb1*(math.Pow(lp.fc, bb2)-1))

	// Baryons, eqs. 14–15, 23–24.
	y := (1 + lp.zeq) / (1 + lp.zd)
	sy := math.Sqrt(1 + y)
	gy := y * (-6*sy + (2+3*y)*math.Log((sy+1)/(sy-1)))
	lp.alphaB = 2.07 * lp.keq * lp.s * math.Pow(1+rd, -0.75) * gy
	lp.betaB = 0.5 + lp.fb + (3-2*lp.fb)*math.Sqrt(math.Pow(17.2*omh2, 2)+1)
	lp.betaNode = 8.41 * math.Pow(omh2, 0.435)

	// No-wiggle fit, eqs. 26 and 31.
	lp.sApprox = 44.5 * math.Log(9.83/omh2) / math.Sqrt(1+10*math.Pow(obh2, 0.75))
	lp.alphaGamma = 1 - 0.328*math.Log(431*omh2)*lp.fb + 0.38*math.Log(22.3*omh2)*lp.fb*lp.fb
}

// t0 is EH98's pressureless transfer function T̃0(k, αc, βc), eqs. 19–20,
// with q = k/(13.41 k_eq).
func t0(q, alphaC, betaC float64) float64 {
	l := math.Log(math.E + 1.8*betaC*q)
	c := 14.2/alphaC + 386/(1+69.9*math.Pow(q, 1.08))
	return l / (l + c*q*q)
}

// Transfer returns T(k) for k in h/Mpc (T → 1 as k → 0); 1 for k ≤ 0.
func (lp *LinearPower) Transfer(k float64) float64 {
	if !(k > 0) {
		return 1
	}
	if lp.noWiggle {
		return lp.transferNoWiggle(k)
	}
	kk := k * lp.h // Mpc⁻¹
	q := kk / (13.41 * lp.keq)
	ks := kk * lp.s
	// CDM, eqs. 17–18.
	f := 1 / (1 + math.Pow(ks/5.4, 4))
	tc := f*t0(q, 1, lp.betaC) + (1-f)*t0(q, lp.alphaC, lp.betaC)
	// Baryons, eqs. 21–22, with j0(x) = sin x / x.
	st := lp.s / math.Cbrt(1+math.Pow(lp.betaNode/ks, 3))
	x := kk * st
	j0 := 1.0
	if x > 1e-6 {
		j0 = math.Sin(x) / x
	}
	tb := (t0(q, 1, 1)/(1+math.Pow(ks/5.2, 2)) +
		lp.alphaB/(1+math.Pow(lp.betaB/ks, 3))*math.Exp(-math.Pow(kk/lp.ksilk, 1.4))) * j0
	return lp.fb*tb + lp.fc*tc // eq. 16
}

// transferNoWiggle is EH98's fit without acoustic oscillations, eqs. 28–31.
func (lp *LinearPower) transferNoWiggle(k float64) float64 {
	kk := k * lp.h
	om := lp.omh2 / (lp.h * lp.h)
	gamma := om * lp.h * (lp.alphaGamma + (1-lp.alphaGamma)/(1+math.Pow(0.43*kk*lp.sApprox, 4)))
	q := k * lp.theta * lp.theta / gamma
	l0 := math.Log(2*math.E + 1.8*q)
	c0 := 14.2 + 731/(1+62.5*q)
	return l0 / (l0 + c0*q*q)
}

// At returns P(k) today in (Mpc/h)³ for k in h/Mpc; 0 for k ≤ 0. Scale by
// D(z)² (Model.Growth) for another redshift.
func (lp *LinearPower) At(k float64) float64 {
	if !(k > 0) {
		return 0
	}
	t := lp.Transfer(k)
	return lp.amp * math.Pow(k, lp.ns) * t * t
}

// Sigma returns the rms linear density fluctuation today in top-hat spheres
// of radius r (Mpc/h): σ²(r) = (1/2π²) ∫ k² P(k) W²(kr) dk with W(x) =
// 3(sin x − x cos x)/x³, integrated in ln k over [10⁻⁶, 10³] h/Mpc (the
// integrand is below 10⁻¹⁰ of its peak outside that range for r ≥ 0.1).
func (lp *LinearPower) Sigma(r float64) float64 {
	f := func(lnk float64) float64 {
		k := math.Exp(lnk)
		w := tophatWindow(k * r)
		return k * k * k * lp.At(k) * w * w
	}
	return math.Sqrt(integrate(f, math.Log(1e-6), math.Log(1e3), 0.5) / (2 * math.Pi * math.Pi))
}

// tophatWindow is the Fourier transform of a unit top-hat sphere,
// 3(sin x − x cos x)/x³, by its Taylor series 1 − x²/10 + x⁴/280 below
// x = 10⁻² where the closed form cancels.
func tophatWindow(x float64) float64 {
	if x < 1e-2 {
		x2 := x * x
		return 1 - x2/10 + x2*x2/280
	}
	return 3 * (math.Sin(x) - x*math.Cos(x)) / (x * x * x)
}

// SoundHorizon returns the comoving sound horizon at the drag epoch in Mpc
// (not Mpc/h) from EH98 eq. 6, and the drag redshift z_d from eq. 4.
func (lp *LinearPower) SoundHorizon() (sMpc, zDrag float64) { return lp.s, lp.zd }

// SoundHorizonApprox returns EH98's fit to the sound horizon, eq. 26, in Mpc.
func (lp *LinearPower) SoundHorizonApprox() float64 { return lp.sApprox }

// NoWiggle reports whether the spectrum is the no-wiggle fit.
func (lp *LinearPower) NoWiggle() bool { return lp.noWiggle }

// Ns returns the spectral index n_s.
func (lp *LinearPower) Ns() float64 { return lp.ns }

// Amplitude returns the normalisation A of P(k) = A k^n_s T(k)², (Mpc/h)^(3+n_s).
func (lp *LinearPower) Amplitude() float64 { return lp.amp }
