package laguerre

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// Options sets the domain and the parallelism of a Laguerre computation.
type Options struct {
	// Lo and Hi are the lower and upper corners of the axis-aligned box,
	// in the units of the coordinates (Mpc/h in filigree). Hi must exceed
	// Lo on every axis.
	Lo, Hi [3]float64

	// Periodic makes the box a 3-torus: cells are computed with the
	// periodic images of the points and neighbours are reported by their
	// original index. Otherwise cells are clipped to the box.
	Periodic bool

	// Threads is the number of goroutines computing cells; 0 or less means
	// runtime.GOMAXPROCS(0). Results do not depend on it.
	Threads int

	// WarmStart makes Index.Compute cut every cell first by the bisectors
	// of its neighbours in the result already held in the Cells (when the
	// same Index filled it last, without error), as a transport solver
	// does when the weights change little between calls, and computes
	// each cell in the frame of its previous displacement (point minus
	// centroid; see the package comment). The search for further planes is
	// the same as without it, so the cells are still exact, but the cuts
	// come in another order and another frame: results may differ from a
	// cold computation by rounding (last bits), and then depend on the
	// previous call. They still do not depend on Threads. Without a usable
	// previous result the computation is cold. The Cells then keeps a
	// second copy of the neighbour lists and one array of n 32-bit marks
	// per thread.
	WarmStart bool
}

// gridDensity is the mean number of points per grid cell of an Index. About
// two keeps the candidate scan short while the offset order stays fine
// enough that near neighbours are clipped first.
const gridDensity = 2.0

// epsRel is the clipping tolerance relative to the mean point spacing s =
// (box volume / n)^(1/3): a vertex closer than epsRel·s to a cutting plane
// counts as lying on it (see poly.clip).
const epsRel = 1e-11

// areaRel is the smallest facet area reported, relative to s². Smaller
// facets are artefacts of the tolerance epsRel (a plane that just shaves a
// vertex by more than epsRel·s on one side but not on the other) and are
// dropped so that neighbour lists stay symmetric.
const areaRel = 1e-9

// offChunk is the Chebyshev radius (in grid cells) of the precomputed,
// distance-sorted neighbour-cell offsets that a cell's first search visits;
// farther grid cells are reached through the block test (see blocks.go).
const offChunk = 4

// blockCells is the smallest number of grid cells per axis in a block (a
// block holds blockCells to 2·blockCells−1 of them unless the grid is
// smaller). It must be at least offChunk, so that the offsets of the first
// search never leave the 3×3×3 blocks around a point's block.
const blockCells = 4

// Index is a uniform grid over a fixed set of points, built once and reused
// while the weights change (as in a transport solver's Newton iterations).
// An Index is read-only after NewIndex and may be shared by concurrent
// calls to Compute that write to different Cells.
type Index struct {
	opt   Options
	n     int
	lo    [3]float64 // box lower corner
	ext   [3]float64 // box extent Hi − Lo
	dims  [3]int     // grid cells per axis
	g     [3]float64 // grid cell size per axis
	gmin  float64    // smallest grid cell size
	start []int32    // first sorted position of each grid cell by rank (crank), len ncell+1
	xyz   []float64  // points sorted by block, then grid cell (wrapped into the box if periodic), 3 per point
	order []int32    // sorted position → original index
	scale float64    // mean spacing (box volume / n)^(1/3)
	offs  []gridOff  // neighbour-cell offsets sorted by lower distance bound

	// Blocks: the grid is cut along each axis into nb[k] runs of grid
	// cells, bcut[k][b] ≤ c < bcut[k][b+1], and points are sorted block by
	// block (row-major over blocks, then over the cells of a block).
	nb     [3]int
	bcut   [3][]int32 // first grid coordinate of each block, len nb+1
	cblk   [3][]int32 // block coordinate of each grid coordinate
	crank  []int32    // cell number → rank in block-major cell order
	brank  []int32    // first cell rank of each block, len nblock+1
	bext   [3]float64 // smallest block extent per axis
	bextHi [3]float64 // largest block extent per axis
}

// gridOff is a neighbour-cell offset and a lower bound on the distance from
// any point of the centre cell to any point of the offset cell.
type gridOff struct {
	o  [3]int32
	b  float64
	c2 float64 // squared distance between the cell centres
}

// NewIndex builds the grid for the points xyz (x, y, z of point k at
// 3k..3k+2). In clipped mode every point must lie in [Lo, Hi]; in periodic
// mode points are wrapped into [Lo, Hi). Coordinates must be finite and
// there must be fewer than 2^31 points.
func NewIndex(xyz []float64, opt Options) (*Index, error) {
	return newIndex(xyz, opt, false)
}

// newIndex is NewIndex; uniform keeps the grid spacing of points spread
// over the whole box even for crowded points (tests compare the two).
func newIndex(xyz []float64, opt Options, uniform bool) (*Index, error) {
	if len(xyz)%3 != 0 {
		return nil, fmt.Errorf("laguerre: coordinate slice has length %d, not a multiple of 3", len(xyz))
	}
	n := len(xyz) / 3
	if n > math.MaxInt32 {
		return nil, fmt.Errorf("laguerre: %d points, at most %d supported", n, math.MaxInt32)
	}
	ix := &Index{opt: opt, n: n}
	vol := 1.0
	for k := 0; k < 3; k++ {
		lo, hi := opt.Lo[k], opt.Hi[k]
		if !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
			return nil, fmt.Errorf("laguerre: box axis %d is [%g, %g], want finite Lo < Hi", k, lo, hi)
		}
		ix.lo[k], ix.ext[k] = lo, hi-lo
		vol *= hi - lo
	}
	if n == 0 {
		return ix, nil
	}
	ix.scale = math.Cbrt(vol / float64(n))
	h := math.Cbrt(vol * gridDensity / float64(n))
	if !uniform {
		h = gridSpacing(xyz, opt, vol, n)
	}
	ncell := 1
	for k := 0; k < 3; k++ {
		d := int(ix.ext[k] / h)
		if d < 1 {
			d = 1
		}
		if d > 1<<20 {
			d = 1 << 20
		}
		ix.dims[k] = d
		ix.g[k] = ix.ext[k] / float64(d)
		ncell *= d
	}
	ix.gmin = math.Min(ix.g[0], math.Min(ix.g[1], ix.g[2]))
	ix.makeBlocks()

	// counting sort of the points by cell rank (block-major)
	pts := make([]float64, 3*n)
	cellOf := make([]int32, n)
	ix.start = make([]int32, ncell+1)
	for i := 0; i < n; i++ {
		var c [3]int
		for k := 0; k < 3; k++ {
			x := xyz[3*i+k]
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return nil, fmt.Errorf("laguerre: point %d coordinate %d is %g, want a finite number", i, k, x)
			}
			if opt.Periodic {
				x = ix.lo[k] + math.Mod(x-ix.lo[k], ix.ext[k])
				if x < ix.lo[k] {
					x += ix.ext[k]
				}
				if x >= opt.Hi[k] {
					x = ix.lo[k]
				}
			} else if x < opt.Lo[k] || x > opt.Hi[k] {
				return nil, fmt.Errorf("laguerre: point %d coordinate %d is %g, outside the box [%g, %g]", i, k, x, opt.Lo[k], opt.Hi[k])
			}
			pts[3*i+k] = x
			c[k] = ix.cellCoord(x, k)
		}
		cellOf[i] = ix.crank[(c[2]*ix.dims[1]+c[1])*ix.dims[0]+c[0]]
		ix.start[cellOf[i]+1]++
	}
	for c := 0; c < ncell; c++ {
		ix.start[c+1] += ix.start[c]
	}
	ix.xyz = make([]float64, 3*n)
	ix.order = make([]int32, n)
	fill := make([]int32, ncell)
	copy(fill, ix.start[:ncell])
	for i := 0; i < n; i++ {
		q := fill[cellOf[i]]
		fill[cellOf[i]]++
		ix.order[q] = int32(i)
		copy(ix.xyz[3*q:3*q+3], pts[3*i:3*i+3])
	}

	// neighbour-cell offsets within Chebyshev radius offChunk, sorted by the
	// lower bound on the point distance, then by centre distance so that the
	// nearest cells come first among equal bounds.
	r := offChunk
	for o2 := -r; o2 <= r; o2++ {
		for o1 := -r; o1 <= r; o1++ {
			for o0 := -r; o0 <= r; o0++ {
				o := [3]int32{int32(o0), int32(o1), int32(o2)}
				ix.offs = append(ix.offs, gridOff{o: o, b: ix.offBound(o), c2: centreDist2(o, ix.g)})
			}
		}
	}
	sort.SliceStable(ix.offs, func(a, b int) bool {
		oa, ob := ix.offs[a], ix.offs[b]
		if oa.b != ob.b {
			return oa.b < ob.b
		}
		return oa.c2 < ob.c2
	})
	return ix, nil
}

// gridSpacing returns the grid cell size: (vol·gridDensity/n)^(1/3) for
// points spread over the box, smaller for points crowded into part of it
// (a survey and its fill inside a box with a coarse lattice around), so
// that a typical point's cell holds about gridDensity points. The
// crowding is measured on the uniform grid as the mean over points of the
// count of their cell, k̄ = Σ count²/n (gridDensity+1 for uniform random
// points); when k̄ is more than twice that, h shrinks by
// ((gridDensity+1)/k̄)^(1/3), to no fewer than vol/(8n) per cell.
// Coordinates outside the box or not finite are left to NewIndex's checks.
func gridSpacing(xyz []float64, opt Options, vol float64, n int) float64 {
	h := math.Cbrt(vol * gridDensity / float64(n))
	var dims [3]int
	for k := 0; k < 3; k++ {
		dims[k] = max(1, min(int((opt.Hi[k]-opt.Lo[k])/h), 1<<10))
	}
	count := make([]int32, dims[0]*dims[1]*dims[2])
	for i := 0; i < n; i++ {
		c := 0
		for k := 2; k >= 0; k-- {
			f := (xyz[3*i+k] - opt.Lo[k]) / (opt.Hi[k] - opt.Lo[k])
			f -= math.Floor(f) // periodic wrap; clipped points lie in [0, 1]
			if !(f >= 0) {     // NaN
				f = 0
			}
			c = c*dims[k] + min(dims[k]-1, int(f*float64(dims[k])))
		}
		count[c]++
	}
	var s2 float64
	for _, v := range count {
		s2 += float64(v) * float64(v)
	}
	kbar := s2 / float64(n)
	if kbar > 2*(gridDensity+1) {
		h = math.Max(h*math.Cbrt((gridDensity+1)/kbar), math.Cbrt(vol/(8*float64(n))))
	}
	return h
}

// Len returns the number of points in ix.
func (ix *Index) Len() int { return ix.n }

func centreDist2(o [3]int32, g [3]float64) float64 {
	s := 0.0
	for k := 0; k < 3; k++ {
		d := float64(o[k]) * g[k]
		s += d * d
	}
	return s
}

// offBound is a lower bound on the distance between a point in cell c and a
// point in cell c+o: along axis k at least (|o_k| − 1) whole cells lie between.
func (ix *Index) offBound(o [3]int32) float64 {
	s := 0.0
	for k := 0; k < 3; k++ {
		a := o[k]
		if a < 0 {
			a = -a
		}
		if a > 1 {
			d := float64(a-1) * ix.g[k]
			s += d * d
		}
	}
	return math.Sqrt(s)
}

// makeBlocks cuts the grid into blocks and ranks the cells block by block.
func (ix *Index) makeBlocks() {
	for k := 0; k < 3; k++ {
		d := ix.dims[k]
		nb := max(1, d/blockCells)
		ix.nb[k] = nb
		ix.bcut[k] = make([]int32, nb+1)
		ix.cblk[k] = make([]int32, d)
		ix.bext[k], ix.bextHi[k] = math.Inf(1), 0
		for b := 0; b <= nb; b++ {
			ix.bcut[k][b] = int32(b * d / nb)
		}
		for b := 0; b < nb; b++ {
			for c := ix.bcut[k][b]; c < ix.bcut[k][b+1]; c++ {
				ix.cblk[k][c] = int32(b)
			}
			e := float64(ix.bcut[k][b+1]-ix.bcut[k][b]) * ix.g[k]
			ix.bext[k] = math.Min(ix.bext[k], e)
			ix.bextHi[k] = math.Max(ix.bextHi[k], e)
		}
	}
	nblock := ix.nb[0] * ix.nb[1] * ix.nb[2]
	ix.crank = make([]int32, ix.dims[0]*ix.dims[1]*ix.dims[2])
	ix.brank = make([]int32, nblock+1)
	r := int32(0)
	for b := 0; b < nblock; b++ {
		ix.brank[b] = r
		b0, b1, b2 := b%ix.nb[0], b/ix.nb[0]%ix.nb[1], b/(ix.nb[0]*ix.nb[1])
		for c2 := ix.bcut[2][b2]; c2 < ix.bcut[2][b2+1]; c2++ {
			for c1 := ix.bcut[1][b1]; c1 < ix.bcut[1][b1+1]; c1++ {
				for c0 := ix.bcut[0][b0]; c0 < ix.bcut[0][b0+1]; c0++ {
					ix.crank[(int(c2)*ix.dims[1]+int(c1))*ix.dims[0]+int(c0)] = r
					r++
				}
			}
		}
	}
	ix.brank[nblock] = r
}

// blockOf returns the block number of the grid cell with coordinates c.
func (ix *Index) blockOf(c0, c1, c2 int) int {
	return (int(ix.cblk[2][c2])*ix.nb[1]+int(ix.cblk[1][c1]))*ix.nb[0] + int(ix.cblk[0][c0])
}

// cellPoints returns the sorted positions [a, b) of the points in grid cell
// number cell.
func (ix *Index) cellPoints(cell int) (int, int) {
	r := ix.crank[cell]
	return int(ix.start[r]), int(ix.start[r+1])
}

func (ix *Index) cellCoord(x float64, k int) int {
	c := int((x - ix.lo[k]) / ix.g[k])
	if c < 0 {
		c = 0
	}
	if c >= ix.dims[k] {
		c = ix.dims[k] - 1
	}
	return c
}

var errNoIndex = errors.New("laguerre: nil Index")
