package transport

import (
	"fmt"
	"math"
	"time"

	"github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/reconstruct/laguerre"
)

// chunk is the fixed block length of every parallel loop and of every
// partial sum, so sums are added in the same order whatever the number of
// threads (results do not depend on it).
const chunk = 4096

// maxHalvings bounds the line search: α below 2^-40 means the Newton
// direction is useless (in exact arithmetic KMT 2019 bound the accepted α
// from below, so this only catches a failed linear solve or rounding).
const maxHalvings = 40

// newton holds one level's damped Newton solve.
type newton struct {
	y, m  []float64
	opt   Options
	ix    *laguerre.Index
	cur   *laguerre.Cells // cells at psi
	trial *laguerre.Cells // cells at the trial weights
	eps   float64         // KMT's lower bound on cell volumes

	// Laplacian and CG work arrays.
	w, diag          []float64
	x, r, z, p, q, g []float64
	partial          []float64
}

// solveLevels solves the problem (y, m) with the multilevel start, appending
// one Level per level to st (coarsest first). It returns the weights and the
// cells at them; psi is nil only with a hard error.
func solveLevels(y, m []float64, opt Options, st *Stats, depth int, finest bool) ([]float64, *laguerre.Cells, error) {
	t0 := time.Now()
	n := len(m)
	var start []float64
	if opt.Multilevel && n > coarseMin {
		yc, mc, owner := coarsen(y, m, opt, depth)
		copt := opt
		copt.Tol = math.Max(opt.Tol, 1e-2)
		copt.Progress = nil
		// A coarse level that stopped short of its tolerance is still a
		// good start, so only hard errors end the solve.
		psiC, cellsC, err := solveLevels(yc, mc, copt, st, depth+1, false)
		if psiC == nil {
			return nil, nil, err
		}
		start = interpolate(y, yc, psiC, cellsC.Centroid, owner, opt)
		t0 = time.Now()
	}
	s, err := newNewton(y, m, opt)
	if err != nil {
		return nil, nil, err
	}
	lev := Level{N: n}
	psi, err := s.run(start, &lev, finest)
	lev.Seconds = time.Since(t0).Seconds()
	st.Levels = append(st.Levels, lev)
	if psi == nil {
		return nil, nil, err
	}
	return psi, s.cur, err
}

func newNewton(y, m []float64, opt Options) (*newton, error) {
	lopt := laguerre.Options{Lo: opt.Lo, Hi: opt.Hi, Periodic: opt.Periodic, Threads: opt.Threads, WarmStart: true}
	ix, err := laguerre.NewIndex(y, lopt)
	if err != nil {
		return nil, fmt.Errorf("transport: %w", err)
	}
	n := len(m)
	return &newton{
		y: y, m: m, opt: opt, ix: ix,
		cur: new(laguerre.Cells), trial: new(laguerre.Cells),
		diag: make([]float64, n),
		x:    make([]float64, n), r: make([]float64, n), z: make([]float64, n),
		p: make([]float64, n), q: make([]float64, n), g: make([]float64, n),
		partial: make([]float64, (n+chunk-1)/chunk),
	}, nil
}

// run performs the damped Newton iterations from start (nil: ψ = 0) and
// returns the last weights; s.cur then holds their cells.
func (s *newton) run(start []float64, lev *Level, finest bool) ([]float64, error) {
	n := len(s.m)
	psi := make([]float64, n)
	// Start: the interpolated weights, scaled down until no cell is empty,
	// else the Voronoi diagram (ψ = 0).
	lev.StartScale = 0
	if start != nil {
		for k, scale := 0, 1.0; k < 4; k, scale = k+1, scale/2 {
			for i := range psi {
				psi[i] = scale * start[i]
			}
			if err := s.ix.Compute(psi, s.cur); err != nil {
				return nil, fmt.Errorf("transport: %w", err)
			}
			if s.cur.Empty == 0 {
				lev.StartScale = scale
				break
			}
		}
	}
	if lev.StartScale == 0 {
		clear(psi)
		if err := s.ix.Compute(psi, s.cur); err != nil {
			return nil, fmt.Errorf("transport: %w", err)
		}
		if s.cur.Empty > 0 {
			return nil, fmt.Errorf("transport: %d coincident points (empty Voronoi cells)", s.cur.Empty)
		}
	}
	// KMT 2019, Algorithm 1: ε = ½ min(min_i vol_i(ψ⁰), min_i m_i).
	minV, minM := math.Inf(1), math.Inf(1)
	for i := 0; i < n; i++ {
		minV = math.Min(minV, s.cur.Volume[i])
		minM = math.Min(minM, s.m[i])
	}
	s.eps = 0.5 * math.Min(minV, minM)

	maxErr, _, gnorm := s.errors(s.cur)
	lev.StartMaxErr = maxErr
	trialPsi := make([]float64, n)
	for iter := 1; maxErr > s.opt.Tol; iter++ {
		if iter > s.opt.MaxIter {
			return psi, fmt.Errorf("%w: max relative volume error %.3g after %d iterations (Tol %g)", ErrNotConverged, maxErr, s.opt.MaxIter, s.opt.Tol)
		}
		t0 := time.Now()
		s.laplacian()
		for i := 0; i < n; i++ {
			s.g[i] = s.m[i] - s.cur.Volume[i]
		}
		cgIter := s.pcg()
		d := s.x
		alpha := 1.0
		evals := 0
		var tMax, tRMS, tNorm float64
		for h := 0; ; h++ {
			if h == maxHalvings {
				return psi, fmt.Errorf("%w: line search failed at iteration %d (max relative error %.3g)", ErrNotConverged, iter, maxErr)
			}
			for i := 0; i < n; i++ {
				trialPsi[i] = psi[i] + alpha*d[i]
			}
			if err := s.ix.Compute(trialPsi, s.trial); err != nil {
				return nil, fmt.Errorf("transport: %w", err)
			}
			evals++
			tMax, tRMS, tNorm = s.errors(s.trial)
			if s.trial.Empty == 0 && minVolume(s.trial.Volume[:n]) >= s.eps && tNorm <= (1-alpha/2)*gnorm {
				break
			}
			alpha /= 2
		}
		psi, trialPsi = trialPsi, psi
		s.cur, s.trial = s.trial, s.cur
		maxErr, gnorm = tMax, tNorm
		lev.Iterations = append(lev.Iterations, Iteration{
			MaxErr: tMax, RMSErr: tRMS, Alpha: alpha, CGIter: cgIter, Evals: evals,
			Seconds: time.Since(t0).Seconds(),
		})
		if finest && s.opt.Progress != nil {
			s.opt.Progress(iter, maxErr)
		}
	}
	return psi, nil
}

func minVolume(v []float64) float64 {
	mv := math.Inf(1)
	for _, x := range v {
		mv = math.Min(mv, x)
	}
	return mv
}

// errors returns the maximum and rms relative volume errors of c and the
// Euclidean norm of the gradient G = m − vol.
func (s *newton) errors(c *laguerre.Cells) (maxErr, rms, gnorm float64) {
	var sr, sg float64
	for i, m := range s.m {
		d := m - c.Volume[i]
		e := math.Abs(d) / m
		maxErr = math.Max(maxErr, e)
		sr += e * e
		sg += d * d
	}
	n := float64(len(s.m))
	return maxErr, math.Sqrt(sr / n), math.Sqrt(sg)
}

// laplacian fills s.w (one weight per neighbour entry of s.cur) and s.diag
// with the Hessian of the volumes: w_ij = A_ij/(2|y_i−y_j|), diag_i = Σ_j
// w_ij. The facet areas computed from the two sides can differ by rounding
// (and a facet near the area cut-off can be missing on one side), so the
// weight uses the mean of the two areas, which keeps the matrix symmetric
// as conjugate gradients need.
func (s *newton) laplacian() {
	c := s.cur
	n := len(s.m)
	nnz := int(c.NbrStart[n])
	if cap(s.w) < nnz {
		s.w = make([]float64, nnz)
	}
	s.w = s.w[:nnz]
	parallel.For(n, chunk, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			sum := 0.0
			for k := c.NbrStart[i]; k < c.NbrStart[i+1]; k++ {
				j := int(c.Nbr[k])
				aji := 0.0
				// Neighbour lists are sorted: binary search for i in j's list.
				l, h := int(c.NbrStart[j]), int(c.NbrStart[j+1])
				for l < h {
					mid := (l + h) / 2
					if int(c.Nbr[mid]) < i {
						l = mid + 1
					} else {
						h = mid
					}
				}
				if l < int(c.NbrStart[j+1]) && int(c.Nbr[l]) == i {
					aji = c.Area[l]
				}
				d2 := 0.0
				for a := 0; a < 3; a++ {
					d := s.y[3*j+a] - s.y[3*i+a]
					if s.opt.Periodic {
						L := s.opt.Hi[a] - s.opt.Lo[a]
						d -= L * math.Round(d/L)
					}
					d2 += d * d
				}
				wk := 0.25 * (c.Area[k] + aji) / math.Sqrt(d2)
				s.w[k] = wk
				sum += wk
			}
			s.diag[i] = sum
		}
	})
}

// pcg solves L x = g − mean(g) by conjugate gradients with the Jacobi
// preconditioner (Saad 2003, Algorithm 9.1) and returns the iteration count.
// L is the graph Laplacian of laplacian(), singular along the constant
// vector; the right-hand side is projected off it, which makes the system
// consistent, and the solution is returned with zero mean (ψ is defined up to
// a constant). It stops when |r| ≤ CGTol·|b|.
func (s *newton) pcg() int {
	n := len(s.m)
	mean := s.sum(func(i int) float64 { return s.g[i] }) / float64(n)
	for i := 0; i < n; i++ {
		s.r[i] = s.g[i] - mean
		s.x[i] = 0
	}
	bnorm := math.Sqrt(s.sum(func(i int) float64 { return s.r[i] * s.r[i] }))
	if bnorm == 0 {
		return 0
	}
	rz := s.sum(func(i int) float64 {
		s.z[i] = s.r[i] / s.diag[i]
		s.p[i] = s.z[i]
		return s.r[i] * s.z[i]
	})
	maxIter := 10 * n
	it := 0
	for it = 1; it <= maxIter; it++ {
		pq := s.matvecDot()
		alpha := rz / pq
		rr := s.sum(func(i int) float64 {
			s.x[i] += alpha * s.p[i]
			s.r[i] -= alpha * s.q[i]
			return s.r[i] * s.r[i]
		})
		if math.Sqrt(rr) <= s.opt.CGTol*bnorm {
			break
		}
		rzNew := s.sum(func(i int) float64 {
			s.z[i] = s.r[i] / s.diag[i]
			return s.r[i] * s.z[i]
		})
		beta := rzNew / rz
		rz = rzNew
		parallel.For(n, chunk, func(lo, hi int) {
			for i := lo; i < hi; i++ {
				s.p[i] = s.z[i] + beta*s.p[i]
			}
		})
	}
	xm := s.sum(func(i int) float64 { return s.x[i] }) / float64(n)
	for i := 0; i < n; i++ {
		s.x[i] -= xm
	}
	return min(it, maxIter)
}

// matvecDot sets q = L p and returns p·q.
func (s *newton) matvecDot() float64 {
	c := s.cur
	return s.sum(func(i int) float64 {
		v := s.diag[i] * s.p[i]
		for k := c.NbrStart[i]; k < c.NbrStart[i+1]; k++ {
			v -= s.w[k] * s.p[c.Nbr[k]]
		}
		s.q[i] = v
		return s.p[i] * v
	})
}

// sum evaluates f(i) for every i (in parallel, f may write to index i of
// work arrays) and returns the sum, added in fixed chunks so that it does
// not depend on the number of threads.
func (s *newton) sum(f func(i int) float64) float64 {
	n := len(s.m)
	parallel.For(n, chunk, func(lo, hi int) {
		t := 0.0
		for i := lo; i < hi; i++ {
			t += f(i)
		}
		s.partial[lo/chunk] = t
	})
	t := 0.0
	for _, v := range s.partial {
		t += v
	}
	return t
}
