package randoms

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/filigree-survey/filigree/internal/parallel"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/filigree-survey/filigree/mask/edge"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/healpix"
)

// DefaultBuffer is the buffer width W in Mpc/h used when none is given.
const DefaultBuffer = 20.0

// Kind says where a fill particle lies.
type Kind uint8

// The kinds of fill particle.
const (
	// Hole: inside the survey's radial range, in a direction of zero
	// completeness enclosed by the footprint.
	Hole Kind = iota + 1
	// AngularBuffer: inside the survey's radial range, outside the
	// footprint's outer boundary, within W of the surveyed cone.
	AngularBuffer
	// RadialBuffer: in [RMin − W, RMin) or (RMax, RMax + W], in a direction
	// of the footprint, of a hole, or of the angular buffer at that
	// distance.
	RadialBuffer
)

// String returns "hole", "angular-buffer" or "radial-buffer".
func (k Kind) String() string {
	switch k {
	case Hole:
		return "hole"
	case AngularBuffer:
		return "angular-buffer"
	case RadialBuffer:
		return "radial-buffer"
	}
	return fmt.Sprintf("Kind(%d)", uint8(k))
}

// FillOptions are the choices of FillParticles.
type FillOptions struct {
	// Density is the number density n_fill of fill particles in (h/Mpc)³;
	// each carries mass 1/n_fill, so that they stand for mean density 1.
	Density float64
	// RMin and RMax are the survey's radial limits in Mpc/h.
	RMin, RMax float64
	// Buffer is the buffer width W in Mpc/h; 0 selects DefaultBuffer.
	Buffer float64
	// Nside is the grid's Nside; 0 selects DefaultNside.
	Nside int
}

// Fill is a set of fill particles.
type Fill struct {
	// X, Y, Z are equatorial Cartesian positions in Mpc/h (x toward RA 0,
	// Dec 0; y toward RA 90°, Dec 0; z toward the north pole).
	X, Y, Z []float64
	// Kind says where each particle lies.
	Kind []Kind
	// Mass is each particle's mass weight, 1/Density.
	Mass float64
}

// fillChunk is the number of grid pixels handled by one random stream.
const fillChunk = 1 << 10

// FillParticles places particles at number density opt.Density, as a
// Poisson process (so counts in any volume are Poisson with mean density ×
// volume), in the holes of footprint fp and in a buffer of width W around
// the surveyed volume V = {completeness > 0} × [RMin, RMax], never inside V.
//
// Rules, on the grid of fp at opt.Nside (an edge.Grid):
//
//   - The pixels of zero sampled completeness fall into connected
//     components (8-neighbour adjacency). The largest is the outside; the
//     others are holes. The filled footprint F is the footprint plus its
//     holes.
//   - A point at distance r in [RMin, RMax] with completeness 0 is filled:
//     as Hole when its direction is in a hole pixel or in a footprint
//     pixel not within two pixels of the outside; as AngularBuffer when
//     it is in a footprint pixel within two pixels of the outside (an
//     outside neighbour, or a neighbour that has one), or in an outside
//     pixel and within Euclidean distance W of the cone over F:
//     r sin θ ≤ W, θ its angle to F's boundary (any θ when r ≤ W).
//   - A point with r in [max(0, RMin − W), RMin) or (RMax, RMax + W] is
//     filled when its direction is in F or within the same angular buffer
//     (RadialBuffer).
//
// θ is the angle to the nearest boundary pixel centre of F (edge.Boundary
// of F's grid), accurate to MaxPixRad(Nside) plus the search tolerance
// MaxPixRad(Nside)/4, so the buffer's outer surface is placed to within
// about r · 1.6 MaxPixRad(Nside); the exclusion of V is exact (each
// particle's completeness is evaluated).
//
// Generation: each grid pixel gets a Poisson number of points over the
// radial range its directions may need (the whole of [max(0, RMin − W),
// RMax + W] for F, up to W / sin(θ_p − 2ρ) for an outside pixel at angle
// θ_p, ρ = MaxPixRad), uniform in the pixel (equal-area HEALPix projection)
// and in r³; points failing the rules are discarded, which thins the
// Poisson process without changing its density where it is kept. Pixels
// are handled in fixed chunks, each with its own stream (Stream), so the
// result depends on seed only, not on the number of goroutines.
//
// It returns an error for a density or radial limits that are not
// positive and finite, a negative buffer, or an invalid Nside.
func FillParticles(fp footprint.Footprint, opt FillOptions, seed uint64) (*Fill, error) {
	w := opt.Buffer
	if w == 0 {
		w = DefaultBuffer
	}
	switch {
	case !(opt.Density > 0) || math.IsInf(opt.Density, 0):
		return nil, fmt.Errorf("randoms: fill density %v (h/Mpc)³, expected > 0", opt.Density)
	case !(opt.RMin >= 0 && opt.RMax > opt.RMin) || math.IsInf(opt.RMax, 0):
		return nil, fmt.Errorf("randoms: radial limits [%v, %v] Mpc/h, expected 0 ≤ RMin < RMax < ∞", opt.RMin, opt.RMax)
	case !(w > 0) || math.IsInf(w, 0):
		return nil, fmt.Errorf("randoms: buffer width %v Mpc/h, expected > 0", w)
	}
	nside := opt.Nside
	if nside == 0 {
		nside = DefaultNside
	}
	g, err := edge.NewGrid(fp, nside)
	if err != nil {
		return nil, fmt.Errorf("randoms: %w", err)
	}
	cls, err := classify(g)
	if err != nil {
		return nil, err
	}
	// F as a grid of its own, for its boundary.
	fg := &edge.Grid{Nside: nside, SubNside: nside, Exact: true, Max: make([]float32, len(cls)), State: make([]edge.State, len(cls))}
	for p, c := range cls {
		if c != clsOutside {
			fg.State[p], fg.Max[p] = edge.Full, 1
		}
	}
	fb := edge.NewBoundary(fg)
	rho := healpix.MaxPixRad(nside)
	tol := rho / 4
	rLo, rHi := math.Max(0, opt.RMin-w), opt.RMax+w
	// θ_max(r): the largest angle from F at distance r still within W.
	thetaMax := func(r float64) float64 {
		if r <= w {
			return math.Pi
		}
		return math.Asin(w / r)
	}
	pixVol := healpix.PixelArea(nside) / 3 // × (b³ − a³) gives a pixel's volume
	npix := len(cls)
	nChunks := (npix + fillChunk - 1) / fillChunk
	type part struct {
		x, y, z []float64
		k       []Kind
	}
	parts := make([]part, nChunks)
	parallel.For(npix, fillChunk, func(lo, hi int) {
		rng := Stream(seed, uint64(lo/fillChunk))
		pois := distuv.Poisson{Src: rng}
		var pt part
		for p := lo; p < hi; p++ {
			c := cls[p]
			top := rHi
			if c == clsOutside {
				// Directions of this pixel are at least θ_p − ρ − (search
				// error) from F; farther than that, no r qualifies.
				v := healpix.Pix2VecNest(nside, int64(p))
				th := fb.AngleWithin(v, tol, thetaMax(rLo)+3*rho)
				th -= 2*rho + math.Sqrt2*tol
				switch {
				case math.IsInf(th, 1):
					top = math.Min(rHi, w)
				case th > 0 && th < math.Pi/2:
					top = math.Min(rHi, w/math.Sin(th))
				case th >= math.Pi/2:
					top = math.Min(rHi, w)
				}
			}
			if !(top > rLo) {
				continue
			}
			lo3, top3 := rLo*rLo*rLo, top*top*top
			pois.Lambda = opt.Density * pixVol * (top3 - lo3)
			n := int(pois.Rand())
			for range n {
				phi, zc := uniformInPixel(rng, nside, int64(p))
				r := math.Cbrt(lo3 + rng.Float64()*(top3-lo3))
				k, ok := fillKind(fp, fb, cls, nside, p, phi, zc, r, opt.RMin, opt.RMax, tol, thetaMax)
				if !ok {
					continue
				}
				s := math.Sqrt((1 - zc) * (1 + zc))
				sp, cp := math.Sincos(phi)
				pt.x = append(pt.x, r*s*cp)
				pt.y = append(pt.y, r*s*sp)
				pt.z = append(pt.z, r*zc)
				pt.k = append(pt.k, k)
			}
		}
		parts[lo/fillChunk] = pt
	})
	f := &Fill{Mass: 1 / opt.Density}
	for _, pt := range parts {
		f.X = append(f.X, pt.x...)
		f.Y = append(f.Y, pt.y...)
		f.Z = append(f.Z, pt.z...)
		f.Kind = append(f.Kind, pt.k...)
	}
	return f, nil
}

// Pixel classes for the fill.
const (
	clsFoot    uint8 = iota // some completeness above 0, not clsEdge or clsNear
	clsEdge                 // some completeness above 0, an outside neighbour
	clsNear                 // some completeness above 0, a clsEdge neighbour
	clsHole                 // zero, enclosed
	clsOutside              // zero, in the largest zero component
)

// classify labels the pixels of g (see FillParticles).
func classify(g *edge.Grid) ([]uint8, error) {
	n := len(g.State)
	comp := make([]int32, n)
	for i := range comp {
		comp[i] = -1
	}
	var sizes []int
	var stack []int64
	for p := range n {
		if g.State[p] != edge.Empty || comp[p] >= 0 {
			continue
		}
		id := int32(len(sizes))
		size := 0
		comp[p] = id
		stack = append(stack[:0], int64(p))
		for len(stack) > 0 {
			q := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			size++
			for _, nb := range healpix.Neighbours(g.Nside, q, true) {
				if nb >= 0 && g.State[nb] == edge.Empty && comp[nb] < 0 {
					comp[nb] = id
					stack = append(stack, nb)
				}
			}
		}
		sizes = append(sizes, size)
	}
	if len(sizes) == 0 && n > 0 && g.State[0] == edge.Empty {
		return nil, errors.New("randoms: the footprint is empty on the grid")
	}
	outside := int32(-1)
	for id, s := range sizes {
		if outside < 0 || s > sizes[outside] {
			outside = int32(id)
		}
	}
	cls := make([]uint8, n)
	for p := range n {
		switch {
		case comp[p] == outside && outside >= 0:
			cls[p] = clsOutside
		case comp[p] >= 0:
			cls[p] = clsHole
		}
	}
	covered := false
	for p := range n {
		if g.State[p] == edge.Empty {
			continue
		}
		covered = true
		for _, nb := range healpix.Neighbours(g.Nside, int64(p), true) {
			if nb >= 0 && cls[nb] == clsOutside {
				cls[p] = clsEdge
				break
			}
		}
	}
	if !covered {
		return nil, errors.New("randoms: the footprint is empty on the grid")
	}
	for p := range n {
		if g.State[p] == edge.Empty || cls[p] != clsFoot {
			continue
		}
		for _, nb := range healpix.Neighbours(g.Nside, int64(p), true) {
			if nb >= 0 && cls[nb] == clsEdge {
				cls[p] = clsNear
				break
			}
		}
	}
	return cls, nil
}

// fillKind applies the rules of FillParticles to the point at longitude
// phi, z = sin Dec and distance r drawn in pixel p, and reports its kind
// and whether it is kept.
func fillKind(fp footprint.Footprint, fb *edge.Boundary, cls []uint8, nside, p int, phi, zc, r, rMin, rMax, tol float64, thetaMax func(float64) float64) (Kind, bool) {
	inRange := r >= rMin && r <= rMax
	c := cls[p]
	gapOK := c == clsEdge || c == clsNear // a zero gap here is next to the outside
	var comp float64
	if inRange || gapOK {
		ra := phi * (180 / math.Pi)
		if ra >= 360 {
			ra = 0
		}
		comp = fp.Completeness(ra, math.Asin(zc)*(180/math.Pi))
	}
	if inRange && comp > 0 {
		return 0, false // inside the surveyed volume
	}
	if gapOK && comp == 0 {
		// A zero gap of a footprint pixel at the outer edge: it lies within
		// two pixels of the footprint.
		if inRange {
			return AngularBuffer, true
		}
		return RadialBuffer, true
	}
	if c == clsOutside {
		// Within the angular buffer at r?
		s := math.Sqrt((1 - zc) * (1 + zc))
		v := [3]float64{s * math.Cos(phi), s * math.Sin(phi), zc}
		lim := thetaMax(r)
		if fb.AngleWithin(v, tol, lim) > lim {
			return 0, false
		}
	}
	switch {
	case !inRange:
		return RadialBuffer, true
	case c == clsOutside:
		return AngularBuffer, true
	}
	return Hole, true
}

// Src check: *rand.Rand is a rand.Source for distuv.
var _ rand.Source = (*rand.Rand)(nil)
