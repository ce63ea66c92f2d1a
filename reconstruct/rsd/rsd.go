// Package rsd removes the linear (Kaiser 1987) redshift-space distortion
// from galaxy positions by iterating a displacement estimate: in linear
// theory a galaxy observed at redshift-space position s sits at
//
//	x = s − f (Ψ(x)·n̂) n̂,
//
// where Ψ is the Lagrangian displacement of the matter at x, f = dln D/dln a
// the growth rate and n̂ the line of sight (Kaiser 1987, MNRAS 227, 1: the
// peculiar velocity is v = f a H Ψ, and the observed distance moves by
// v·n̂/(aH)). Ψ is estimated from the galaxies' own positions (by the caller:
// Zel'dovich by FFT or optimal transport), so the equation is solved by the
// fixed-point iteration x⁰ = s, x^{k+1} = s − f (Ψ(x^k)·n̂) n̂, which
// contracts when f/b < 1 for galaxies of bias b, the usual case.
package rsd

import (
	"errors"
	"fmt"
	"math"
)

// Options control the iteration.
type Options struct {
	// Tol stops the iteration when no galaxy moved by more than Tol
	// (Mpc/h) in the last step; 0 means 0.01.
	Tol float64
	// MaxIter bounds the number of steps; 0 means 20.
	MaxIter int
	// Damping in (0, 1] mixes each new position with the previous one,
	// x ← x + Damping (x_new − x); 0 means 1 (no damping).
	Damping float64
}

// Result is the converged state.
type Result struct {
	// X are the estimated real-space positions (flat x, y, z).
	X []float64
	// PsiLOS is the line-of-sight component Ψ·n̂ of the displacement at
	// the converged positions (Mpc/h); the line-of-sight peculiar velocity
	// is f a H PsiLOS.
	PsiLOS []float64
	// Shifts is the largest position change of each iteration (Mpc/h).
	Shifts []float64
	// Converged reports whether the last shift was below Tol.
	Converged bool
}

// Displacer returns the displacement field (flat x, y, z, Mpc/h) at the
// galaxy positions x.
type Displacer func(x []float64) ([]float64, error)

// Correct solves x = s − f (Ψ(x)·n̂) n̂ for every galaxy. s are the
// redshift-space positions (flat x, y, z), los(i) the unit line of sight
// of galaxy i (the radial direction of s in a survey, a fixed axis in a
// plane-parallel box), f the growth rate per galaxy (or one value for
// all), and psi the displacement estimator.
func Correct(s []float64, los func(i int) [3]float64, f []float64, psi Displacer, opt Options) (*Result, error) {
	n := len(s) / 3
	if len(f) != n && len(f) != 1 {
		panic("rsd: Correct: growth rates do not match the galaxies")
	}
	if opt.Tol == 0 {
		opt.Tol = 0.01
	}
	if opt.MaxIter == 0 {
		opt.MaxIter = 20
	}
	if opt.Damping == 0 {
		opt.Damping = 1
	}
	if !(opt.Tol > 0) || opt.MaxIter < 1 || !(opt.Damping > 0 && opt.Damping <= 1) {
		return nil, fmt.Errorf("rsd: tolerance %v, %d iterations, damping %v: want positive, ≥ 1, (0, 1]", opt.Tol, opt.MaxIter, opt.Damping)
	}
	fi := func(i int) float64 {
		if len(f) == 1 {
			return f[0]
		}
		return f[i]
	}
	res := &Result{X: append([]float64(nil), s...), PsiLOS: make([]float64, n)}
	for it := 0; it < opt.MaxIter; it++ {
		d, err := psi(res.X)
		if err != nil {
			return nil, err
		}
		if len(d) != 3*n {
			return nil, errors.New("rsd: the displacer returned the wrong number of values")
		}
		var shift float64
		for i := 0; i < n; i++ {
			u := los(i)
			pl := d[3*i]*u[0] + d[3*i+1]*u[1] + d[3*i+2]*u[2]
			res.PsiLOS[i] = pl
			for a := 0; a < 3; a++ {
				target := s[3*i+a] - fi(i)*pl*u[a]
				step := opt.Damping * (target - res.X[3*i+a])
				res.X[3*i+a] += step
				shift = math.Max(shift, math.Abs(step))
			}
		}
		res.Shifts = append(res.Shifts, shift)
		if shift < opt.Tol {
			res.Converged = true
			break
		}
	}
	return res, nil
}
