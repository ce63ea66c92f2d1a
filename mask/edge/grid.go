// Package edge measures how far each galaxy of a survey lies from the edge
// of the surveyed volume: the angular boundary of the footprint (its outer
// edge and the edges of its holes) and the near and far radial limits.
//
// The footprint is first classified on a HEALPix grid (Grid): each pixel is
// Empty, Mixed or Full according to the completeness sampled at the
// centres of its sub-pixels. The pixels on either side of a change of
// state form the boundary set (Boundary), whose centres, as unit vectors in
// a k-d tree, give each direction's angular distance to the nearest
// boundary point. Package mask/randoms uses the same grid to draw random
// catalogues and fill particles.
package edge

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"

	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/healpix"
)

// State is the coverage of a grid pixel by the footprint.
type State uint8

// The pixel states.
const (
	// Empty: completeness 0 at every sample of the pixel.
	Empty State = iota
	// Mixed: completeness above 0 at some samples and 0 at others.
	Mixed
	// Full: completeness above 0 at every sample.
	Full
)

// MaxSubNside is the finest sub-pixel grid NewGrid samples: Nside 1024,
// 12.6 million completeness evaluations over the whole sky.
const MaxSubNside = 1024

// Grid is a footprint classified on a HEALPix grid in NESTED ordering.
type Grid struct {
	// Nside is the grid's Nside.
	Nside int
	// SubNside is the Nside of the sub-pixels whose centres were sampled:
	// each grid pixel holds (SubNside/Nside)² of them.
	SubNside int
	// Exact reports that the footprint is a *footprint.Map or
	// *footprint.MOC no finer than SubNside: its completeness is then
	// constant over each sub-pixel, so Max and State are exact.
	// Combinations (*footprint.Combined) are treated as sampled.
	Exact bool
	// Max is the largest sampled completeness in each pixel, rounded up
	// to float32.
	Max []float32
	// State is each pixel's coverage.
	State []State
}

// nativeNside returns the Nside of a pixelised footprint whose pixel size
// is res degrees (the power of two whose pixel side is nearest), or 0 for
// exact shapes.
func nativeNside(res float64) int {
	if !(res > 0) {
		return 0
	}
	// Pixel area 4π/(12 N²) sr = res² deg².
	n := math.Sqrt(4 * math.Pi / 12 * (180 / math.Pi) * (180 / math.Pi) / (res * res))
	o := int(math.Round(math.Log2(n)))
	return 1 << max(o, 0)
}

// NewGrid classifies fp on the HEALPix grid at nside. The sub-pixel grid is
// the footprint's own Nside (from Resolution) clamped to [nside, min(4
// nside, MaxSubNside)], or 2 nside (at most MaxSubNside) for footprints made
// of exact shapes (Resolution 0). The completeness is evaluated at every
// sub-pixel centre, in parallel over runtime.GOMAXPROCS(0) goroutines; the
// result does not depend on their number.
//
// For exact shapes the classification is a sampling: a piece of footprint
// (or of a hole) narrower than the sub-pixel spacing can fall between the
// samples of a pixel. It returns an error for an invalid nside.
func NewGrid(fp footprint.Footprint, nside int) (*Grid, error) {
	if err := healpix.CheckNside(nside); err != nil {
		return nil, fmt.Errorf("edge: %w", err)
	}
	if nside > MaxSubNside {
		return nil, fmt.Errorf("edge: grid Nside %d is above %d", nside, MaxSubNside)
	}
	native := nativeNside(fp.Resolution())
	sub := min(2*nside, MaxSubNside)
	exact := false
	if native > 0 {
		sub = min(max(native, nside), 4*nside, MaxSubNside)
		switch fp.(type) {
		case *footprint.Map, *footprint.MOC:
			// Constant over each pixel at its own Nside. (A combination
			// may hold exact shapes behind a pixelised Resolution.)
			exact = native <= sub
		}
	}
	g := &Grid{Nside: nside, SubNside: sub, Exact: exact}
	npix := int(healpix.NPix(nside))
	g.Max = make([]float32, npix)
	g.State = make([]State, npix)
	k := int64(sub/nside) * int64(sub/nside)
	parallel.For(npix, 1<<10, func(lo, hi int) {
		for p := lo; p < hi; p++ {
			var mx float64
			pos, zero := 0, 0
			for s := int64(p) * k; s < int64(p+1)*k; s++ {
				th, ph := healpix.Pix2AngNest(sub, s)
				ra, dec := healpix.Ang2RADec(th, ph)
				c := fp.Completeness(ra, dec)
				if c > 0 {
					pos++
					mx = max(mx, c)
				} else {
					zero++
				}
			}
			f := float32(mx)
			if float64(f) < mx {
				f = math.Nextafter32(f, 2) // round up: Max bounds the samples
			}
			g.Max[p] = f
			switch {
			case zero == 0:
				g.State[p] = Full
			case pos > 0:
				g.State[p] = Mixed
			}
		}
	})
	return g, nil
}

// Covered reports whether pixel p holds footprint (is Mixed or Full).
func (g *Grid) Covered(p int64) bool { return g.State[p] != Empty }
