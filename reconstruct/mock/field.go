package mock

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// LinearField sets dk (len g.HalfLen()) to the half spectrum of a Gaussian
// random density contrast today with power spectrum P(k) = lp.At(k), in the
// convention of grid.PowerSpectrum (P = V/N⁶ ⟨|δ_k|²⟩). It draws unit white
// noise w in every cell (counter-based, by seed), transforms it (⟨|w_k|²⟩ =
// N³) and multiplies each mode by √(P(k) N³/V); the k = 0 mode is set to
// zero so the box has the mean density. Drawing the noise in real space
// makes the field exactly real, Hermitian partners included. work is a
// real scratch grid of len g.Len() (overwritten).
func LinearField(dk []complex128, work []float64, fft *grid.FFT, g grid.Geometry, lp *cosmo.LinearPower, seed uint64) error {
	if err := g.Validate(); err != nil {
		return err
	}
	if len(dk) != g.HalfLen() || len(work) != g.Len() || fft.N() != g.N {
		return fmt.Errorf("mock: LinearField: buffer sizes do not match N = %d", g.N)
	}
	parallel.For(len(work), 1<<16, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			work[i] = normal(seed, streamNoise, uint64(i))
		}
	})
	fft.Forward(dk, work)
	n3 := float64(g.Len())
	amp := newAmplitudeTable(lp, g, n3/g.Volume())
	g.EachMode(func(kx, ky, kz float64, idx int) {
		k := math.Sqrt(kx*kx + ky*ky + kz*kz)
		if k == 0 {
			dk[idx] = 0
			return
		}
		dk[idx] *= complex(amp.at(k), 0)
	})
	return nil
}

// amplitudeTable holds √(scale·P(k)) on a grid uniform in ln k from half the
// fundamental to beyond the corner of the grid's k cube, interpolated
// linearly in ln k and ln P: evaluating Eisenstein & Hu's transfer function
// at each of N³/2 modes would dominate the run time. With 2¹⁴ nodes the
// step in ln k is below 5e-4, so the interpolation error (≈ Δ²/8 times the
// curvature of ln P in ln k, which is of order 1 even across the acoustic
// wiggles) stays below 1e-6 of P.
type amplitudeTable struct {
	lnk0, invStep float64
	lnAmp         []float64
}

func newAmplitudeTable(lp *cosmo.LinearPower, g grid.Geometry, scale float64) *amplitudeTable {
	const n = 1 << 14
	kMin := 0.5 * 2 * math.Pi / g.L
	kMax := 2 * math.Sqrt(3) * math.Pi / g.H()
	lo, hi := math.Log(kMin), math.Log(kMax)
	t := &amplitudeTable{lnk0: lo, invStep: float64(n-1) / (hi - lo), lnAmp: make([]float64, n)}
	parallel.For(n, 256, func(a, b int) {
		for i := a; i < b; i++ {
			k := math.Exp(lo + float64(i)/t.invStep)
			t.lnAmp[i] = 0.5 * math.Log(scale*lp.At(k))
		}
	})
	return t
}

func (t *amplitudeTable) at(k float64) float64 {
	s := (math.Log(k) - t.lnk0) * t.invStep
	i := int(s)
	if i < 0 {
		i = 0
	}
	if i > len(t.lnAmp)-2 {
		i = len(t.lnAmp) - 2
	}
	u := s - float64(i)
	return math.Exp(t.lnAmp[i] + u*(t.lnAmp[i+1]-t.lnAmp[i]))
}
