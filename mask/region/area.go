package region

import (
	"math"
	"runtime"
	"sync"
	"sync/atomic"
)

// SqDegPerSr is the number of square degrees in a steradian, (180/π)².
const SqDegPerSr = (180 / math.Pi) * (180 / math.Pi)

// Measure is the size of a region in square degrees.
type Measure struct {
	// Area is the footprint's area in deg².
	Area float64
	// EffectiveArea is the integral of the completeness over the sky, in
	// deg².
	EffectiveArea float64
	// MaxError bounds the error of both Area and EffectiveArea in deg²
	// (apart from rounding): the total area of the finest cells that a
	// shape's edge still crosses. It is 0 when Exact.
	MaxError float64
	// Exact reports that the areas are sums of exact shape areas, because
	// no two shapes' bounding caps overlap.
	Exact bool
	// Depth is the subdivision depth used (0 when Exact).
	Depth int
}

// DefaultDepth is the subdivision depth of Area, EffectiveArea and
// Measure: the finest cells are 10°/2^13 ≈ 4.4″ wide in RA and 1/(9·2^13)
// in sin Dec, so the error bound is about 2.5e-3° times the total length of
// the shape edges in degrees (the band of finest cells along them), e.g.
// 0.1 deg² for a 10°-radius cap with a 2° hole; the actual error, from
// counting those cells by their centres, is usually far smaller (4e-5 deg²
// in that example).
const DefaultDepth = 13

// Area returns the footprint's area in deg², computed once by
// MeasureDepth(DefaultDepth).
func (r *Region) Area() float64 { return r.Measure().Area }

// EffectiveArea returns the completeness-weighted area in deg², computed
// once by MeasureDepth(DefaultDepth).
func (r *Region) EffectiveArea() float64 { return r.Measure().EffectiveArea }

// Measure returns MeasureDepth(DefaultDepth), computed on first use.
func (r *Region) Measure() Measure {
	r.once.Do(func() { r.m = r.MeasureDepth(DefaultDepth) })
	return r.m
}

// baseRA and baseS are the numbers of top-level cells in RA and in sin Dec.
const (
	baseRA = 36
	baseS  = 18
)

// MeasureDepth measures the region's area and effective area. When no two
// shapes' bounding caps overlap the result is the sum of the exact areas of
// the include shapes, times their completeness for the effective area.
// Otherwise the sky is divided into a 36 × 18 grid of cells equal in RA and
// in sin Dec (the Lambert cylindrical equal-area projection, so every cell's
// area is exactly ΔRA·Δsin Dec), and each cell is split in four, up to depth
// times, while some shape's edge may pass through it: a cell whose centre
// is farther from every edge than the cell's circumradius (the largest
// distance from its centre to a corner, which bounds the distance to any of
// its points) lies wholly inside or outside each shape and is counted
// exactly. A cell still undecided at the finest level is counted by the
// completeness at its centre, and its area is added to MaxError. depth is
// clamped to [0, 24]. Cells are spread over GOMAXPROCS goroutines and summed
// in a fixed order, so the result does not depend on the thread count.
func (r *Region) MeasureDepth(depth int) Measure {
	depth = max(0, min(depth, 24))
	var inc []int32
	for i := range r.shapes {
		if !r.shapes[i].Exclude {
			inc = append(inc, int32(i))
		}
	}
	if len(inc) == 0 {
		return Measure{Exact: true}
	}
	if r.disjoint() {
		var m Measure
		for _, i := range inc {
			s := &r.shapes[i]
			m.Area += s.c.area * SqDegPerSr
			m.EffectiveArea += s.c.area * s.c.comp * SqDegPerSr
		}
		m.Exact = true
		return m
	}
	type result struct{ area, eff, unc float64 }
	res := make([]result, baseRA*baseS)
	all := make([]int32, len(r.shapes))
	for i := range all {
		all[i] = int32(i)
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	workers := min(runtime.GOMAXPROCS(0), len(res))
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			wk := walker{r: r, maxDepth: depth, bufs: make([][]int32, depth+1)}
			for {
				c := int(next.Add(1) - 1)
				if c >= len(res) {
					return
				}
				i, j := c%baseRA, c/baseRA
				l0, l1 := 2*math.Pi*float64(i)/baseRA, 2*math.Pi*float64(i+1)/baseRA
				s0, s1 := -1+2*float64(j)/baseS, -1+2*float64(j+1)/baseS
				a, e, u := wk.cell(l0, l1, s0, s1, 0, all, 0)
				res[c] = result{a, e, u}
			}
		}()
	}
	wg.Wait()
	m := Measure{Depth: depth}
	for _, x := range res {
		m.Area += x.area * SqDegPerSr
		m.EffectiveArea += x.eff * SqDegPerSr
		m.MaxError += x.unc * SqDegPerSr
	}
	return m
}

// disjoint reports whether no two shapes' bounding caps overlap. Regions
// of more than 2000 shapes are not checked (and reported as overlapping).
func (r *Region) disjoint() bool {
	n := len(r.shapes)
	if n > 2000 {
		return false
	}
	for i := 0; i < n; i++ {
		a := &r.shapes[i].c
		for j := i + 1; j < n; j++ {
			b := &r.shapes[j].c
			if a.bound+b.bound >= math.Pi || angle(a.centre, b.centre) <= a.bound+b.bound {
				return false
			}
		}
	}
	return true
}

// walker subdivides cells for MeasureDepth; bufs holds one shape list per
// depth, reused.
type walker struct {
	r        *Region
	maxDepth int
	bufs     [][]int32
}

// cell returns the footprint area, the effective area and the undecided
// area, in steradians, of the cell [l0, l1] × [s0, s1] in (RA in radians,
// sin Dec). list holds the shapes whose status in the cell is unknown;
// comp is the largest completeness of the include shapes known to contain
// the whole cell (0 for none).
func (w *walker) cell(l0, l1, s0, s1 float64, depth int, list []int32, comp float64) (area, eff, unc float64) {
	lc, sc := (l0+l1)/2, (s0+s1)/2
	p := cylVec(lc, sc)
	ra, dec := lc/deg, math.Asin(sc)/deg
	// The circumradius: the farthest corner (see MeasureDepth).
	c2 := 0.0
	for _, l := range [2]float64{l0, l1} {
		for _, s := range [2]float64{s0, s1} {
			c2 = math.Max(c2, chord2(p, cylVec(l, s)))
		}
	}
	rad := 2*math.Asin(math.Min(1, math.Sqrt(c2)/2))*(1+1e-9) + 1e-12
	sinR, cosR := math.Sincos(rad)
	cellArea := (l1 - l0) * (s1 - s0)
	keep := w.bufs[depth][:0]
	for _, k := range list {
		s := &w.r.shapes[k]
		if !s.Exclude && s.c.comp <= comp {
			continue // cannot change the cell
		}
		// Wholly outside the bounding cap: p·c < cos(bound + rad).
		if s.c.bound+rad < math.Pi && dot(p, s.c.centre) < s.c.cosB*cosR-s.c.sinB*sinR-1e-12 {
			continue
		}
		if !s.edgeNear(p, dec, rad, sinR, cosR) {
			if s.contains(p, ra, dec) {
				if s.Exclude {
					return 0, 0, 0
				}
				comp = s.c.comp
			}
			continue
		}
		keep = append(keep, k)
	}
	// Drop includes that can no longer raise the completeness.
	n := 0
	openInclude := false
	for _, k := range keep {
		s := &w.r.shapes[k]
		if !s.Exclude && s.c.comp <= comp {
			continue
		}
		keep[n] = k
		n++
		openInclude = openInclude || !s.Exclude
	}
	keep = keep[:n]
	w.bufs[depth] = keep
	if !openInclude && comp == 0 {
		return 0, 0, 0 // holes matter only inside the footprint
	}
	if n == 0 {
		if comp > 0 {
			return cellArea, cellArea * comp, 0
		}
		return 0, 0, 0
	}
	if depth == w.maxDepth {
		c := comp
		for _, k := range keep {
			s := &w.r.shapes[k]
			if s.contains(p, ra, dec) {
				if s.Exclude {
					c = 0
					break
				}
				c = math.Max(c, s.c.comp)
			}
		}
		if c > 0 {
			return cellArea, cellArea * c, cellArea
		}
		return 0, 0, cellArea
	}
	// The children write only deeper buffers, so keep stays valid.
	for _, q := range [4][4]float64{{l0, lc, s0, sc}, {lc, l1, s0, sc}, {l0, lc, sc, s1}, {lc, l1, sc, s1}} {
		a, e, u := w.cell(q[0], q[1], q[2], q[3], depth+1, keep, comp)
		area += a
		eff += e
		unc += u
	}
	return area, eff, unc
}

// cylVec returns the unit vector at RA l radians and sin Dec s.
func cylVec(l, s float64) vec {
	s = math.Max(-1, math.Min(1, s))
	c := math.Sqrt((1 - s) * (1 + s))
	sl, cl := math.Sincos(l)
	return vec{c * cl, c * sl, s}
}
