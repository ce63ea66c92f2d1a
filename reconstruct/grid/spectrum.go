package grid

import (
	"fmt"
	"math"
	"sort"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// EachMode calls fn(kx, ky, kz, idx) for every mode of the half spectrum,
// with kx = Wavenumber(i), ky = Wavenumber(j), kz = Wavenumber(k) (h/Mpc;
// kz ≥ 0) and idx = KIndex(i,j,k). Calls run in parallel, one x-plane i per
// chunk, so fn may write only to index idx of shared slices (or to state
// private to the plane).
func (g Geometry) EachMode(fn func(kx, ky, kz float64, idx int)) {
	n := g.N
	h := n/2 + 1
	kv := g.wavenumbers()
	parallel.For(n, 1, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			for j := 0; j < n; j++ {
				base := (i*n + j) * h
				for k := 0; k < h; k++ {
					fn(kv[i], kv[j], kv[k], base+k)
				}
			}
		}
	})
}

// SmoothGaussian multiplies the half spectrum dk in place by the Fourier
// transform of a normalised Gaussian of width R (Mpc/h), exp(−k²R²/2), so
// the mean (k = 0 mode) is kept. R = 0 leaves dk unchanged. It panics if
// len(dk) ≠ g.HalfLen().
func SmoothGaussian(dk []complex128, g Geometry, R float64) {
	checkHalf(dk, g, "SmoothGaussian")
	if R == 0 {
		return
	}
	// The filter separates, exp(−k²R²/2) = Π_i exp(−k_i²R²/2), so one
	// table of N exponentials serves every mode.
	e := make([]float64, g.N)
	for i := range e {
		k := g.Wavenumber(i)
		e[i] = math.Exp(-0.5 * R * R * k * k)
	}
	n := g.N
	h := n/2 + 1
	parallel.For(n, 1, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			for j := 0; j < n; j++ {
				base := (i*n + j) * h
				eij := e[i] * e[j]
				for k := 0; k < h; k++ {
					dk[base+k] *= complex(eij*e[k], 0)
				}
			}
		}
	})
}

// DeconvolveCIC divides the half spectrum dk in place by the cloud-in-cell
// assignment window W(k) = Π_i sinc²(k_i H/2), sinc(x) = sin x / x
// (Hockney & Eastwood 1981; Jing 2005 with p = 2), undoing the
// smoothing of AssignCIC. W ≥ (2/π)⁶ ≈ 0.066 at the Nyquist corner, so the
// division is always finite. Aliasing is not corrected.
func DeconvolveCIC(dk []complex128, g Geometry) {
	checkHalf(dk, g, "DeconvolveCIC")
	half := 0.5 * g.H()
	w := make([]float64, g.N)
	for i := range w {
		s := sinc(g.Wavenumber(i) * half)
		w[i] = 1 / (s * s)
	}
	n := g.N
	h := n/2 + 1
	parallel.For(n, 1, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			for j := 0; j < n; j++ {
				base := (i*n + j) * h
				wij := w[i] * w[j]
				for k := 0; k < h; k++ {
					dk[base+k] *= complex(wij*w[k], 0)
				}
			}
		}
	})
}

func sinc(x float64) float64 {
	if x == 0 {
		return 1
	}
	return math.Sin(x) / x
}

// Gradient sets dst to the half spectrum of ∂f/∂x_axis (axis 0, 1, 2 for
// x, y, z): dst = i·k_axis·src. The Nyquist plane of that axis is set to
// zero, since the derivative of a real Nyquist mode is not a real field.
// dst may be src. It panics on a bad axis or length.
func Gradient(dst, src []complex128, g Geometry, axis int) {
	checkHalf(dst, g, "Gradient")
	checkHalf(src, g, "Gradient")
	if axis < 0 || axis > 2 {
		panic(fmt.Sprintf("grid: Gradient axis %d", axis))
	}
	nyq := g.Wavenumber(g.N / 2) // bit-identical to the kx, ky, kz EachMode passes
	g.EachMode(func(kx, ky, kz float64, idx int) {
		ka := [3]float64{kx, ky, kz}[axis]
		if ka == nyq {
			dst[idx] = 0
			return
		}
		dst[idx] = complex(0, ka) * src[idx]
	})
}

// Hessian sets dst to the half spectrum of ∂²f/∂x_a∂x_b (a, b ∈ {0,1,2}):
// dst = −k_a·k_b·src. For a ≠ b the Nyquist planes of a and b are set to
// zero (the sign of a Nyquist wavenumber is ambiguous there); for a = b
// they are kept. dst may be src. It panics on a bad axis or length.
func Hessian(dst, src []complex128, g Geometry, a, b int) {
	checkHalf(dst, g, "Hessian")
	checkHalf(src, g, "Hessian")
	if a < 0 || a > 2 || b < 0 || b > 2 {
		panic(fmt.Sprintf("grid: Hessian axes %d, %d", a, b))
	}
	nyq := g.Wavenumber(g.N / 2) // bit-identical to the kx, ky, kz EachMode passes
	g.EachMode(func(kx, ky, kz float64, idx int) {
		kk := [3]float64{kx, ky, kz}
		if a != b && (kk[a] == nyq || kk[b] == nyq) {
			dst[idx] = 0
			return
		}
		dst[idx] = complex(-kk[a]*kk[b], 0) * src[idx]
	})
}

// PowerBin is one bin of a binned power spectrum: modes with KLo ≤ |k| <
// KHi (h/Mpc), their mean |k| KMean, the mean power P ((Mpc/h)³) and the
// number of modes of the full spectrum counted. An empty bin has Modes = 0
// and KMean = P = NaN.
type PowerBin struct {
	KLo, KHi, KMean, P float64
	Modes              int
}

// PowerSpectrum bins the power of the density-contrast half spectrum dk
// (made by FFT.Forward from a real δ on geometry g): P(k) = V/N⁶·|δ_k|²
// averaged over the modes with kEdges[b] ≤ |k| < kEdges[b+1]. Every mode of
// the full N³ spectrum is counted once: half-spectrum modes with 0 < k_z <
// N/2 stand for themselves and their Hermitian partner, those on the
// planes k_z = 0 and k_z = N/2 only for themselves. The k = 0 mode is
// excluded. kEdges must be increasing (len ≥ 2); it panics otherwise.
// Sums are made per x-plane and added in plane order, so the result does
// not depend on GOMAXPROCS.
func PowerSpectrum(dk []complex128, g Geometry, kEdges []float64) []PowerBin {
	checkHalf(dk, g, "PowerSpectrum")
	return binModes(g, kEdges, func(idx int) float64 {
		v := dk[idx]
		return real(v)*real(v) + imag(v)*imag(v)
	})
}

// CrossSpectrum bins the cross power V/N⁶·Re(a_k b_k*) of two half spectra
// on geometry g exactly as PowerSpectrum bins |δ_k|²; CrossSpectrum(a, a)
// equals PowerSpectrum(a). It panics on bad lengths or edges.
func CrossSpectrum(a, b []complex128, g Geometry, kEdges []float64) []PowerBin {
	checkHalf(a, g, "CrossSpectrum")
	checkHalf(b, g, "CrossSpectrum")
	return binModes(g, kEdges, func(idx int) float64 {
		return real(a[idx])*real(b[idx]) + imag(a[idx])*imag(b[idx])
	})
}

func binModes(g Geometry, kEdges []float64, power func(idx int) float64) []PowerBin {
	nb := len(kEdges) - 1
	if nb < 1 {
		panic("grid: power spectrum needs at least two bin edges")
	}
	for b := 0; b < nb; b++ {
		if !(kEdges[b] < kEdges[b+1]) {
			panic(fmt.Sprintf("grid: power spectrum bin edges not increasing at %d", b))
		}
	}
	n := g.N
	h := n/2 + 1
	kv := g.wavenumbers()
	// Per-plane partial sums: sumP, sumK and mode count per bin.
	sumP := make([]float64, n*nb)
	sumK := make([]float64, n*nb)
	cnt := make([]int, n*nb)
	parallel.For(n, 1, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			sp := sumP[i*nb : (i+1)*nb]
			sk := sumK[i*nb : (i+1)*nb]
			c := cnt[i*nb : (i+1)*nb]
			for j := 0; j < n; j++ {
				k2xy := kv[i]*kv[i] + kv[j]*kv[j]
				base := (i*n + j) * h
				for k := 0; k < h; k++ {
					if i == 0 && j == 0 && k == 0 {
						continue
					}
					kmag := math.Sqrt(k2xy + kv[k]*kv[k])
					if kmag < kEdges[0] || kmag >= kEdges[nb] {
						continue
					}
					b := sort.SearchFloat64s(kEdges, kmag)
					// SearchFloat64s gives the first edge ≥ kmag; the bin
					// [e_b, e_b+1) holding kmag is b−1 unless kmag is an edge.
					if b == len(kEdges) || kEdges[b] != kmag {
						b--
					}
					m := 2
					if k == 0 || k == n/2 {
						m = 1
					}
					fm := float64(m)
					sp[b] += fm * power(base+k)
					sk[b] += fm * kmag
					c[b] += m
				}
			}
		}
	})
	norm := g.Volume() / (float64(n*n*n) * float64(n*n*n))
	out := make([]PowerBin, nb)
	for b := range out {
		var p, ks float64
		var m int
		for i := 0; i < n; i++ {
			p += sumP[i*nb+b]
			ks += sumK[i*nb+b]
			m += cnt[i*nb+b]
		}
		out[b] = PowerBin{KLo: kEdges[b], KHi: kEdges[b+1], Modes: m, KMean: math.NaN(), P: math.NaN()}
		if m > 0 {
			out[b].KMean = ks / float64(m)
			out[b].P = norm * p / float64(m)
		}
	}
	return out
}

func checkHalf(dk []complex128, g Geometry, who string) {
	if len(dk) != g.HalfLen() {
		panic(fmt.Sprintf("grid: %s: half spectrum length %d, want %d", who, len(dk), g.HalfLen()))
	}
}
