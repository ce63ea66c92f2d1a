package laguerre

import "math"

// Blocks, frames and weight bounds.
//
// The weights of a transport solve grow like 2Ψ·p across the box (Ψ the
// displacement, p the point), so a single largest weight gives a useless
// search bound, and a cell lies about |Ψ| from its point, beyond the point's
// near neighbours. Both are handled per block of grid cells:
//
//   - Frame. The cells of the weights ψ_j are the cells of the residual
//     weights ψ_j − 2a·p_j translated by −a, for any vector a, because
//     |x−p|² − 2a·p = |x+a−p|² + (a function of x alone). Each block fits
//     ψ ≈ c + 2a·(p − centre) by least squares and computes the cells of
//     its points in that frame, where they lie near their points: the
//     start is the box translated by +a and the bisector of j has the
//     offset d² + ψ_i − ψ_j + 2a·(p_j − p_i). The result is exact for any
//     a; the fit only makes the search short.
//   - Bounds. Every grid cell D keeps R_D = max over its points of
//     ψ_j − 2a_D·(p_j − centre_D), a_D its block's frame, and every block
//     the same over its points. In the frame a of the current block this
//     bounds ψ_j − 2a·(p_j − r) for all j in D by
//     W_D = R_D + Σ_k |a_D,k − a_k|·g_k − 2a·(centre_D − r),
//     g the cell (block) extent, and so bounds the bisector's distance
//     from below by lowerPlane(distance to D, ψ_i − W_D) with the
//     reference r = p_i.
//
// A cell is first cut by the points of the 3×3×3 blocks around its own
// block, visiting grid cells in order of distance and skipping those whose
// bound rules them out, until the largest W of those blocks rules out the
// rest. When all the cells of a block are done, the block's largest vertex
// distance and smallest weight give one bound for all of its points
// against every farther block, in shells of growing Chebyshev distance
// until a bound from the largest R_B and frame spread of the whole index
// rules out the rest. A cell that some
// grid cell may still cut after that test is computed again with the
// points of those grid cells as well. Cells only shrink under more cuts,
// so the test made with the first cells stays valid.

// xcell is a grid cell, outside the first search of a block's points, that
// may cut some of their cells: its number, rank and block, periodic shift,
// unwrapped box and centre, and the frame of its block.
type xcell struct {
	cell, r, blk int32
	shift        [3]float64
	lo, hi, c    [3]float64 // unwrapped box and centre
	a            [3]float64 // frame of its block
}

// frame is the per-block state of a Laguerre computation.
type frame struct {
	a      [3]float64 // frame vector of the block
	absA   float64    // |a|
	c      [3]float64 // block centre
	lo, hi [3]float64 // block box
	b      [3]int     // block coordinates
	clo    [3]int     // grid cell range of the block: clo ≤ c < chi
	chi    [3]int
	nlo    [3]int // unwrapped grid cell range of the 3×3×3 block neighbourhood
	nhi    [3]int
	wloc   float64 // largest W (reference: block centre) over the cells of the neighbourhood
}

// frames fits the frame of every block and fills the bounds R of every
// grid cell and block and the index-wide extremes.
func (ix *Index) frames(out *Cells, threads int) {
	nblock := len(ix.brank) - 1
	out.bA = grow(out.bA, 3*nblock)
	out.bR = grow(out.bR, nblock)
	out.cR = grow(out.cR, len(ix.crank))
	parallel(threads, nblock, func(_, b int) {
		var f frame
		ix.blockFrame(b, &f)
		q0, q1 := int(ix.start[ix.brank[b]]), int(ix.start[ix.brank[b+1]])
		a := fitFrame(ix.xyz[3*q0:3*q1], out.psi[q0:q1], f.c, f.hi, f.lo, ix.scale)
		copy(out.bA[3*b:3*b+3], a[:])
		rB := math.Inf(-1)
		r := int(ix.brank[b])
		for c2 := f.clo[2]; c2 < f.chi[2]; c2++ {
			for c1 := f.clo[1]; c1 < f.chi[1]; c1++ {
				for c0 := f.clo[0]; c0 < f.chi[0]; c0++ {
					cen := [3]float64{
						ix.lo[0] + (float64(c0)+0.5)*ix.g[0],
						ix.lo[1] + (float64(c1)+0.5)*ix.g[1],
						ix.lo[2] + (float64(c2)+0.5)*ix.g[2],
					}
					rC := math.Inf(-1)
					for q := int(ix.start[r]); q < int(ix.start[r+1]); q++ {
						w := out.psi[q] - 2*(a[0]*(ix.xyz[3*q]-cen[0])+a[1]*(ix.xyz[3*q+1]-cen[1])+a[2]*(ix.xyz[3*q+2]-cen[2]))
						rC = math.Max(rC, w)
					}
					out.cR[r] = rC
					rB = math.Max(rB, rC-2*(a[0]*(cen[0]-f.c[0])+a[1]*(cen[1]-f.c[1])+a[2]*(cen[2]-f.c[2])))
					r++
				}
			}
		}
		out.bR[b] = rB
	})
	out.rGlob = math.Inf(-1)
	for k := 0; k < 3; k++ {
		out.aMin[k], out.aMax[k] = math.Inf(1), math.Inf(-1)
	}
	for b := 0; b < nblock; b++ {
		out.rGlob = math.Max(out.rGlob, out.bR[b])
		for k := 0; k < 3; k++ {
			out.aMin[k] = math.Min(out.aMin[k], out.bA[3*b+k])
			out.aMax[k] = math.Max(out.aMax[k], out.bA[3*b+k])
		}
	}
}

// fitFrame fits ψ ≈ c + 2a·(p − cen) by least squares to the points xyz
// with weights psi and returns a, or zero when the fit is ill-posed or
// shifts the cells by less than half the mean spacing s (no gain).
func fitFrame(xyz, psi []float64, cen, hi, lo [3]float64, s float64) [3]float64 {
	var zero [3]float64
	n := len(psi)
	if n < 8 {
		return zero
	}
	// unknowns c, 2a_k·h_k with coordinates scaled by the half extents h
	var h [3]float64
	for k := 0; k < 3; k++ {
		h[k] = math.Max(0.5*(hi[k]-lo[k]), 1e-300)
	}
	var m [4][5]float64
	for q := 0; q < n; q++ {
		u := [4]float64{1, (xyz[3*q] - cen[0]) / h[0], (xyz[3*q+1] - cen[1]) / h[1], (xyz[3*q+2] - cen[2]) / h[2]}
		for r := 0; r < 4; r++ {
			for c := 0; c < 4; c++ {
				m[r][c] += u[r] * u[c]
			}
			m[r][4] += u[r] * psi[q]
		}
	}
	// Gaussian elimination with partial pivoting
	for c := 0; c < 4; c++ {
		p := c
		for r := c + 1; r < 4; r++ {
			if math.Abs(m[r][c]) > math.Abs(m[p][c]) {
				p = r
			}
		}
		if !(math.Abs(m[p][c]) > 1e-6*float64(n)) {
			return zero
		}
		m[c], m[p] = m[p], m[c]
		for r := c + 1; r < 4; r++ {
			f := m[r][c] / m[c][c]
			for k := c; k < 5; k++ {
				m[r][k] -= f * m[c][k]
			}
		}
	}
	var x [4]float64
	for r := 3; r >= 0; r-- {
		v := m[r][4]
		for k := r + 1; k < 4; k++ {
			v -= m[r][k] * x[k]
		}
		x[r] = v / m[r][r]
	}
	var a [3]float64
	a2 := 0.0
	for k := 0; k < 3; k++ {
		a[k] = 0.5 * x[k+1] / h[k]
		a2 += a[k] * a[k]
	}
	if math.IsNaN(a2) || math.IsInf(a2, 0) || a2 < 0.25*s*s {
		return zero
	}
	return a
}

// blockFrame fills the geometry of block b into f (not a, wloc).
func (ix *Index) blockFrame(b int, f *frame) {
	f.b = [3]int{b % ix.nb[0], b / ix.nb[0] % ix.nb[1], b / (ix.nb[0] * ix.nb[1])}
	for k := 0; k < 3; k++ {
		f.clo[k], f.chi[k] = int(ix.bcut[k][f.b[k]]), int(ix.bcut[k][f.b[k]+1])
		f.lo[k] = ix.lo[k] + float64(f.clo[k])*ix.g[k]
		f.hi[k] = ix.lo[k] + float64(f.chi[k])*ix.g[k]
		f.c[k] = 0.5 * (f.lo[k] + f.hi[k])
		f.nlo[k], _ = ix.blockCellsUnwrapped(k, f.b[k]-1)
		_, f.nhi[k] = ix.blockCellsUnwrapped(k, f.b[k]+1)
	}
}

// blockCellsUnwrapped returns the unwrapped grid coordinate range [lo, hi)
// of the unwrapped block coordinate v on axis k.
func (ix *Index) blockCellsUnwrapped(k, v int) (int, int) {
	w := floorDiv(v, ix.nb[k])
	vb := v - w*ix.nb[k]
	off := w * ix.dims[k]
	return int(ix.bcut[k][vb]) + off, int(ix.bcut[k][vb+1]) + off
}

// unwrapCell maps an unwrapped grid coordinate on axis k to the grid
// coordinate and the periodic shift; ok is false outside a clipped box.
func (ix *Index) unwrapCell(k, u int) (c int, shift float64, ok bool) {
	if !ix.opt.Periodic {
		return u, 0, u >= 0 && u < ix.dims[k]
	}
	w := floorDiv(u, ix.dims[k])
	return u - w*ix.dims[k], float64(w) * ix.ext[k], true
}

// cellW is the bound W on ψ_j − 2a·(p_j − ref) over the points of the grid
// cell of rank r in block blk, whose centre lies at rel from ref.
func cellW(ix *Index, out *Cells, r, blk int, rel, a [3]float64) float64 {
	ad := out.bA[3*blk : 3*blk+3]
	return out.cR[r] + math.Abs(ad[0]-a[0])*ix.g[0] + math.Abs(ad[1]-a[1])*ix.g[1] + math.Abs(ad[2]-a[2])*ix.g[2] -
		2*(a[0]*rel[0]+a[1]*rel[1]+a[2]*rel[2])
}

// setup fills the frame vector and wloc of the block whose geometry f
// holds, from the bounds of the 3×3×3 blocks of its neighbourhood.
func (f *frame) setup(ix *Index, out *Cells, blk int) {
	copy(f.a[:], out.bA[3*blk:3*blk+3])
	f.absA = math.Sqrt(f.a[0]*f.a[0] + f.a[1]*f.a[1] + f.a[2]*f.a[2])
	f.wloc = math.Inf(-1)
	for o2 := -1; o2 <= 1; o2++ {
		for o1 := -1; o1 <= 1; o1++ {
			for o0 := -1; o0 <= 1; o0++ {
				v := [3]int{f.b[0] + o0, f.b[1] + o1, f.b[2] + o2}
				var vb [3]int
				var lo, hi [3]float64
				ok := true
				for k := 0; k < 3; k++ {
					if !ix.opt.Periodic && (v[k] < 0 || v[k] >= ix.nb[k]) {
						ok = false
						break
					}
					w := floorDiv(v[k], ix.nb[k])
					vb[k] = v[k] - w*ix.nb[k]
					lo[k] = ix.lo[k] + float64(ix.bcut[k][vb[k]])*ix.g[k] + float64(w)*ix.ext[k]
					hi[k] = ix.lo[k] + float64(ix.bcut[k][vb[k]+1])*ix.g[k] + float64(w)*ix.ext[k]
				}
				if !ok {
					continue
				}
				b := (vb[2]*ix.nb[1]+vb[1])*ix.nb[0] + vb[0]
				if math.IsInf(out.bR[b], -1) {
					continue
				}
				w := out.bR[b]
				for k := 0; k < 3; k++ {
					w += math.Abs(out.bA[3*b+k]-f.a[k])*(hi[k]-lo[k]) - 2*f.a[k]*(0.5*(lo[k]+hi[k])-f.c[k])
				}
				if w > f.wloc {
					f.wloc = w
				}
			}
		}
	}
}

// ballSet is the bounding data of the cells of a block for the far test:
// every cell i lies in the ball of radius ρ_i about x_i (box coordinates),
// with power π_i = |p_i − x_i|² − ψ_i of its own point there. A point j can
// cut cell i only if |p_j − x|² − ψ_j < π_i + 2ρ_i·|p_i − p_j| at x = x_i
// (the power difference is linear along the ball). In the frame a_D of the
// grid cell D of j, ψ_j ≤ 2a_D·(p_j − c_D) + R_D, so with e = |p_j − x − a_D|
//
//	|p_j − x|² − ψ_j ≥ e² − |a_D|² − 2a_D·(x − c_D) − R_D,
//
// a bound with no penalty for the difference between the frames of i and
// D, and |p_i − p_j| ≤ e + h with h = |x + a_D − p_i|. Cell i is safe from
// D when e² − 2ρ_i·e + K − 2ρ_i·h ≥ 0 for every e ≥ the distance from
// x + a_D to D (K the constant terms). For the whole block, x ranges over
// the box xlo..xhi and ρ takes its largest value; the power π_i falls
// along the block like −2a·x_i (a the block's frame), so the set keeps
// ν = max of π_i + 2a·x_i (then π_i + 2a_D·x_i ≤ ν + 2(a_D − a)·x), and
// x_i − p_i stays within dsp of −a (then h ≤ |a_D − a| + dsp). A set of
// one cell takes a = p_i − x_i and dsp = 0, which makes both exact. The
// bound |p_i − p_j| ≤ M, the largest distance between the box plo..phi of
// the points p_i and the box of D, is also tried (e² + K ≥ 2ρM).
type ballSet struct {
	xlo, xhi, plo, phi [3]float64
	rho, nu, dsp       float64
	a                  [3]float64
}

// excludes reports whether no point of the box lo..hi (frame a, bound R
// about centre c) can cut a cell of the ball set b.
func (b *ballSet) excludes(lo, hi, c, a [3]float64, r float64) bool {
	e2, ax, h2, m2 := 0.0, 0.0, 0.0, 0.0
	for k := 0; k < 3; k++ {
		m := math.Max(hi[k]-b.plo[k], b.phi[k]-lo[k])
		m2 += m * m
		// distance from the box x + a to lo..hi
		if d := lo[k] - (b.xhi[k] + a[k]); d > 0 {
			e2 += d * d
		} else if d := (b.xlo[k] + a[k]) - hi[k]; d > 0 {
			e2 += d * d
		}
		// 2a·c − max over x of 2(a − b.a)·x
		g := a[k] - b.a[k]
		ax += a[k] * c[k]
		if g >= 0 {
			ax -= g * b.xhi[k]
		} else {
			ax -= g * b.xlo[k]
		}
		h2 += g * g
	}
	k0 := -(a[0]*a[0] + a[1]*a[1] + a[2]*a[2]) + 2*ax - r - b.nu
	if e2+k0 >= 2*b.rho*math.Sqrt(m2) {
		return true
	}
	k := k0 - 2*b.rho*(math.Sqrt(h2)+b.dsp)
	if e2 >= b.rho*b.rho {
		return e2-2*b.rho*math.Sqrt(e2)+k >= 0
	}
	return k-b.rho*b.rho >= 0
}

// far lists into wk.extra the grid cells of the blocks beyond the
// neighbourhood of block f whose points may cut a cell of the block, given
// the ball set bs of its cells, the largest vertex distance rmax of its
// cells from their points (each in its point's frame), the smallest m of
// ψ_i − 2a·(p_i − centre) over its points (a the block's frame) and the
// largest distance da of a point's frame from a. The shells of blocks end
// where a bound in the block's frame rules out all farther blocks: a
// bisector's offset in the point's frame differs from the offset in the
// block's by at most 2·da·d, so its distance by at most da.
func (wk *worker) far(ix *Index, out *Cells, f *frame, bs *ballSet, rmax, m, da float64) {
	rmax += da
	wk.extra = wk.extra[:0]
	// blocks at Chebyshev block distance ≥ 2, shell by shell
	var dA [3]float64
	tail := m - out.rGlob
	hB := 0.0
	for k := 0; k < 3; k++ {
		dA[k] = math.Max(out.aMax[k]-f.a[k], f.a[k]-out.aMin[k])
		tail -= dA[k] * ix.bextHi[k]
		hB += ix.bextHi[k] * ix.bextHi[k]
	}
	// |centre_B − centre| ≤ box distance + both half diagonals ≤ box
	// distance + the largest diagonal √hB
	tail -= 2 * f.absA * math.Sqrt(hB)
	bmin := math.Min(ix.bext[0], math.Min(ix.bext[1], ix.bext[2]))
	maxNb := max(ix.nb[0], ix.nb[1], ix.nb[2])
	for s := 2; ; s++ {
		if !ix.opt.Periodic && s > maxNb {
			break
		}
		if lowerPlane(float64(s-1)*bmin, tail)-f.absA >= rmax {
			break
		}
		wk.nShells++
		for o2 := -s; o2 <= s; o2++ {
			for o1 := -s; o1 <= s; o1++ {
				step := 1
				if o2 != -s && o2 != s && o1 != -s && o1 != s {
					step = 2 * s
				}
				for o0 := -s; o0 <= s; o0 += step {
					wk.testBlock(ix, out, bs, [3]int{f.b[0] + o0, f.b[1] + o1, f.b[2] + o2})
				}
			}
		}
	}
}

// testBlock tests the unwrapped block v against the ball set bs and, when its
// bound does not rule it out, tests its grid cells.
func (wk *worker) testBlock(ix *Index, out *Cells, bs *ballSet, v [3]int) {
	var vb [3]int
	var lo, hi, shift [3]float64
	for k := 0; k < 3; k++ {
		if !ix.opt.Periodic && (v[k] < 0 || v[k] >= ix.nb[k]) {
			return
		}
		w := floorDiv(v[k], ix.nb[k])
		vb[k] = v[k] - w*ix.nb[k]
		shift[k] = float64(w) * ix.ext[k]
		lo[k] = ix.lo[k] + float64(ix.bcut[k][vb[k]])*ix.g[k] + shift[k]
		hi[k] = ix.lo[k] + float64(ix.bcut[k][vb[k]+1])*ix.g[k] + shift[k]
	}
	blk := (vb[2]*ix.nb[1]+vb[1])*ix.nb[0] + vb[0]
	if ix.brank[blk] == ix.brank[blk+1] || ix.start[ix.brank[blk]] == ix.start[ix.brank[blk+1]] {
		return
	}
	var ad, cb [3]float64
	for k := 0; k < 3; k++ {
		ad[k] = out.bA[3*blk+k]
		cb[k] = 0.5 * (lo[k] + hi[k])
	}
	if bs.excludes(lo, hi, cb, ad, out.bR[blk]) {
		return
	}
	for c2 := int(ix.bcut[2][vb[2]]); c2 < int(ix.bcut[2][vb[2]+1]); c2++ {
		for c1 := int(ix.bcut[1][vb[1]]); c1 < int(ix.bcut[1][vb[1]+1]); c1++ {
			for c0 := int(ix.bcut[0][vb[0]]); c0 < int(ix.bcut[0][vb[0]+1]); c0++ {
				wk.testCell(ix, out, bs, [3]int{c0, c1, c2}, shift)
			}
		}
	}
}

// testCell appends grid cell c (with a periodic shift) to wk.extra unless
// its bound rules it out for every cell of the ball set.
func (wk *worker) testCell(ix *Index, out *Cells, bs *ballSet, c [3]int, shift [3]float64) {
	cell := (c[2]*ix.dims[1]+c[1])*ix.dims[0] + c[0]
	r := int(ix.crank[cell])
	if ix.start[r] == ix.start[r+1] {
		return
	}
	xc := xcell{cell: int32(cell), r: int32(r), shift: shift}
	blk := ix.blockOf(c[0], c[1], c[2])
	for k := 0; k < 3; k++ {
		xc.lo[k] = ix.lo[k] + float64(c[k])*ix.g[k] + shift[k]
		xc.hi[k] = xc.lo[k] + ix.g[k]
		xc.c[k] = xc.lo[k] + 0.5*ix.g[k]
		xc.a[k] = out.bA[3*blk+k]
	}
	xc.blk = int32(blk)
	if bs.excludes(xc.lo, xc.hi, xc.c, xc.a, out.cR[r]) {
		return
	}
	wk.extra = append(wk.extra, xc)
}
