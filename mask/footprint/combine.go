package footprint

import (
	"fmt"
	"iter"
	"math"
	"sync"

	"github.com/filigree-survey/filigree/internal/parallel"

	"github.com/filigree-survey/filigree/mask/healpix"
)

// op is a rule combining two completeness values.
type op int

const (
	opIntersect op = iota
	opUnion
	opSubtract
)

func (o op) apply(a, b float64) float64 {
	switch o {
	case opIntersect:
		return a * b
	case opUnion:
		return max(a, b)
	}
	if b == 0 {
		return a
	}
	return 0
}

func (o op) String() string {
	return [...]string{"intersection", "union", "difference"}[o]
}

// Combined is the combination of two footprints by Intersect, Union or
// Subtract. Its areas are computed on first use and cached; a Combined is
// safe for concurrent use.
type Combined struct {
	a, b Footprint
	op   op

	once sync.Once
	area float64
	eff  float64
	// nside of the pixel sum used for the areas; 0 when they are exact.
	sumNside int
}

// Intersect returns the footprint covered by both a and b, with
// completeness the product of theirs (independent selections).
func Intersect(a, b Footprint) *Combined { return &Combined{a: a, b: b, op: opIntersect} }

// Union returns the footprint covered by a or b, with completeness the
// larger of theirs.
func Union(a, b Footprint) *Combined { return &Combined{a: a, b: b, op: opUnion} }

// Subtract returns the part of a where b is zero, with a's completeness
// there and 0 elsewhere.
func Subtract(a, b Footprint) *Combined { return &Combined{a: a, b: b, op: opSubtract} }

// Completeness combines the completeness of the two footprints at (ra, dec)
// in degrees.
func (c *Combined) Completeness(ra, dec float64) float64 {
	return c.op.apply(c.a.Completeness(ra, dec), c.b.Completeness(ra, dec))
}

// Resolution returns the finer non-zero resolution of the two footprints
// in degrees, or 0 when both are exact.
func (c *Combined) Resolution() float64 {
	ra, rb := c.a.Resolution(), c.b.Resolution()
	switch {
	case ra == 0:
		return rb
	case rb == 0:
		return ra
	}
	return min(ra, rb)
}

// Describe names the operation and the two footprints.
func (c *Combined) Describe() string {
	return fmt.Sprintf("%s of [%s] and [%s]", c.op, c.a.Describe(), c.b.Describe())
}

// Area returns the area in deg² where the combined completeness is above
// 0. When both footprints are HEALPix maps, MOCs or combinations of them,
// the area is exact: each cell of the finer grid lies inside one cell of
// the coarser, so the combined completeness is constant over it and the
// cells are summed. Otherwise the area is a sum over the pixels of a
// HEALPix grid of the combined completeness at the pixel centres (see
// SumNside); the error comes only from pixels crossed by a boundary of an
// input, each contributing at most one pixel area, so it is bounded by
// N_b · Ω, with Ω the pixel area and N_b the number of pixels crossed, of
// order L/θ for a boundary of length L and pixel size θ = √Ω.
func (c *Combined) Area() float64 {
	c.once.Do(c.measure)
	return c.area
}

// EffectiveArea returns the combined completeness integrated over the sky
// in deg², exact or summed as described for Area.
func (c *Combined) EffectiveArea() float64 {
	c.once.Do(c.measure)
	return c.eff
}

// SumNside returns the Nside of the grid summed for Area and
// EffectiveArea, 0 when they are exact.
func (c *Combined) SumNside() int {
	c.once.Do(c.measure)
	return c.sumNside
}

// Pixel-sum grids: Nside for the sum when both inputs are exact shapes, and
// the finest grid used (50 million pixels).
const (
	exactSumNside = 1024
	maxSumNside   = 2048
)

func (c *Combined) measure() {
	if p, ok := pixelsOf(c); ok {
		var n, s float64
		for r := range p.runs() {
			w := float64(r.hi - r.lo)
			n += w
			s += w * r.c
		}
		pa := healpix.PixelArea(1<<p.order) * deg2PerSr
		c.area, c.eff = n*pa, s*pa
		return
	}
	// Pixel size at most half the finest input resolution.
	nside := exactSumNside
	if res := c.Resolution(); res > 0 {
		nside = 1
		for nside < maxSumNside && math.Sqrt(healpix.PixelArea(nside)*deg2PerSr) > res/2 {
			nside *= 2
		}
	}
	c.sumNside = nside
	c.area, c.eff = pixelSum(c, nside)
}

// pixelSum returns the area and effective area of f in deg² from its
// completeness at the centres of the pixels at nside. Partial sums are
// kept per chunk and added in order, so the result does not depend on the
// number of goroutines.
func pixelSum(f Footprint, nside int) (area, eff float64) {
	npix := int(healpix.NPix(nside))
	nch := (npix + manyChunk - 1) / manyChunk
	cnt := make([]float64, nch)
	sum := make([]float64, nch)
	parallel.For(npix, manyChunk, func(lo, hi int) {
		var n, s float64
		for p := lo; p < hi; p++ {
			th, ph := healpix.Pix2AngNest(nside, int64(p))
			ra, dec := healpix.Ang2RADec(th, ph)
			if v := f.Completeness(ra, dec); v > 0 {
				n++
				s += v
			}
		}
		cnt[lo/manyChunk], sum[lo/manyChunk] = n, s
	})
	for i := range cnt {
		area += cnt[i]
		eff += sum[i]
	}
	pa := healpix.PixelArea(nside) * deg2PerSr
	return area * pa, eff * pa
}

// run is a range [lo, hi) of NESTED pixels with constant completeness c > 0.
type run struct {
	lo, hi int64
	c      float64
}

// pixels is a footprint seen as runs of NESTED pixels at one order.
type pixels struct {
	order int
	runs  func() iter.Seq[run]
}

// pixelsOf returns the pixel runs of f when f is a Map, a MOC or a
// combination of them.
func pixelsOf(f Footprint) (pixels, bool) {
	switch f := f.(type) {
	case *Map:
		return pixels{f.order, f.runs}, true
	case *MOC:
		return pixels{f.order, func() iter.Seq[run] {
			return func(yield func(run) bool) {
				for _, x := range f.ranges {
					if !yield(run{x.Start, x.End, 1}) {
						return
					}
				}
			}
		}}, true
	case *Combined:
		a, ok := pixelsOf(f.a)
		if !ok {
			return pixels{}, false
		}
		b, ok := pixelsOf(f.b)
		if !ok {
			return pixels{}, false
		}
		o := max(a.order, b.order)
		return pixels{o, func() iter.Seq[run] { return merge(f.op, shift(a, o), shift(b, o)) }}, true
	}
	return pixels{}, false
}

// runs yields the map's nonzero pixels, consecutive equal values merged.
func (m *Map) runs() iter.Seq[run] {
	return func(yield func(run) bool) {
		cur := run{lo: -1}
		emit := func(p int64, v float32) bool {
			if cur.lo >= 0 && p == cur.hi && float64(v) == cur.c {
				cur.hi++
				return true
			}
			if cur.lo >= 0 && !yield(cur) {
				return false
			}
			cur = run{p, p + 1, float64(v)}
			return true
		}
		if m.full != nil {
			for p, v := range m.full {
				if v > 0 && !emit(int64(p), v) {
					return
				}
			}
		} else {
			for i, p := range m.pix {
				if m.val[i] > 0 && !emit(p, m.val[i]) {
					return
				}
			}
		}
		if cur.lo >= 0 {
			yield(cur)
		}
	}
}

// shift returns the runs of p at the finer order o.
func shift(p pixels, o int) iter.Seq[run] {
	s := uint(2 * (o - p.order))
	return func(yield func(run) bool) {
		for r := range p.runs() {
			if !yield(run{r.lo << s, r.hi << s, r.c}) {
				return
			}
		}
	}
}

// merge yields the nonzero runs of op applied to two sorted, disjoint run
// sequences at the same order.
func merge(o op, as, bs iter.Seq[run]) iter.Seq[run] {
	return func(yield func(run) bool) {
		na, stopA := iter.Pull(as)
		defer stopA()
		nb, stopB := iter.Pull(bs)
		defer stopB()
		a, aok := na()
		b, bok := nb()
		for aok || bok {
			var lo int64
			if aok && (!bok || a.lo <= b.lo) {
				lo = a.lo
			} else {
				lo = b.lo
			}
			hi := int64(math.MaxInt64)
			var ca, cb float64
			if aok {
				if a.lo <= lo {
					ca, hi = a.c, min(hi, a.hi)
				} else {
					hi = min(hi, a.lo)
				}
			}
			if bok {
				if b.lo <= lo {
					cb, hi = b.c, min(hi, b.hi)
				} else {
					hi = min(hi, b.lo)
				}
			}
			if v := o.apply(ca, cb); v > 0 && !yield(run{lo, hi, v}) {
				return
			}
			if aok && a.lo <= lo {
				if a.lo = hi; a.lo >= a.hi {
					a, aok = na()
				}
			}
			if bok && b.lo <= lo {
				if b.lo = hi; b.lo >= b.hi {
					b, bok = nb()
				}
			}
		}
	}
}
