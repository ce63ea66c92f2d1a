package laguerre

import (
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"
)

// Cells holds the Laguerre cells of n weighted points. All slices are
// indexed by the original point index and are reused by later calls to
// Compute when their capacity allows, so a solver that recomputes the cells
// with new weights does not reallocate.
type Cells struct {
	// Volume[i] is the volume of cell i (coordinate units cubed); 0 for an
	// empty cell.
	Volume []float64

	// Centroid holds the centroid of cell i at 3i..3i+2. In periodic mode it
	// is given in the frame of the point wrapped into [Lo, Hi), so it may lie
	// outside the box by up to a cell size. For an empty cell it is the
	// (wrapped) point itself.
	Centroid []float64

	// NbrStart holds CSR offsets, length n+1: the neighbours of cell i are
	// Nbr[NbrStart[i]:NbrStart[i+1]], in increasing index order. The total
	// number of neighbour entries (about 15.5 per point for Voronoi cells)
	// must stay below 2^31.
	NbrStart []int32

	// Nbr lists neighbour indices. A cell sharing facets with several
	// periodic images of the same point j (possible only when the box is
	// less than about two cells across) lists j once with the facet areas
	// summed. Facets with the cell's own images and with box walls are not
	// listed.
	Nbr []int32

	// Area[k] is the area of the facet between the cell and Nbr[k]
	// (coordinate units squared). Facets smaller than areaRel·s² (s the mean
	// point spacing) are dropped as rounding artefacts.
	Area []float64

	// Empty is the number of empty cells.
	Empty int

	psi     []float64 // weights in grid order
	filled  *Index    // the Index that last filled the cells without error
	chunks  []chunkBuf
	wcur    []warmBuf // neighbour lists by sorted position, written (WarmStart)
	wprev   []warmBuf // the same from the previous call, read (WarmStart)
	workers []*worker
}

// cubeRel is the half-side of the starting cube of a cell relative to the
// mean spacing s. Voronoi cells of uniform points reach beyond 2.5 s only
// rarely; a cell that does is computed again from the whole box.
const cubeRel = 2.5

// virtTag marks the faces of the starting cube that are not box walls.
const virtTag int32 = -2

// chunkSize is the number of consecutive grid-ordered cells a worker takes
// at a time.
const chunkSize = 256

type chunkBuf struct {
	cnt   []int32 // neighbours per cell of the chunk
	nbr   []int32 // neighbours by original index
	area  []float64
	empty int
}

// warmBuf holds the neighbour lists of a chunk by sorted position, for
// Options.WarmStart: cnt per cell and the concatenated lists nq.
type warmBuf struct {
	cnt, nq []int32
}

type worker struct {
	p     poly  // face-list cell: degenerate cuts, measuring, diagnostics
	g     gcell // vertex-edge cell used while all cuts are generic
	slow  bool  // the current cell has moved from g to p
	degen int   // cells moved to p (diagnostics)
	redo  int   // cells computed again from the whole box (diagnostics)
	pairs []nbrArea
	cands []cand
	keys  []candKey

	// warm start: mark[q2] == stamp for the points at sorted position q2
	// whose bisector (nearest image) was cut first in the current cell
	mark  []uint32
	stamp uint32
	warm  []candKey
}

// candKey is a candidate's plane distance t from p_i and its index in
// worker.cands.
type candKey struct {
	t float64
	i int32
}

// cand is a point whose power bisector may cut the current cell: the plane
// n·x = off with n = (dx, dy, dz) = p_j − p_i, |n| = d.
type cand struct {
	d, dx, dy, dz, off float64
	tag                int32
}

type nbrArea struct {
	j int32 // original index
	q int32 // sorted position
	a float64
}

// Compute computes the Laguerre cells of the points xyz (3 per point) with
// weights psi: cell i is {x in box : |x−p_i|² − psi_i ≤ |x−p_j|² − psi_j for
// all j}, with periodic images of all points in periodic mode. It is
// NewIndex followed by Index.Compute; use an Index directly when the points
// stay fixed and the weights change.
func Compute(xyz, psi []float64, opt Options, out *Cells) error {
	ix, err := NewIndex(xyz, opt)
	if err != nil {
		return err
	}
	return ix.Compute(psi, out)
}

// Compute computes the Laguerre cells of the indexed points with weights
// psi (coordinate units squared, one per point) into out. Weights must be
// finite. Cells are clipped one by one (Voro++-style): each starts as the
// box, or in periodic mode as the cube of side Hi−Lo centred on the point
// (first trying a smaller cube about the point, see the package comment),
// and is cut by the power bisectors of the other points in order of
// increasing grid distance until no remaining point can reach it. A point
// coinciding with another of larger weight, or of equal weight and lower
// index, has an empty cell. With Options.WarmStart, and out last filled by
// ix, each cell is first cut by the planes of its previous neighbours (see
// the package comment).
func (ix *Index) Compute(psi []float64, out *Cells) error {
	if ix == nil {
		return errNoIndex
	}
	n := ix.n
	if len(psi) != n {
		return fmt.Errorf("laguerre: %d weights for %d points", len(psi), n)
	}
	warm := ix.opt.WarmStart && out.filled == ix
	out.filled = nil
	out.Volume = grow(out.Volume, n)
	out.Centroid = grow(out.Centroid, 3*n)
	out.NbrStart = growI(out.NbrStart, n+1)
	out.psi = grow(out.psi, n)
	psiMax := math.Inf(-1)
	for q, i := range ix.order {
		w := psi[i]
		if math.IsNaN(w) || math.IsInf(w, 0) {
			return fmt.Errorf("laguerre: weight %d is %g, want a finite number", i, w)
		}
		out.psi[q] = w
		if w > psiMax {
			psiMax = w
		}
	}
	out.NbrStart[0] = 0
	out.Empty = 0
	if n == 0 {
		out.Nbr, out.Area = out.Nbr[:0], out.Area[:0]
		return nil
	}
	nch := (n + chunkSize - 1) / chunkSize
	if ix.opt.WarmStart {
		// the previous neighbour lists, in grid order and by sorted
		// position, are kept while the new ones are written
		out.wcur, out.wprev = out.wprev, out.wcur
		for len(out.wcur) < nch {
			out.wcur = append(out.wcur, warmBuf{})
		}
	}
	for len(out.chunks) < nch {
		out.chunks = append(out.chunks, chunkBuf{})
	}
	threads := ix.opt.Threads
	if threads <= 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	if threads > nch {
		threads = nch
	}
	for len(out.workers) < threads {
		out.workers = append(out.workers, &worker{})
	}
	parallel(threads, nch, func(w, c int) {
		wk := out.workers[w]
		cb := &out.chunks[c]
		cb.cnt, cb.nbr, cb.area, cb.empty = cb.cnt[:0], cb.nbr[:0], cb.area[:0], 0
		var wb *warmBuf
		if ix.opt.WarmStart {
			wb = &out.wcur[c]
			wb.cnt, wb.nq = wb.cnt[:0], wb.nq[:0]
		}
		end := min((c+1)*chunkSize, n)
		po := 0
		for q := c * chunkSize; q < end; q++ {
			var prev []int32
			if warm {
				pb := &out.wprev[c]
				m := int(pb.cnt[q-c*chunkSize])
				prev = pb.nq[po : po+m]
				po += m
			}
			wk.cell(ix, out, cb, q, psiMax, warm, prev, wb)
		}
	})
	for c := 0; c < nch; c++ {
		cb := &out.chunks[c]
		out.Empty += cb.empty
		for k, m := range cb.cnt {
			out.NbrStart[ix.order[c*chunkSize+k]+1] = m
		}
	}
	total := 0
	for i := 0; i < n; i++ {
		total += int(out.NbrStart[i+1])
		if total > math.MaxInt32 {
			return fmt.Errorf("laguerre: more than %d neighbour entries", math.MaxInt32)
		}
		out.NbrStart[i+1] = int32(total)
	}
	out.Nbr = growI(out.Nbr, total)
	out.Area = grow(out.Area, total)
	parallel(threads, nch, func(_, c int) {
		cb := &out.chunks[c]
		off := 0
		for k, m := range cb.cnt {
			s := out.NbrStart[ix.order[c*chunkSize+k]]
			copy(out.Nbr[s:s+m], cb.nbr[off:off+int(m)])
			copy(out.Area[s:s+m], cb.area[off:off+int(m)])
			off += int(m)
		}
	})
	out.filled = ix
	return nil
}

// parallel runs fn(worker, chunk) for chunks 0..nch−1 on threads goroutines.
func parallel(threads, nch int, fn func(w, c int)) {
	if threads <= 1 {
		for c := 0; c < nch; c++ {
			fn(0, c)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := 0; w < threads; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			for {
				c := int(next.Add(1) - 1)
				if c >= nch {
					return
				}
				fn(w, c)
			}
		}(w)
	}
	wg.Wait()
}

func grow(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

func growI(s []int32, n int) []int32 {
	if cap(s) < n {
		return make([]int32, n)
	}
	return s[:n]
}

// lowerPlane is a lower bound on the distance (d² + c)/(2d) from a point to
// its power bisector with any point at distance ≥ d, where c = psi_i − psiMax
// bounds psi_i − psi_j from below. For c ≤ 0 the expression increases with d;
// for c > 0 it is smallest, √c, at d = √c.
func lowerPlane(d, c float64) float64 {
	if c > 0 && d*d < c {
		return math.Sqrt(c)
	}
	if d == 0 {
		return math.Inf(-1)
	}
	return (d*d + c) / (2 * d)
}

// cell computes the cell of the point at grid position q and appends its
// neighbours to cb. Faces are tagged with the sorted position of the other
// point (so that the tags of a cell are near q in memory), and with wallTag
// or virtTag. With warm, prev lists the sorted positions of the neighbours
// in the previous call; a non-nil wb receives the new ones.
func (wk *worker) cell(ix *Index, out *Cells, cb *chunkBuf, q int, psiMax float64, warm bool, prev []int32, wb *warmBuf) {
	p := &wk.p
	xi := [3]float64{ix.xyz[3*q], ix.xyz[3*q+1], ix.xyz[3*q+2]}
	pi := out.psi[q]
	self := ix.order[q]
	var lo, hi [3]float64
	var c [3]int
	for k := 0; k < 3; k++ {
		if ix.opt.Periodic {
			lo[k], hi[k] = -0.5*ix.ext[k], 0.5*ix.ext[k]
		} else {
			lo[k], hi[k] = ix.opt.Lo[k]-xi[k], ix.opt.Hi[k]-xi[k]
		}
		c[k] = ix.cellCoord(xi[k], k)
	}
	cpsi := pi - psiMax
	eps := epsRel * ix.scale
	// The first attempt starts from the cube of half-side cubeRel·s about
	// the point (within the box), with walls tagged virtTag, so that the
	// first candidates see a small cell and few of them cut it.
	hv := cubeRel * ix.scale
	virtual := false
	vlo, vhi := lo, hi
	var tags, walls [6]int32
	for k := 0; k < 3; k++ {
		tags[2*k], tags[2*k+1] = wallTag, wallTag
		walls[2*k], walls[2*k+1] = wallTag, wallTag
		if -hv > lo[k] {
			vlo[k], tags[2*k], virtual = -hv, virtTag, true
		}
		if hv < hi[k] {
			vhi[k], tags[2*k+1], virtual = hv, virtTag, true
		}
	}
	// rmax is the largest vertex distance of the current cell and reach²
	// the squared distance beyond which no point's bisector can cut it
	// (lowerPlane(d, cpsi) ≥ rmax for d ≥ reach).
	var rmax, reach2 float64
	setRmax := func(r2 float64) {
		rmax = math.Sqrt(r2)
		reach2 = math.Inf(-1)
		if cpsi < r2 {
			d := rmax + math.Sqrt(r2-cpsi)
			reach2 = d * d * (1 + 1e-9)
		}
	}

	// scan gathers the points of grid cell number cell, shifted by a periodic
	// image offset, whose bisector may cut the cell (plane distance t < rmax)
	// into wk.cands. d2box is the squared distance from the point to the grid
	// cell. It reports false when a coincident point of higher priority makes
	// the cell empty.
	scan := func(cell int, shift [3]float64, zeroShift bool, d2box float64) bool {
		if d2box > 0 && d2box >= reach2 {
			return true
		}
		rmax2 := wk.rmax2()
		for q2 := int(ix.start[cell]); q2 < int(ix.start[cell+1]); q2++ {
			if q2 == q && zeroShift {
				continue
			}
			dx := ix.xyz[3*q2] + shift[0] - xi[0]
			dy := ix.xyz[3*q2+1] + shift[1] - xi[1]
			dz := ix.xyz[3*q2+2] + shift[2] - xi[2]
			d2 := dx*dx + dy*dy + dz*dz
			pj := out.psi[q2]
			t2 := d2 + pi - pj
			if d2 == 0 {
				if pj > pi || (pj == pi && ix.order[q2] < self) {
					return false
				}
				continue
			}
			if t2 > 0 && t2*t2 >= 4*d2*rmax2 {
				continue
			}
			if warm && zeroShift && wk.mark[q2] == wk.stamp {
				// already cut by warmCuts, which takes points unshifted
				continue
			}
			d := math.Sqrt(d2)
			t := t2 / (2 * d)
			wk.keys = append(wk.keys, candKey{t, int32(len(wk.cands))})
			wk.cands = append(wk.cands, cand{d: d, dx: dx, dy: dy, dz: dz, off: 0.5 * t2, tag: int32(q2)})
		}
		return true
	}

	// collect scans grid cell c+o for any offset o (used beyond the
	// precomputed offsets).
	collect := func(o [3]int32) bool {
		var shift [3]float64
		cell := 0
		d2box := 0.0
		zeroShift := true
		for k := 2; k >= 0; k-- {
			ck := c[k] + int(o[k])
			blo := ix.lo[k] + float64(ck)*ix.g[k]
			if d := blo - xi[k]; d > 0 {
				d2box += d * d
			} else if d := xi[k] - blo - ix.g[k]; d > 0 {
				d2box += d * d
			}
			if ix.opt.Periodic {
				w := floorDiv(ck, ix.dims[k])
				if w != 0 {
					ck -= w * ix.dims[k]
					shift[k] = float64(w) * ix.ext[k]
					zeroShift = false
				}
			} else if ck < 0 || ck >= ix.dims[k] {
				return true
			}
			cell = cell*ix.dims[k] + ck
		}
		return scan(cell, shift, zeroShift, d2box)
	}

	// Per-axis tables for the precomputed offsets −offChunk..offChunk:
	// wrapped grid coordinate (−1 outside a clipped box), periodic shift and
	// squared distance from the point to that slab of cells.
	const nt = 2*offChunk + 1
	var tcell [3][nt]int
	var tshift [3][nt]float64
	var td2 [3][nt]float64
	for k := 0; k < 3; k++ {
		for m := -offChunk; m <= offChunk; m++ {
			ck := c[k] + m
			blo := ix.lo[k] + float64(ck)*ix.g[k]
			d := 0.0
			if m > 0 {
				d = blo - xi[k]
			} else if m < 0 {
				d = xi[k] - blo - ix.g[k]
			}
			if d < 0 {
				d = 0
			}
			td2[k][m+offChunk] = d * d
			sh := 0.0
			if ix.opt.Periodic {
				w := floorDiv(ck, ix.dims[k])
				ck -= w * ix.dims[k]
				sh = float64(w) * ix.ext[k]
			} else if ck < 0 || ck >= ix.dims[k] {
				ck = -1
			}
			tcell[k][m+offChunk] = ck
			tshift[k][m+offChunk] = sh
		}
	}
	// collectT scans grid cell c+o for |o_k| ≤ offChunk using the tables.
	collectT := func(o [3]int32) bool {
		i0, i1, i2 := o[0]+offChunk, o[1]+offChunk, o[2]+offChunk
		c0, c1, c2 := tcell[0][i0], tcell[1][i1], tcell[2][i2]
		if c0 < 0 || c1 < 0 || c2 < 0 {
			return true
		}
		d2box := td2[0][i0] + td2[1][i1] + td2[2][i2]
		shift := [3]float64{tshift[0][i0], tshift[1][i1], tshift[2][i2]}
		zero := shift[0] == 0 && shift[1] == 0 && shift[2] == 0
		return scan((c2*ix.dims[1]+c1)*ix.dims[0]+c0, shift, zero, d2box)
	}

	// flush clips by the collected candidates in order of increasing plane
	// distance, so the nearest planes shrink the cell (and rmax) first; it
	// reports false when the cell became empty.
	flush := func() bool {
		cs := wk.cands
		// Candidates are cut in order of increasing plane distance, so
		// the nearest planes shrink the cell (and rmax) first; once the
		// next plane lies beyond rmax so do all later ones. After a warm
		// start the cell is mostly complete and few candidates cut, so
		// they are taken as they come.
		keys := wk.keys
		if !warm {
			for a := 1; a < len(keys); a++ {
				k := keys[a]
				b := a
				for b > 0 && keys[b-1].t > k.t {
					keys[b] = keys[b-1]
					b--
				}
				keys[b] = k
			}
		}
		for _, k := range keys {
			if k.t >= rmax {
				if warm {
					continue
				}
				break
			}
			cd := &cs[k.i]
			switch wk.clip(cd.dx, cd.dy, cd.dz, cd.off, eps*cd.d, cd.tag) {
			case clipEmpty:
				wk.keys = keys[:0]
				return false
			case clipCut:
				setRmax(wk.rmax2())
			}
		}
		wk.keys = keys[:0]
		wk.cands = wk.cands[:0]
		return true
	}

	empty := false
	for attempt := 0; ; attempt++ {
		if attempt == 0 && virtual {
			wk.g.reset(vlo, vhi, tags)
		} else {
			wk.g.reset(lo, hi, walls)
		}
		wk.slow = false
		setRmax(wk.g.rmax2)
		empty = false
		coincident := false
		wk.cands, wk.keys = wk.cands[:0], wk.keys[:0]
		done := false
		if warm {
			done = !wk.warmCuts(ix, out, q, xi, eps, prev, setRmax)
			empty = done
		}
		for k := 0; k < len(ix.offs) && !done; {
			b := ix.offs[k].b
			// Offsets beyond the precomputed cube (Chebyshev radius
			// offChunk) have bounds from offChunk·gmin up, which can be
			// below the cube's own largest bounds (its corners): the
			// search may only stop at b when those are also out of reach.
			if lowerPlane(min(b, offChunk*ix.gmin), cpsi) >= rmax {
				done = true
				break
			}
			for ; k < len(ix.offs) && ix.offs[k].b == b; k++ {
				if !collectT(ix.offs[k].o) {
					coincident, empty, done = true, true, true
					break
				}
			}
			if !done && !flush() {
				empty, done = true, true
			}
		}
		maxDim := max(ix.dims[0], ix.dims[1], ix.dims[2])
		for s := offChunk + 1; !done; s++ {
			if !ix.opt.Periodic && s > maxDim {
				break
			}
			if lowerPlane(float64(s-1)*ix.gmin, cpsi) >= rmax {
				break
			}
			// all offsets with Chebyshev norm s
			for o2 := -s; o2 <= s && !done; o2++ {
				for o1 := -s; o1 <= s && !done; o1++ {
					step := 1
					if o2 != -s && o2 != s && o1 != -s && o1 != s {
						step = 2 * s
					}
					for o0 := -s; o0 <= s; o0 += step {
						if !collect([3]int32{int32(o0), int32(o1), int32(o2)}) {
							coincident, empty, done = true, true, true
							break
						}
					}
				}
			}
			if !done && !flush() {
				empty, done = true, true
			}
		}

		// a cell that still has a virtual wall, or that the cube made
		// empty, may reach beyond the cube: start again from the box
		if attempt == 0 && virtual && !coincident && (empty || wk.hasVirtual()) {
			wk.redo++
			continue
		}
		break
	}

	var vol float64
	var cen [3]float64
	var ftag []int32
	var farea []float64
	if !empty {
		if wk.slow {
			vol, cen = p.measure()
			ftag, farea = p.ftag, p.farea
		} else {
			vol, cen = wk.g.measure()
			ftag, farea = wk.g.ftag, wk.g.farea
		}
	}
	if vol <= 0 {
		out.Volume[self] = 0
		copy(out.Centroid[3*self:3*self+3], xi[:])
		cb.cnt = append(cb.cnt, 0)
		if wb != nil {
			wb.cnt = append(wb.cnt, 0)
		}
		cb.empty++
		return
	}
	out.Volume[self] = vol
	for k := 0; k < 3; k++ {
		out.Centroid[3*self+int32(k)] = xi[k] + cen[k]
	}

	// neighbours: sort faces by original index (insertion sort, about 15
	// faces), merge repeated ones (several images of one point), drop
	// walls, self-images and rounding slivers.
	wk.pairs = wk.pairs[:0]
	for f, t := range ftag {
		if t < 0 || t == int32(q) {
			continue
		}
		j := ix.order[t]
		a := farea[f]
		k := len(wk.pairs)
		wk.pairs = append(wk.pairs, nbrArea{})
		for k > 0 && wk.pairs[k-1].j > j {
			wk.pairs[k] = wk.pairs[k-1]
			k--
		}
		wk.pairs[k] = nbrArea{j, t, a}
	}
	minArea := areaRel * ix.scale * ix.scale
	m := int32(0)
	for k := 0; k < len(wk.pairs); {
		j, t, a := wk.pairs[k].j, wk.pairs[k].q, wk.pairs[k].a
		k++
		for k < len(wk.pairs) && wk.pairs[k].j == j {
			a += wk.pairs[k].a
			k++
		}
		if a > minArea {
			cb.nbr = append(cb.nbr, j)
			if wb != nil {
				wb.nq = append(wb.nq, t)
			}
			cb.area = append(cb.area, a)
			m++
		}
	}
	cb.cnt = append(cb.cnt, m)
	if wb != nil {
		wb.cnt = append(wb.cnt, m)
	}
}

// warmCuts cuts the current cell of the point at sorted position q (at xi)
// by the bisectors of its neighbours in the previous call, prev (sorted
// positions), in order of increasing plane distance, and marks them so that
// the search in worker.cell skips them. Points are taken as they are (no
// periodic shift), and only those nearer than half the box on every axis in
// periodic mode, so a marked point is the same plane when the search meets
// it unshifted; neighbours through the periodic boundary are left to the
// search. It reports false when the cell became empty.
func (wk *worker) warmCuts(ix *Index, out *Cells, q int, xi [3]float64, eps float64, prev []int32, setRmax func(float64)) bool {
	if len(wk.mark) < ix.n {
		wk.mark = make([]uint32, ix.n)
		wk.stamp = 0
	}
	wk.stamp++
	if wk.stamp == 0 {
		clear(wk.mark)
		wk.stamp = 1
	}
	pi := out.psi[q]
	keys := wk.warm[:0]
	for _, q2 := range prev {
		if q2 < 0 || int(q2) >= ix.n {
			continue
		}
		dx := ix.xyz[3*q2] - xi[0]
		dy := ix.xyz[3*q2+1] - xi[1]
		dz := ix.xyz[3*q2+2] - xi[2]
		if ix.opt.Periodic && (math.Abs(dx) >= 0.5*ix.ext[0] || math.Abs(dy) >= 0.5*ix.ext[1] || math.Abs(dz) >= 0.5*ix.ext[2]) {
			continue
		}
		d2 := dx*dx + dy*dy + dz*dz
		if d2 == 0 {
			continue
		}
		t2 := d2 + pi - out.psi[q2]
		// here a key holds the sorted position, not an index into cands
		keys = append(keys, candKey{t2 / (2 * math.Sqrt(d2)), q2})
	}
	for a := 1; a < len(keys); a++ {
		k := keys[a]
		b := a
		for b > 0 && keys[b-1].t > k.t {
			keys[b] = keys[b-1]
			b--
		}
		keys[b] = k
	}
	wk.warm = keys
	for _, k := range keys {
		q2 := k.i
		wk.mark[q2] = wk.stamp
		dx := ix.xyz[3*q2] - xi[0]
		dy := ix.xyz[3*q2+1] - xi[1]
		dz := ix.xyz[3*q2+2] - xi[2]
		d2 := dx*dx + dy*dy + dz*dz
		t2 := d2 + pi - out.psi[q2]
		switch wk.clip(dx, dy, dz, 0.5*t2, eps*math.Sqrt(d2), q2) {
		case clipEmpty:
			return false
		case clipCut:
			setRmax(wk.rmax2())
		}
	}
	return true
}

// clip cuts the current cell by the plane n·x = off (see poly.clip), with
// the vertex-edge cell g while every cut is generic and with the face-list
// poly p from the first degenerate cut on.
func (wk *worker) clip(nx, ny, nz, off, tol float64, tag int32) int {
	if !wk.slow {
		wk.p.calls++
		r := wk.g.clip(nx, ny, nz, off, tol, tag)
		if r != clipDegenerate {
			if r == clipCut {
				wk.p.cuts++
			}
			return r
		}
		wk.p.calls--
		wk.g.toPoly(&wk.p)
		wk.slow = true
		wk.degen++
	}
	return wk.p.clip(nx, ny, nz, off, tol, tag)
}

// hasVirtual reports whether the current cell has a face on the virtual
// starting cube.
func (wk *worker) hasVirtual() bool {
	if wk.slow {
		for _, t := range wk.p.ftag {
			if t == virtTag {
				return true
			}
		}
		return false
	}
	for _, f := range wk.g.ft[:wk.g.nv] {
		if f[0] == virtTag || f[1] == virtTag || f[2] == virtTag {
			return true
		}
	}
	return false
}

func (wk *worker) rmax2() float64 {
	if wk.slow {
		return wk.p.rmax2
	}
	return wk.g.rmax2
}

func floorDiv(a, b int) int {
	q := a / b
	if a%b != 0 && (a < 0) != (b < 0) {
		q--
	}
	return q
}
