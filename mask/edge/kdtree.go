package edge

import "math"

// kdTree is a balanced k-d tree over points in three dimensions, stored
// flat: the median of each range [lo, hi) sits at its middle, split along
// axis[mid], the lower half before it and the upper half after it.
type kdTree struct {
	pts  []float64 // 3 per point, reordered
	axis []uint8
}

// newKDTree builds the tree over pts (3 per point), which it reorders.
func newKDTree(pts []float64) *kdTree {
	t := &kdTree{pts: pts, axis: make([]uint8, len(pts)/3)}
	t.build(0, len(pts)/3)
	return t
}

func (t *kdTree) swap(i, j int) {
	p := t.pts
	p[3*i], p[3*j] = p[3*j], p[3*i]
	p[3*i+1], p[3*j+1] = p[3*j+1], p[3*i+1]
	p[3*i+2], p[3*j+2] = p[3*j+2], p[3*i+2]
}

func (t *kdTree) build(lo, hi int) {
	if hi-lo < 1 {
		return
	}
	mid := (lo + hi) / 2
	if hi-lo == 1 {
		return
	}
	// Split along the axis of largest extent.
	var mn, mx [3]float64
	for d := range 3 {
		mn[d], mx[d] = math.Inf(1), math.Inf(-1)
	}
	for i := lo; i < hi; i++ {
		for d := range 3 {
			v := t.pts[3*i+d]
			mn[d], mx[d] = min(mn[d], v), max(mx[d], v)
		}
	}
	ax := 0
	for d := 1; d < 3; d++ {
		if mx[d]-mn[d] > mx[ax]-mn[ax] {
			ax = d
		}
	}
	t.axis[mid] = uint8(ax)
	t.selectNth(lo, hi, mid, ax)
	t.build(lo, mid)
	t.build(mid+1, hi)
}

// selectNth reorders [lo, hi) so that point k holds the value along ax it
// would have in sorted order, with no larger value before it and no
// smaller after it (Hoare's selection).
func (t *kdTree) selectNth(lo, hi, k, ax int) {
	hi--
	for hi > lo {
		pv := t.pts[3*((lo+hi)/2)+ax]
		i, j := lo, hi
		for i <= j {
			for t.pts[3*i+ax] < pv {
				i++
			}
			for t.pts[3*j+ax] > pv {
				j--
			}
			if i <= j {
				t.swap(i, j)
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return
		}
	}
}

// nearest returns the squared Euclidean distance from q to the nearest
// point of the tree, +Inf for an empty tree.
func (t *kdTree) nearest(q [3]float64) float64 {
	best := math.Inf(1)
	t.search(0, len(t.axis), q, 0, &best)
	return best
}

// nearestApprox returns the squared distance d² from q to a point of the
// tree with d ≤ d_min + tol, d_min the distance to the nearest point, or a
// value ≥ limit² when d_min ≥ limit (+Inf when no point is found). A
// subtree is skipped when its splitting plane is farther than
// min(d, limit) − tol, which is what makes the search fast when many
// points are almost equally near (a query at the centre of a circle).
func (t *kdTree) nearestApprox(q [3]float64, tol, limit float64) float64 {
	best := math.Inf(1)
	if !math.IsInf(limit, 1) {
		best = limit * limit
	}
	t.search(0, len(t.axis), q, tol, &best)
	if !math.IsInf(limit, 1) && best >= limit*limit {
		return math.Inf(1)
	}
	return best
}

// search visits the range [lo, hi) of the tree. off holds, per axis, the
// offset from q to the range's cell along that axis (0 when q is within
// the cell's slab) and rd = |off|², a lower bound on the squared distance
// from q to any point of the cell (the incremental distance of Arya &
// Mount 1993). A cell is skipped when √rd + tol ≥ √best.
func (t *kdTree) search(lo, hi int, q [3]float64, tol float64, best *float64) {
	t.visit(lo, hi, q, [3]float64{}, 0, tol, best)
}

func (t *kdTree) visit(lo, hi int, q, off [3]float64, rd, tol float64, best *float64) {
	for hi > lo {
		if s := math.Sqrt(rd) + tol; s*s >= *best {
			return
		}
		mid := (lo + hi) / 2
		p := t.pts[3*mid : 3*mid+3 : 3*mid+3]
		dx, dy, dz := p[0]-q[0], p[1]-q[1], p[2]-q[2]
		if d2 := dx*dx + dy*dy + dz*dz; d2 < *best {
			*best = d2
		}
		if hi-lo == 1 {
			return
		}
		ax := t.axis[mid]
		diff := q[ax] - p[ax]
		nearLo, nearHi, farLo, farHi := lo, mid, mid+1, hi
		if diff > 0 {
			nearLo, nearHi, farLo, farHi = mid+1, hi, lo, mid
		}
		// Nearer cell first, for a good bound early; the far cell lies
		// beyond the splitting plane.
		t.visit(nearLo, nearHi, q, off, rd, tol, best)
		rd += diff*diff - off[ax]*off[ax]
		off[ax] = diff
		lo, hi = farLo, farHi
	}
}
