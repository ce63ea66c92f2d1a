package match

import (
	"math"
	"math/bits"
	"sort"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// leafSize is the most points a leaf of the tree holds. Leaves of 8, 16
// and 32 gave the same CPU time per BenchmarkMatch1M within the noise of a
// shared machine (fewer levels to build against longer leaf scans); small
// leaves keep the scan per query short.
const leafSize = 8

// tree is a k-d tree (Bentley 1975) over 3-d points, stored flat. Nodes are
// numbered in heap order (root 0, children 2k+1 and 2k+2) and every leaf
// sits at the same depth, so a node's row range follows from its parent's:
// [lo, hi) splits at mid = lo + (hi−lo)/2, rows [lo, mid) having
// coordinate ≤ the split value on the split axis and rows [mid, hi) ≥ it.
// Each split is at the median along the axis of greatest extent of the
// node's points (Friedman, Bentley & Finkel 1977; estimated from a sample in
// large nodes), which keeps cells on a sphere's surface compact.
type tree struct {
	pts   []float64 // 3 per point, in tree order
	idx   []int32   // input index of each point in tree order
	split []float64 // split value of each internal node
	axis  []uint8   // split axis of each internal node
	depth int       // depth of the leaves (0: the root is the only node)
}

// span is one node with its row range, as held on the traversal stack.
type span struct{ node, lo, hi int32 }

// newTree builds the tree over the n = len(pts)/3 points of pts, which it
// takes over and reorders. Each level's nodes are split by parallel.For;
// every node's split is deterministic, so the tree does not depend on the
// thread count.
func newTree(pts []float64) *tree {
	n := len(pts) / 3
	t := &tree{pts: pts, idx: make([]int32, n)}
	for i := range t.idx {
		t.idx[i] = int32(i)
	}
	for (n+(1<<t.depth)-1)>>t.depth > leafSize {
		t.depth++
	}
	nodes := 1<<(t.depth+1) - 1
	internal := 1<<t.depth - 1
	t.split = make([]float64, internal)
	t.axis = make([]uint8, internal)
	lo := make([]int32, nodes)
	hi := make([]int32, nodes)
	hi[0] = int32(n)
	for level := 0; level < t.depth; level++ {
		first := 1<<level - 1
		count := 1 << level
		// Single nodes per chunk high up, where one node is a large share
		// of the work; 64 chunks per level further down.
		parallel.For(count, max(1, count/64), func(a, b int) {
			for k := first + a; k < first+b; k++ {
				l, h := int(lo[k]), int(hi[k])
				ax := t.widest(l, h)
				mid := l + (h-l)/2
				if h-l > 1 {
					t.selectK(l, h, mid, ax)
				}
				t.axis[k] = uint8(ax)
				if mid < h {
					t.split[k] = t.pts[3*mid+ax]
				}
				lo[2*k+1], hi[2*k+1] = int32(l), int32(mid)
				lo[2*k+2], hi[2*k+2] = int32(mid), int32(h)
			}
		})
	}
	return t
}

// widest returns the axis along which the points of rows [lo, hi) spread
// the most (0 for an empty range), judged from at most about 512 rows at a
// fixed stride: any axis gives a valid tree, so an estimate costs nothing
// in correctness and saves a full scan of the large nodes.
func (t *tree) widest(lo, hi int) int {
	var bmin, bmax [3]float64
	bmin[0], bmin[1], bmin[2] = inf, inf, inf
	bmax[0], bmax[1], bmax[2] = -inf, -inf, -inf
	stride := max(1, (hi-lo)/512)
	for i := lo; i < hi; i += stride {
		x, y, z := t.pts[3*i], t.pts[3*i+1], t.pts[3*i+2]
		bmin[0], bmax[0] = min(bmin[0], x), max(bmax[0], x)
		bmin[1], bmax[1] = min(bmin[1], y), max(bmax[1], y)
		bmin[2], bmax[2] = min(bmin[2], z), max(bmax[2], z)
	}
	ax := 0
	for a := 1; a < 3; a++ {
		if bmax[a]-bmin[a] > bmax[ax]-bmin[ax] {
			ax = a
		}
	}
	return ax
}

func (t *tree) swap(i, j int) {
	p, q := t.pts[3*i:3*i+3], t.pts[3*j:3*j+3]
	p[0], q[0] = q[0], p[0]
	p[1], q[1] = q[1], p[1]
	p[2], q[2] = q[2], p[2]
	t.idx[i], t.idx[j] = t.idx[j], t.idx[i]
}

// selectK reorders rows [lo, hi) so that row k holds the value it would
// hold if the rows were sorted along axis ax, with no larger value before
// it and no smaller after. It is Floyd & Rivest's SELECT (1975, Algorithm
// 489): a recursive call on a small sample first brings a value just below
// and one just above the kth near k, so one partitioning pass usually
// leaves only a short range, about n + min(k, n−k) comparisons in all
// against about 2.75n for quickselect with a median-of-three pivot. Should
// the ranges stop shrinking (an adversarial order), the range is sorted
// instead, bounding the cost at O(n log n).
func (t *tree) selectK(lo, hi, k, ax int) {
	t.floydRivest(lo, hi-1, k, ax, 2*bits.Len(uint(hi-lo))+8)
}

// floydRivest is selectK on the inclusive range [l, r] with a budget of
// partitioning passes.
func (t *tree) floydRivest(l, r, k, ax, budget int) {
	pts := t.pts[ax:] // pts[3*i] is row i's coordinate on axis ax
	for r > l {
		if budget--; budget < 0 {
			sort.Sort(&axisSort{t, ax, l, r - l + 1})
			return
		}
		if r-l > 600 {
			n := float64(r - l + 1)
			i := float64(k - l + 1)
			z := math.Log(n)
			s := 0.5 * math.Exp(2*z/3)
			sd := 0.5 * math.Sqrt(z*s*(n-s)/n)
			if i < n/2 {
				sd = -sd
			}
			nl := max(l, int(float64(k)-i*s/n+sd))
			nr := min(r, int(float64(k)+(n-i)*s/n+sd))
			t.floydRivest(nl, nr, k, ax, 2*bits.Len(uint(nr-nl+1))+8)
		}
		v := pts[3*k]
		i, j := l, r
		t.swap(l, k)
		if pts[3*r] > v {
			t.swap(r, l)
		}
		for i < j {
			t.swap(i, j)
			i++
			j--
			for pts[3*i] < v {
				i++
			}
			for pts[3*j] > v {
				j--
			}
		}
		if pts[3*l] == v {
			t.swap(l, j)
		} else {
			j++
			t.swap(j, r)
		}
		// Now row j holds v, rows before it are ≤ v and rows after ≥ v.
		if j <= k {
			l = j + 1
		}
		if k <= j {
			r = j - 1
		}
	}
}

// axisSort sorts n rows of a tree from row off along one axis.
type axisSort struct {
	t          *tree
	ax, off, n int
}

func (s *axisSort) Len() int { return s.n }
func (s *axisSort) Less(i, j int) bool {
	return s.t.pts[3*(s.off+i)+s.ax] < s.t.pts[3*(s.off+j)+s.ax]
}
func (s *axisSort) Swap(i, j int) { s.t.swap(s.off+i, s.off+j) }

// within appends to dst the tree rows of the points whose squared Euclidean
// distance from q, computed as (p−q)·(p−q) in float64, is at most r2, in
// tree order, and returns dst. The search descends to q's side of each split
// and visits the other side only when the squared distance e² from q to the
// split plane is ≤ r2: every point there has a coordinate difference of at
// least e on the split axis, and rounding is monotonic, so its computed
// squared distance is at least the computed e² and no qualifying point is
// missed.
func (t *tree) within(q [3]float64, r2 float64, dst []int32) []int32 {
	if len(t.idx) == 0 {
		return dst
	}
	firstLeaf := int32(len(t.split))
	var stack [64]span
	top := 0
	s := span{0, 0, int32(len(t.idx))}
	for {
		if s.node >= firstLeaf {
			for i := s.lo; i < s.hi; i++ {
				p := t.pts[3*i : 3*i+3]
				dx, dy, dz := p[0]-q[0], p[1]-q[1], p[2]-q[2]
				if dx*dx+dy*dy+dz*dz <= r2 {
					dst = append(dst, i)
				}
			}
			if top == 0 {
				return dst
			}
			top--
			s = stack[top]
			continue
		}
		mid := s.lo + (s.hi-s.lo)/2
		e := q[t.axis[s.node]] - t.split[s.node]
		near, far := span{2*s.node + 1, s.lo, mid}, span{2*s.node + 2, mid, s.hi}
		if e >= 0 {
			near, far = far, near
		}
		if e*e <= r2 {
			stack[top] = far
			top++
		}
		s = near
	}
}
