package transport

import (
	"errors"
	"fmt"
	"math"
	"time"

	"github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/reconstruct/laguerre"
)

// DefaultTol is the stopping tolerance used when Options.Tol is zero: every
// cell volume within 0.1% of its mass.
const DefaultTol = 1e-3

// DefaultMaxIter is the Newton iteration limit per level used when
// Options.MaxIter is zero.
const DefaultMaxIter = 50

// DefaultCGTol is the relative residual |L d − G| ≤ CGTol·|G| at which the
// conjugate-gradient solve of each Newton step stops when Options.CGTol is
// zero.
const DefaultCGTol = 1e-3

// coarseMin is the size below which the multilevel start solves from ψ = 0:
// such problems take a few Newton steps from the Voronoi diagram.
const coarseMin = 4000

// coarseFactor is the ratio of fine to coarse points between levels
// (Mérigot 2011 uses a similar geometric hierarchy).
const coarseFactor = 8

// ErrNotConverged is returned (wrapped) by Solve when the tolerance was not
// reached within MaxIter Newton iterations or the line search failed; the
// Result then holds the last iterate.
var ErrNotConverged = errors.New("transport: not converged")

// Options sets the domain and the accuracy of a transport solve.
type Options struct {
	// Lo and Hi are the corners of the Lagrangian box, in the units of the
	// positions (Mpc/h in filigree). Hi must exceed Lo on every axis. In
	// clipped (non-periodic) mode every point must lie in [Lo, Hi].
	Lo, Hi [3]float64

	// Periodic makes the box a 3-torus [Lo, Hi): positions are wrapped
	// into it and displacements use the minimum image.
	Periodic bool

	// Tol is the stopping tolerance on max_i |vol_i − m_i|/m_i; 0 means
	// DefaultTol. Coarse levels of the multilevel start use max(Tol, 1e-2).
	Tol float64

	// MaxIter is the Newton iteration limit per level; 0 means
	// DefaultMaxIter.
	MaxIter int

	// CGTol is the relative residual at which each conjugate-gradient solve
	// stops; 0 means DefaultCGTol.
	CGTol float64

	// Multilevel selects the multilevel start (Mérigot 2011, see the
	// package comment) instead of the default start ψ = 0 (the Voronoi
	// diagram). On lattices displaced by smooth fields (3·10^4 and 10^5
	// points) the Voronoi start converged in 2–3 fine-level Newton steps
	// against 4–6 from the multilevel start, and on uniform random points
	// the interpolated weights left empty cells and the start fell back to
	// ψ = 0, so it is off by default.
	Multilevel bool

	// Seed selects the random coarse subsamples of the multilevel start.
	// Results depend on it only through rounding and the iteration count.
	Seed uint64

	// Threads is passed to package laguerre (goroutines computing cells);
	// 0 means runtime.GOMAXPROCS(0). The other loops use
	// internal/parallel.For. Results do not depend on it.
	Threads int

	// Progress, if not nil, is called after every Newton iteration of the
	// finest level with the iteration number (from 1) and the maximum
	// relative volume error reached.
	Progress func(iter int, maxErr float64)
}

// Iteration records one Newton iteration.
type Iteration struct {
	// MaxErr and RMSErr are the maximum and root-mean-square relative volume
	// errors |vol_i − m_i|/m_i after the step.
	MaxErr, RMSErr float64

	// Alpha is the accepted step length (1, 1/2, 1/4, …).
	Alpha float64

	// CGIter is the number of conjugate-gradient iterations of the Newton
	// solve.
	CGIter int

	// Evals is the number of Laguerre computations made by the line search.
	Evals int

	// Seconds is the wall time of the iteration.
	Seconds float64
}

// Level records the solve of one level of the multilevel hierarchy.
type Level struct {
	// N is the number of points of the level.
	N int

	// StartMaxErr is the maximum relative volume error of the start.
	StartMaxErr float64

	// StartScale is the factor applied to the interpolated start weights
	// to avoid empty cells (1 when the interpolation was used as is, 0 for
	// the Voronoi start).
	StartScale float64

	// Iterations holds one record per Newton iteration.
	Iterations []Iteration

	// Seconds is the wall time of the level, start included.
	Seconds float64
}

// Stats describes a solve: Levels runs from the coarsest to the finest
// (the input points), so Levels[len(Levels)-1] is the solve that matters.
type Stats struct {
	Levels []Level

	// Seconds is the total wall time of Solve.
	Seconds float64
}

// Result is the solution of a transport problem with n points.
type Result struct {
	// Psi holds the weights ψ_i (squared position units) of the Laguerre
	// cells, shifted to zero mean.
	Psi []float64

	// Mass holds the target cell volumes m_i: the input masses scaled to
	// sum to the box volume (cubed position units).
	Mass []float64

	// Volume holds the cell volumes reached (cubed position units).
	Volume []float64

	// Lagr holds the Lagrangian position of each point, the centroid of its
	// Laguerre cell (x, y, z at 3i..3i+2). In periodic mode it is wrapped
	// into [Lo, Hi).
	Lagr []float64

	// Disp holds the displacement, Eulerian minus Lagrangian position, with
	// the minimum image in periodic mode.
	Disp []float64

	// Cost is the transport cost Σ_i ∫_{L_i} |x − y_i|² dx (position units
	// to the fifth). Package laguerre gives volumes and centroids but not
	// second moments, so each cell is rebuilt here from its facet list
	// (the box or periodic cube cut by the power bisectors of its listed
	// neighbours) and integrated exactly by tetrahedra; facets laguerre
	// drops as rounding artefacts (area below 1e-9 s²) are lost with it.
	Cost float64

	// DispCost is Σ_i vol_i |c_i − y_i|², the cost of moving every cell as a
	// whole to its point (position units to the fifth).
	DispCost float64

	// Cells are the Laguerre cells at Psi: neighbour lists and facet
	// areas (which points' cells touch), volumes and centroids.
	Cells *laguerre.Cells

	// Stats describes the iterations.
	Stats Stats
}

// Solve finds the weights ψ for which the Laguerre cells of the points pos
// (x, y, z of point i at 3i..3i+2) have volumes proportional to mass, and
// returns the Lagrangian positions and displacements. A nil mass means
// equal masses. It returns an error for bad input (length mismatch, a
// non-positive or non-finite mass, a point outside the box in clipped mode,
// coincident points) and a wrapped ErrNotConverged, together with the last
// iterate, when the tolerance is not reached.
func Solve(pos, mass []float64, opt Options) (*Result, error) {
	t0 := time.Now()
	n := len(pos) / 3
	if len(pos) != 3*n {
		return nil, fmt.Errorf("transport: %d coordinates is not a multiple of 3", len(pos))
	}
	if n == 0 {
		return nil, errors.New("transport: no points")
	}
	if mass != nil && len(mass) != n {
		return nil, fmt.Errorf("transport: %d masses for %d points", len(mass), n)
	}
	vol := 1.0
	for a := 0; a < 3; a++ {
		if !(opt.Hi[a] > opt.Lo[a]) || math.IsInf(opt.Hi[a]-opt.Lo[a], 0) {
			return nil, fmt.Errorf("transport: box axis %d: Hi %g must exceed Lo %g", a, opt.Hi[a], opt.Lo[a])
		}
		vol *= opt.Hi[a] - opt.Lo[a]
	}
	if opt.Tol == 0 {
		opt.Tol = DefaultTol
	}
	if opt.MaxIter == 0 {
		opt.MaxIter = DefaultMaxIter
	}
	if opt.CGTol == 0 {
		opt.CGTol = DefaultCGTol
	}
	if !(opt.Tol > 0) || !(opt.CGTol > 0) || opt.MaxIter < 0 {
		return nil, fmt.Errorf("transport: bad tolerances Tol %g, CGTol %g, MaxIter %d", opt.Tol, opt.CGTol, opt.MaxIter)
	}

	y := make([]float64, 3*n)
	for i := 0; i < n; i++ {
		for a := 0; a < 3; a++ {
			v := pos[3*i+a]
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("transport: point %d: coordinate %d is %g", i, a, v)
			}
			lo, hi := opt.Lo[a], opt.Hi[a]
			if opt.Periodic {
				v = wrap(v, lo, hi)
			} else if v < lo || v > hi {
				return nil, fmt.Errorf("transport: point %d: coordinate %d = %g outside [%g, %g]", i, a, v, lo, hi)
			}
			y[3*i+a] = v
		}
	}
	m := make([]float64, n)
	sum := 0.0
	for i := range m {
		w := 1.0
		if mass != nil {
			w = mass[i]
			if !(w > 0) || math.IsInf(w, 0) {
				return nil, fmt.Errorf("transport: point %d: mass %g must be positive and finite", i, w)
			}
		}
		m[i] = w
		sum += w
	}
	for i := range m {
		m[i] *= vol / sum
	}

	res := &Result{Mass: m}
	psi, cells, err := solveLevels(y, m, opt, &res.Stats, 0, true)
	res.Stats.Seconds = time.Since(t0).Seconds()
	if psi == nil {
		return nil, err
	}
	finish(res, y, psi, cells, opt)
	res.Stats.Seconds = time.Since(t0).Seconds()
	return res, err
}

// finish fills the outputs of res from the converged cells.
func finish(res *Result, y, psi []float64, cells *laguerre.Cells, opt Options) {
	res.Cells = cells
	n := len(psi)
	mean := 0.0
	for _, v := range psi {
		mean += v
	}
	mean /= float64(n)
	res.Psi = make([]float64, n)
	for i, v := range psi {
		res.Psi[i] = v - mean
	}
	res.Volume = append([]float64(nil), cells.Volume[:n]...)
	res.Lagr = make([]float64, 3*n)
	res.Disp = make([]float64, 3*n)
	dispCost := make([]float64, n)
	cellCost := make([]float64, n)
	vol := 1.0
	for a := 0; a < 3; a++ {
		vol *= opt.Hi[a] - opt.Lo[a]
	}
	spacing := math.Cbrt(vol / float64(n))
	parallel.For(n, chunk, func(lo, hi int) {
		var poly polytope
		for i := lo; i < hi; i++ {
			v := cells.Volume[i]
			d2 := 0.0
			for a := 0; a < 3; a++ {
				c := cells.Centroid[3*i+a]
				d := y[3*i+a] - c
				if opt.Periodic {
					L := opt.Hi[a] - opt.Lo[a]
					d -= L * math.Round(d/L)
					c = wrap(c, opt.Lo[a], opt.Hi[a])
				}
				res.Lagr[3*i+a] = c
				res.Disp[3*i+a] = d
				d2 += d * d
			}
			dispCost[i] = v * d2
			cellCost[i] = poly.cellCost(i, y, psi, cells, opt, spacing)
		}
	})
	for i := 0; i < n; i++ {
		res.DispCost += dispCost[i]
		res.Cost += cellCost[i]
	}
}

// wrap maps v into [lo, hi) for a periodic axis.
func wrap(v, lo, hi float64) float64 {
	L := hi - lo
	v = lo + math.Mod(v-lo, L)
	if v < lo {
		v += L
	}
	if v >= hi {
		v = lo
	}
	return v
}
