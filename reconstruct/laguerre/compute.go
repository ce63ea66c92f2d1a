package laguerre

import (
	"fmt"
	"math"
	"runtime"
	"slices"
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

	// frames and weight bounds (blocks.go)
	bA, bR, cR []float64
	rGlob      float64
	aMin, aMax [3]float64
}

// cubeRel is the half-side of the starting cube of a cell relative to the
// mean spacing s. Voronoi cells of uniform points reach beyond 2.5 s only
// rarely; a cell that does is computed again from the whole box.
const cubeRel = 2.5

// virtTag marks the faces of the starting cube that are not box walls.
const virtTag int32 = -2

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

	// the current block: frame, per-point results (offsets and counts
	// into tn, tq, ta; trmax the largest vertex distance, −1 for an empty
	// cell), offsets of the previous neighbour lists, grid cells to test
	f                        frame
	tOff, tCnt, pOff         []int32
	tn, tq                   []int32
	ta, trmax                []float64
	ta3                      []float64 // frame of each point of the block
	tball                    []float64 // ball centre (3), radius and power of each cell of the block
	extra, px                []xcell
	again                    int     // cells computed again after the block test (diagnostics)
	nCells, nPts             int     // grid cells and points scanned (diagnostics)
	nExtra, nBlocks, nShells int     // far test: grid cells kept, octants, block shells (diagnostics)
	grp                      []int32 // points of the current octant (block positions)
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
	for q, i := range ix.order {
		w := psi[i]
		if math.IsNaN(w) || math.IsInf(w, 0) {
			return fmt.Errorf("laguerre: weight %d is %g, want a finite number", i, w)
		}
		out.psi[q] = w
	}
	out.NbrStart[0] = 0
	out.Empty = 0
	if n == 0 {
		out.Nbr, out.Area = out.Nbr[:0], out.Area[:0]
		return nil
	}
	nch := len(ix.brank) - 1 // one chunk per block
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
	ix.frames(out, threads)
	parallel(threads, nch, func(w, c int) {
		wk := out.workers[w]
		cb := &out.chunks[c]
		cb.cnt, cb.nbr, cb.area, cb.empty = cb.cnt[:0], cb.nbr[:0], cb.area[:0], 0
		var wb, pb *warmBuf
		if ix.opt.WarmStart {
			wb = &out.wcur[c]
			wb.cnt, wb.nq = wb.cnt[:0], wb.nq[:0]
		}
		if warm {
			pb = &out.wprev[c]
		}
		wk.block(ix, out, c, cb, warm, pb, wb)
	})
	for c := 0; c < nch; c++ {
		cb := &out.chunks[c]
		out.Empty += cb.empty
		q0 := int(ix.start[ix.brank[c]])
		for k, m := range cb.cnt {
			out.NbrStart[ix.order[q0+k]+1] = m
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
		q0 := int(ix.start[ix.brank[c]])
		off := 0
		for k, m := range cb.cnt {
			s := out.NbrStart[ix.order[q0+k]]
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

// block computes the cells of the points of block b (sorted positions q0 ≤
// q < q1) and writes their neighbour lists to cb (and wb): first each cell
// with the points of the precomputed offsets, then the test against the
// farther grid cells (see blocks.go), then again with the grid cells the
// test could not rule out, for the cells they may cut.
func (wk *worker) block(ix *Index, out *Cells, b int, cb *chunkBuf, warm bool, pb *warmBuf, wb *warmBuf) {
	q0, q1 := int(ix.start[ix.brank[b]]), int(ix.start[ix.brank[b+1]])
	nq := q1 - q0
	if nq == 0 {
		return
	}
	f := &wk.f
	ix.blockFrame(b, f)
	f.setup(ix, out, b)
	wk.tOff, wk.tCnt = growI(wk.tOff, nq), growI(wk.tCnt, nq)
	wk.trmax = grow(wk.trmax, nq)
	wk.tn, wk.tq, wk.ta = wk.tn[:0], wk.tq[:0], wk.ta[:0]
	wk.pOff = growI(wk.pOff, nq+1)
	wk.pOff[0] = 0
	for k := 0; k < nq; k++ {
		m := int32(0)
		if warm {
			m = pb.cnt[k]
		}
		wk.pOff[k+1] = wk.pOff[k] + m
	}
	prevOf := func(k int) []int32 {
		if !warm {
			return nil
		}
		return pb.nq[wk.pOff[k]:wk.pOff[k+1]]
	}
	// Each point's frame is the block's, or with a previous result the
	// point's previous displacement p − centroid, which centres its cell
	// on the point when the weights have changed little.
	wk.ta3 = grow(wk.ta3, 3*nq)
	wk.tball = grow(wk.tball, 5*nq)
	for k := 0; k < nq; k++ {
		q := q0 + k
		a := f.a
		if self := ix.order[q]; warm && out.Volume[self] > 0 {
			for d := 0; d < 3; d++ {
				a[d] = ix.xyz[3*q+d] - out.Centroid[3*int(self)+d]
			}
		}
		copy(wk.ta3[3*k:3*k+3], a[:])
		wk.cell(ix, out, q, k, a, warm, prevOf(k), nil)
	}
	// The far test, per octant of the block (halves of its grid cell
	// range on each axis), so that the bounds of a set of cells stay
	// tight; then per cell against the grid cells its octant could not
	// rule out.
	for oct := 0; oct < 8; oct++ {
		var glo, ghi [3]int
		skip := false
		for d := 0; d < 3; d++ {
			mid := f.clo[d] + (f.chi[d]-f.clo[d])/2
			if oct>>d&1 == 0 {
				glo[d], ghi[d] = f.clo[d], mid
			} else {
				glo[d], ghi[d] = mid, f.chi[d]
			}
			skip = skip || glo[d] == ghi[d]
		}
		if skip {
			continue
		}
		wk.grp = wk.grp[:0]
		for c2 := glo[2]; c2 < ghi[2]; c2++ {
			for c1 := glo[1]; c1 < ghi[1]; c1++ {
				for c0 := glo[0]; c0 < ghi[0]; c0++ {
					qa, qb := ix.cellPoints((c2*ix.dims[1]+c1)*ix.dims[0] + c0)
					for q := qa; q < qb; q++ {
						if wk.trmax[q-q0] >= 0 {
							wk.grp = append(wk.grp, int32(q-q0))
						}
					}
				}
			}
		}
		if len(wk.grp) == 0 {
			continue
		}
		bs := ballSet{rho: math.Inf(-1), nu: math.Inf(-1)}
		for d := 0; d < 3; d++ {
			bs.xlo[d], bs.xhi[d] = math.Inf(1), math.Inf(-1)
			bs.plo[d] = ix.lo[d] + float64(glo[d])*ix.g[d]
			bs.phi[d] = ix.lo[d] + float64(ghi[d])*ix.g[d]
		}
		for _, k := range wk.grp {
			for d := 0; d < 3; d++ {
				bs.a[d] += wk.ta3[3*int(k)+d] / float64(len(wk.grp))
			}
		}
		rmax, m, da := math.Inf(-1), math.Inf(1), 0.0
		for _, k32 := range wk.grp {
			k := int(k32)
			q := q0 + k
			a := wk.ta3[3*k : 3*k+3]
			rmax = math.Max(rmax, wk.trmax[k])
			m = math.Min(m, out.psi[q]-2*(f.a[0]*(ix.xyz[3*q]-f.c[0])+f.a[1]*(ix.xyz[3*q+1]-f.c[1])+f.a[2]*(ix.xyz[3*q+2]-f.c[2])))
			da = math.Max(da, math.Sqrt((a[0]-f.a[0])*(a[0]-f.a[0])+(a[1]-f.a[1])*(a[1]-f.a[1])+(a[2]-f.a[2])*(a[2]-f.a[2])))
			tb := wk.tball[5*k : 5*k+5]
			h2 := 0.0
			for d := 0; d < 3; d++ {
				bs.xlo[d] = math.Min(bs.xlo[d], tb[d])
				bs.xhi[d] = math.Max(bs.xhi[d], tb[d])
				g := tb[d] - ix.xyz[3*q+d] + bs.a[d]
				h2 += g * g
			}
			bs.dsp = math.Max(bs.dsp, math.Sqrt(h2))
			bs.rho = math.Max(bs.rho, tb[3])
			bs.nu = math.Max(bs.nu, tb[4]+2*(bs.a[0]*tb[0]+bs.a[1]*tb[1]+bs.a[2]*tb[2]))
		}
		wk.far(ix, out, f, &bs, rmax, m, da)
		wk.nExtra += len(wk.extra)
		wk.nBlocks++
		if len(wk.extra) == 0 {
			continue
		}
		for _, k32 := range wk.grp {
			k := int(k32)
			q := q0 + k
			xi := [3]float64{ix.xyz[3*q], ix.xyz[3*q+1], ix.xyz[3*q+2]}
			var a [3]float64
			copy(a[:], wk.ta3[3*k:3*k+3])
			tb := wk.tball[5*k : 5*k+5]
			one := ballSet{xlo: [3]float64{tb[0], tb[1], tb[2]}, xhi: [3]float64{tb[0], tb[1], tb[2]}, plo: xi, phi: xi, rho: tb[3], nu: tb[4],
				a: [3]float64{xi[0] - tb[0], xi[1] - tb[1], xi[2] - tb[2]}}
			one.nu += 2 * (one.a[0]*tb[0] + one.a[1]*tb[1] + one.a[2]*tb[2])
			wk.px = wk.px[:0]
			for i := range wk.extra {
				xc := &wk.extra[i]
				if one.excludes(xc.lo, xc.hi, xc.c, xc.a, out.cR[xc.r]) {
					continue
				}
				wk.px = append(wk.px, *xc)
			}
			if len(wk.px) > 0 {
				wk.cell(ix, out, q, k, a, warm, prevOf(k), wk.px)
				wk.again++
			}
		}
	}
	for k := 0; k < nq; k++ {
		o, c := wk.tOff[k], wk.tCnt[k]
		cb.nbr = append(cb.nbr, wk.tn[o:o+c]...)
		cb.area = append(cb.area, wk.ta[o:o+c]...)
		cb.cnt = append(cb.cnt, c)
		if wb != nil {
			wb.nq = append(wb.nq, wk.tq[o:o+c]...)
			wb.cnt = append(wb.cnt, c)
		}
		if wk.trmax[k] < 0 {
			cb.empty++
		}
	}
}

// xcellBound returns the squared distance from xi to grid cell xc and the
// lower bound ψ_i − W on ψ_i − ψ_j + 2a·(p_j − xi) over its points j, for
// the frame a.
func (wk *worker) xcellBound(ix *Index, out *Cells, xc xcell, xi, a [3]float64, pi float64) (float64, float64) {
	d2 := 0.0
	var rel [3]float64
	for k := 0; k < 3; k++ {
		if d := xc.lo[k] - xi[k]; d > 0 {
			d2 += d * d
		} else if d := xi[k] - xc.hi[k]; d > 0 {
			d2 += d * d
		}
		rel[k] = xc.c[k] - xi[k]
	}
	return d2, pi - cellW(ix, out, int(xc.r), int(xc.blk), rel, a)
}

// cell computes the cell of the point at sorted position q, the k-th of the
// current block (frame wk.f), and stores it as the block's entry k. Faces
// are tagged with the sorted position of the other point (so that the tags
// of a cell are near q in memory), and with wallTag or virtTag. The cell is
// cut by the points of the offsets within offChunk that lie in the block
// neighbourhood and by those of the grid cells extra. With warm, prev lists
// the sorted positions of the neighbours in the previous call.
func (wk *worker) cell(ix *Index, out *Cells, q, kq int, a [3]float64, warm bool, prev []int32, extra []xcell) {
	f := &wk.f
	p := &wk.p
	xi := [3]float64{ix.xyz[3*q], ix.xyz[3*q+1], ix.xyz[3*q+2]}
	pi := out.psi[q]
	self := ix.order[q]
	// rmax is the largest vertex distance of the current cell
	var rmax float64
	// δ = a − f.a widens the bound of the block's neighbourhood (see far)
	var dA [3]float64
	for k := 0; k < 3; k++ {
		dA[k] = a[k] - f.a[k]
	}
	dAbs := math.Sqrt(dA[0]*dA[0] + dA[1]*dA[1] + dA[2]*dA[2])
	framed := a != [3]float64{}
	var lo, hi [3]float64
	var c [3]int
	for k := 0; k < 3; k++ {
		// the start in the frame: the box (periodic: the cube of side
		// Hi−Lo about the point) translated by +a
		if ix.opt.Periodic {
			lo[k], hi[k] = -0.5*ix.ext[k]+a[k], 0.5*ix.ext[k]+a[k]
		} else {
			lo[k], hi[k] = ix.opt.Lo[k]-xi[k]+a[k], ix.opt.Hi[k]-xi[k]+a[k]
		}
		c[k] = ix.cellCoord(xi[k], k)
	}
	// cloc bounds ψ_i − ψ_j + 2a·(p_j − p_i) from below for every point of
	// the first search
	// in the frame a, up to the term −2δ·(p_j − p_i) ≥ −2|δ|·d that
	// lowerPlane(d, cloc) − |δ| accounts for
	fa := f.a
	cloc := pi - f.wloc - 2*(fa[0]*(xi[0]-f.c[0])+fa[1]*(xi[1]-f.c[1])+fa[2]*(xi[2]-f.c[2]))
	locOut := func(d float64) bool { return lowerPlane(d, cloc)-dAbs >= rmax }
	eps := epsRel * ix.scale
	// The first attempt starts from the cube of half-side cubeRel·s about
	// the point (within the start), with walls tagged virtTag, so that the
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
	// reach2 is the squared distance beyond which no point of the block
	// neighbourhood can cut the cell: lowerPlane(d, cloc) − |δ| ≥ rmax
	var reach2 float64
	setRmax := func(r2 float64) {
		rmax = math.Sqrt(r2)
		reach2 = math.Inf(-1)
		if r := rmax + dAbs; r*r > cloc {
			d := r + math.Sqrt(r*r-cloc)
			reach2 = d * d * (1 + 1e-9)
		}
	}

	// scan gathers the points of grid cell number cell, shifted by a
	// periodic image offset, whose bisector may cut the cell (plane
	// distance t < rmax) into wk.cands. d2box is the squared distance from
	// the point to the grid cell and cmin a lower bound on ψ_i − ψ_j +
	// 2a·(p_j − p_i) over its points. It reports false when a coincident
	// point of higher priority makes the cell empty.
	scan := func(cell int, shift [3]float64, zeroShift bool, d2box, cmin float64) bool {
		if cmin > math.Inf(-1) && lowerPlane(math.Sqrt(d2box), cmin) >= rmax {
			return true
		}
		rmax2 := wk.rmax2()
		qa, qb := ix.cellPoints(cell)
		wk.nCells++
		wk.nPts += qb - qa
		for q2 := qa; q2 < qb; q2++ {
			if q2 == q && zeroShift {
				continue
			}
			dx := ix.xyz[3*q2] + shift[0] - xi[0]
			dy := ix.xyz[3*q2+1] + shift[1] - xi[1]
			dz := ix.xyz[3*q2+2] + shift[2] - xi[2]
			d2 := dx*dx + dy*dy + dz*dz
			pj := out.psi[q2]
			if d2 == 0 {
				if pj > pi || (pj == pi && ix.order[q2] < self) {
					return false
				}
				continue
			}
			t2 := d2 + pi - pj
			if framed {
				t2 += 2 * (a[0]*dx + a[1]*dy + a[2]*dz)
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

	// Per-axis tables for the precomputed offsets −offChunk..offChunk:
	// wrapped grid coordinate (−1 outside a clipped box or the block
	// neighbourhood), periodic shift and squared distance from the point to
	// that slab of cells.
	const nt = 2*offChunk + 1
	var tcell [3][nt]int
	var tshift, td2 [3][nt]float64
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
			cw, sh, ok := ix.unwrapCell(k, ck)
			if !ok || ck < f.nlo[k] || ck >= f.nhi[k] {
				cw = -1
			}
			tcell[k][m+offChunk] = cw
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
		if d2box > 0 && d2box >= reach2 {
			return true
		}
		cell := (c2*ix.dims[1]+c1)*ix.dims[0] + c0
		shift := [3]float64{tshift[0][i0], tshift[1][i1], tshift[2][i2]}
		zero := shift[0] == 0 && shift[1] == 0 && shift[2] == 0
		return scan(cell, shift, zero, d2box, math.Inf(-1))
	}

	// collectU scans the grid cell with unwrapped coordinates u.
	collectU := func(u [3]int) bool {
		var cw [3]int
		var shift, rel [3]float64
		d2box := 0.0
		for k := 0; k < 3; k++ {
			ck, sh, ok := ix.unwrapCell(k, u[k])
			if !ok {
				return true
			}
			cw[k], shift[k] = ck, sh
			blo := ix.lo[k] + float64(u[k])*ix.g[k]
			if d := blo - xi[k]; d > 0 {
				d2box += d * d
			} else if d := xi[k] - blo - ix.g[k]; d > 0 {
				d2box += d * d
			}
			rel[k] = blo + 0.5*ix.g[k] - xi[k]
		}
		if d2box > 0 && d2box >= reach2 {
			return true
		}
		cell := (cw[2]*ix.dims[1]+cw[1])*ix.dims[0] + cw[0]
		r := int(ix.crank[cell])
		if ix.start[r] == ix.start[r+1] {
			return true
		}
		w := cellW(ix, out, r, ix.blockOf(cw[0], cw[1], cw[2]), rel, a)
		zero := shift[0] == 0 && shift[1] == 0 && shift[2] == 0
		return scan(cell, shift, zero, d2box, pi-w)
	}
	// reachN is the largest Chebyshev distance from the point's grid cell
	// to a grid cell of the block neighbourhood.
	reachN := 0
	for k := 0; k < 3; k++ {
		reachN = max(reachN, c[k]-f.nlo[k], f.nhi[k]-1-c[k])
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
		if !warm && len(keys) > 256 {
			// the long lists of the far grid cells
			slices.SortFunc(keys, func(x, y candKey) int {
				if x.t < y.t {
					return -1
				}
				if x.t > y.t {
					return 1
				}
				return 0
			})
		} else if !warm {
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
		// done: the cell is empty; near: no further point of the block
		// neighbourhood can cut it (the grid cells extra still can)
		done, near := false, false
		if warm {
			done = !wk.warmCuts(ix, out, q, xi, a, eps, prev, setRmax)
			empty = done
		}
		for k := 0; k < len(ix.offs) && !done; {
			b := ix.offs[k].b
			// Offsets beyond the precomputed cube (Chebyshev radius
			// offChunk) have bounds from offChunk·gmin up, which can be
			// below the cube's own largest bounds (its corners): the
			// search may only stop at b when those are also out of reach.
			if locOut(min(b, offChunk*ix.gmin)) {
				near = true
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
		// the rest of the block neighbourhood, shell by shell
		for s := offChunk + 1; !done && !near && s <= reachN; s++ {
			if locOut(float64(s-1) * ix.gmin) {
				break
			}
			var olo, ohi [3]int
			for k := 0; k < 3; k++ {
				olo[k], ohi[k] = max(-s, f.nlo[k]-c[k]), min(s, f.nhi[k]-1-c[k])
			}
			for o2 := olo[2]; o2 <= ohi[2] && !done; o2++ {
				for o1 := olo[1]; o1 <= ohi[1] && !done; o1++ {
					face := o2 == -s || o2 == s || o1 == -s || o1 == s
					for o0 := olo[0]; o0 <= ohi[0]; o0++ {
						if !face && o0 != -s && o0 != s {
							if o0 < s && s <= ohi[0] {
								o0 = s - 1 // jump to +s
							}
							continue
						}
						if !collectU([3]int{c[0] + o0, c[1] + o1, c[2] + o2}) {
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
		if !done && len(extra) > 0 {
			for _, xc := range extra {
				d2, cmin := wk.xcellBound(ix, out, xc, xi, a, pi)
				zero := xc.shift[0] == 0 && xc.shift[1] == 0 && xc.shift[2] == 0
				if !scan(int(xc.cell), xc.shift, zero, d2, cmin) {
					coincident, empty, done = true, true, true
					break
				}
			}
			if !done && !flush() {
				empty = true
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
		// the ball about the middle of the cell's bounding box, in box
		// coordinates, and the power of the point there
		mid, rho := wk.ball()
		tb := wk.tball[5*kq : 5*kq+5]
		pw := -pi
		for k := 0; k < 3; k++ {
			tb[k] = xi[k] + mid[k] - a[k]
			pw += (mid[k] - a[k]) * (mid[k] - a[k])
		}
		tb[3], tb[4] = rho, pw
		if wk.slow {
			vol, cen = p.measure()
			ftag, farea = p.ftag, p.farea
		} else {
			vol, cen = wk.g.measure()
			ftag, farea = wk.g.ftag, wk.g.farea
		}
	}
	wk.tOff[kq] = int32(len(wk.tn))
	if vol <= 0 {
		out.Volume[self] = 0
		copy(out.Centroid[3*self:3*self+3], xi[:])
		wk.tCnt[kq] = 0
		wk.trmax[kq] = -1
		return
	}
	wk.trmax[kq] = rmax
	out.Volume[self] = vol
	for k := 0; k < 3; k++ {
		out.Centroid[3*self+int32(k)] = xi[k] + cen[k] - a[k]
	}

	// neighbours: sort faces by original index (insertion sort, about 15
	// faces), merge repeated ones (several images of one point), drop
	// walls, self-images and rounding slivers.
	wk.pairs = wk.pairs[:0]
	for fc, t := range ftag {
		if t < 0 || t == int32(q) {
			continue
		}
		j := ix.order[t]
		ar := farea[fc]
		k := len(wk.pairs)
		wk.pairs = append(wk.pairs, nbrArea{})
		for k > 0 && wk.pairs[k-1].j > j {
			wk.pairs[k] = wk.pairs[k-1]
			k--
		}
		wk.pairs[k] = nbrArea{j, t, ar}
	}
	minArea := areaRel * ix.scale * ix.scale
	m := int32(0)
	for k := 0; k < len(wk.pairs); {
		j, t, ar := wk.pairs[k].j, wk.pairs[k].q, wk.pairs[k].a
		k++
		for k < len(wk.pairs) && wk.pairs[k].j == j {
			ar += wk.pairs[k].a
			k++
		}
		if ar > minArea {
			wk.tn = append(wk.tn, j)
			wk.tq = append(wk.tq, t)
			wk.ta = append(wk.ta, ar)
			m++
		}
	}
	wk.tCnt[kq] = m
}

// warmCuts cuts the current cell of the point at sorted position q (at xi)
// by the bisectors of its neighbours in the previous call, prev (sorted
// positions), in order of increasing plane distance, and marks them so that
// the search in worker.cell skips them. Points are taken as they are (no
// periodic shift), and only those nearer than half the box on every axis in
// periodic mode, so a marked point is the same plane when the search meets
// it unshifted; neighbours through the periodic boundary are left to the
// search. It reports false when the cell became empty.
func (wk *worker) warmCuts(ix *Index, out *Cells, q int, xi, a [3]float64, eps float64, prev []int32, setRmax func(float64)) bool {
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
		t2 := d2 + pi - out.psi[q2] + 2*(a[0]*dx+a[1]*dy+a[2]*dz)
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
		t2 := d2 + pi - out.psi[q2] + 2*(a[0]*dx+a[1]*dy+a[2]*dz)
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

// ball returns the middle of the bounding box of the current cell's
// vertices and the largest vertex distance from it.
func (wk *worker) ball() (mid [3]float64, rho float64) {
	lo := [3]float64{math.Inf(1), math.Inf(1), math.Inf(1)}
	hi := [3]float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
	r2 := 0.0
	if wk.slow {
		v := wk.p.v
		for i := 0; i+2 < len(v); i += 3 {
			for k := 0; k < 3; k++ {
				if x := v[i+k]; x < lo[k] {
					lo[k] = x
				}
				if x := v[i+k]; x > hi[k] {
					hi[k] = x
				}
			}
		}
		for k := 0; k < 3; k++ {
			mid[k] = 0.5 * (lo[k] + hi[k])
		}
		for i := 0; i+2 < len(v); i += 3 {
			dx, dy, dz := v[i]-mid[0], v[i+1]-mid[1], v[i+2]-mid[2]
			if d := dx*dx + dy*dy + dz*dz; d > r2 {
				r2 = d
			}
		}
		return mid, math.Sqrt(r2) * (1 + 1e-12)
	}
	vs := wk.g.v[:wk.g.nv]
	for i := range vs {
		for k := 0; k < 3; k++ {
			if x := vs[i][k]; x < lo[k] {
				lo[k] = x
			}
			if x := vs[i][k]; x > hi[k] {
				hi[k] = x
			}
		}
	}
	for k := 0; k < 3; k++ {
		mid[k] = 0.5 * (lo[k] + hi[k])
	}
	for i := range vs {
		dx, dy, dz := vs[i][0]-mid[0], vs[i][1]-mid[1], vs[i][2]-mid[2]
		if d := dx*dx + dy*dy + dz*dz; d > r2 {
			r2 = d
		}
	}
	return mid, math.Sqrt(r2) * (1 + 1e-12)
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
