package mock

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// Galaxies are chosen among the particles with a local Lagrangian bias: the
// particle of cell q is a parent galaxy with probability
//
//	p(q) = min(1, F w(q)),   w = exp(β ν(q) − β²/2),
//
// where ν is the linear density contrast smoothed at Realisation.BiasSmooth
// in units of its rms (Realisation.Nu). ⟨w⟩ = 1 for Gaussian ν, and a long
// wavelength mode δ_l (k ≪ 1/BiasSmooth, which the smoothing leaves whole)
// raises the mean of ν by δ_l/σ_b, so on large scales the
// parents have Lagrangian bias b_L = β/σ_b relative to the linear field
// today and, moving with the matter, Eulerian bias b = 1 + b_L D(0)/D(z)
// (the local-Lagrangian picture of Mo & White 1996, with b_L held fixed in
// time). β is set from the requested bias b_ref at redshift z_ref,
// β = (b_ref − 1) σ_b D(z_ref); the cap at 1 lowers the bias a little where
// F w > 1, which is why the measured bias is reported. F is found by
// bisection so that the parents have the requested mean density.

// selection holds the parameters of the parent choice.
type selection struct {
	beta, f float64
	// frac is the mean of p over all particles: the parent density is frac·N³/V.
	frac float64
}

// newSelection returns the selection that gives parents with a mean fraction
// frac of the particles (0 < frac ≤ 1) and bias b at redshift zRef. b = 1
// selects at random.
func (r *Realisation) newSelection(b, zRef, frac float64) (selection, error) {
	if !(frac > 0 && frac <= 1) {
		return selection{}, fmt.Errorf("mock: a parent fraction of %.4g of the particles: want (0, 1]; use a finer grid or a lower density", frac)
	}
	if !(b >= 0) || math.IsInf(b, 0) {
		return selection{}, fmt.Errorf("mock: bias %v: want a finite number ≥ 0", b)
	}
	s := selection{beta: (b - 1) * r.SigmaBias * r.Model.Growth(zRef)}
	if frac == 1 {
		s.f, s.frac = math.Inf(1), 1
		return s, nil
	}
	mean := func(f float64) float64 {
		parts := make([]float64, (len(r.Nu)+(1<<16)-1)>>16)
		parallel.For(len(r.Nu), 1<<16, func(lo, hi int) {
			var sum float64
			for _, nu := range r.Nu[lo:hi] {
				sum += math.Min(1, f*s.weight(float64(nu)))
			}
			parts[lo>>16] = sum
		})
		var sum float64
		for _, p := range parts {
			sum += p
		}
		return sum / float64(len(r.Nu))
	}
	// Solve mean(F) = frac by bisection on a fine histogram of ν (2¹⁶
	// bins between its extremes, each member replaced by its bin centre, so
	// F is off by about β × the bin width, ~1e-4 relative), then evaluate
	// the exact mean for the F found: that is the parent fraction used.
	hist, lo0, width := r.nuHistogram(1 << 16)
	approx := func(f float64) float64 {
		var sum float64
		for i, c := range hist {
			if c != 0 {
				sum += float64(c) * math.Min(1, f*s.weight(lo0+(float64(i)+0.5)*width))
			}
		}
		return sum / float64(len(r.Nu))
	}
	lo, hi := frac, frac
	for approx(hi) < frac {
		hi *= 2
	}
	for approx(lo) > frac {
		lo /= 2
	}
	for range 80 {
		mid := 0.5 * (lo + hi)
		if approx(mid) < frac {
			lo = mid
		} else {
			hi = mid
		}
		if hi-lo < 1e-12*hi {
			break
		}
	}
	s.f = 0.5 * (lo + hi)
	s.frac = mean(s.f)
	return s, nil
}

// nuHistogram returns counts of Nu in nb equal bins from its minimum to its
// maximum, the lower edge and the bin width (cached after the first call).
func (r *Realisation) nuHistogram(nb int) ([]int64, float64, float64) {
	r.histOnce.Do(func() {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range r.Nu {
			lo = math.Min(lo, float64(v))
			hi = math.Max(hi, float64(v))
		}
		w := (hi - lo) / float64(nb)
		if w == 0 {
			w = 1
		}
		h := make([]int64, nb)
		for _, v := range r.Nu {
			i := int((float64(v) - lo) / w)
			if i >= nb {
				i = nb - 1
			}
			h[i]++
		}
		r.hist, r.histLo, r.histW = h, lo, w
	})
	return r.hist, r.histLo, r.histW
}

func (s selection) weight(nu float64) float64 { return math.Exp(s.beta*nu - 0.5*s.beta*s.beta) }

// prob returns the parent probability of the particle with bias field ν.
func (s selection) prob(nu float32) float64 {
	if math.IsInf(s.f, 1) {
		return 1
	}
	return math.Min(1, s.f*s.weight(float64(nu)))
}
