// Package randoms draws random catalogues that follow a survey's footprint,
// completeness and radial selection, and fill particles for the holes of a
// survey and a buffer around it.
//
// # Angular sampling
//
// Directions are drawn from the density on the sphere proportional to the
// completeness c(n̂), by rejection against a piecewise-constant envelope on
// a HEALPix grid (an edge.Grid): pixel p is chosen with probability
// proportional to its envelope w_p (all pixels have the same area), a point
// is drawn uniformly within the pixel (uniform in the pixel's square of
// HEALPix face coordinates, mapped by the equal-area HEALPix projection),
// and accepted with probability c/w_p. The accepted points then have density
// ∝ w_p · (c/w_p) = c, whatever the envelope, provided w_p ≥ c everywhere
// in the pixel (the standard rejection argument, von Neumann 1951). For an
// exact grid (a HEALPix map or MOC no finer than the grid's sub-pixels)
// w_p is the pixel's largest completeness and the condition holds exactly;
// otherwise w_p is the largest sampled completeness over the pixel and its
// eight neighbours, which holds unless a feature narrower than the
// sub-pixel spacing is missed. Draws with c > w_p are counted in
// Stats.EnvelopeViolations, so a violation never goes unnoticed.
//
// # Radial sampling
//
// "Following n(z)" is taken to mean following the model behind
// selection.NBar: the comoving number density is constant within each
// redshift bin. A bin is chosen with probability proportional to its count
// (n̄_i V_i), then a comoving distance with density ∝ S_k(r)² in the bin
// (∝ r² when flat: uniform in comoving volume), which is converted to a
// redshift with cosmo.Model.RedshiftsAtComovingDistancesMpch. The bin
// counts are those of the histogram, and within a bin the randoms are
// spread as the constant density n̄_i assumes, so weights computed from
// the same NBar see a uniform random field. (Uniform in z within a bin
// would give the same bin counts but a density that varies across the
// bin.)
//
// # Reproducibility
//
// Output is made in chunks of a fixed size, each drawn from its own PCG
// stream (math/rand/v2) seeded by the seed and the chunk's index, so the
// result depends on the seed only, not on the number of goroutines.
package randoms

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sync/atomic"

	"github.com/filigree-survey/filigree/internal/parallel"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/mask/edge"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/selection"
)

// DefaultNside is the envelope grid's Nside when none is given: 256,
// pixels of 0.23°.
const DefaultNside = 256

// chunk is the number of randoms drawn from one random stream.
const chunk = 1 << 15

// Sampler draws random catalogues for a footprint and radial selection. It
// is safe for concurrent use.
type Sampler struct {
	fp    footprint.Footprint
	nbar  *selection.NBar
	model *cosmo.Model
	grid  *edge.Grid

	sky       skyTable
	binCDF    []float64 // cumulative bin probabilities, last 1
	ok        float64   // Ωk
	dh        float64   // Hubble distance in Mpc/h
	violation atomic.Int64
}

// Stats reports on the draws made by a Sampler so far.
type Stats struct {
	// EnvelopeViolations counts accepted-or-rejected candidates whose
	// completeness exceeded their pixel's envelope; 0 means the angular
	// sampling was exact (see the package documentation).
	EnvelopeViolations int64
}

// NewSampler returns a sampler for footprint fp and radial selection nbar
// under cosmology m, with the envelope on a grid at nside (0 selects
// DefaultNside). nbar may be nil for angular sampling only. It returns an
// error when the footprint is empty, nbar has no galaxies, or nside is
// invalid.
func NewSampler(fp footprint.Footprint, nbar *selection.NBar, m *cosmo.Model, nside int) (*Sampler, error) {
	if nside == 0 {
		nside = DefaultNside
	}
	g, err := edge.NewGrid(fp, nside)
	if err != nil {
		return nil, fmt.Errorf("randoms: %w", err)
	}
	s := &Sampler{fp: fp, nbar: nbar, model: m, grid: g}
	if err := s.sky.build(g, !g.Exact); err != nil {
		return nil, err
	}
	if nbar != nil {
		if m == nil {
			return nil, errors.New("randoms: an n(z) needs a cosmology")
		}
		s.binCDF = make([]float64, len(nbar.Count))
		t := 0.0
		for i, c := range nbar.Count {
			if !(c >= 0) || math.IsInf(c, 0) {
				return nil, fmt.Errorf("randoms: n(z) bin %d has count %v", i, c)
			}
			t += c
			s.binCDF[i] = t
		}
		if !(t > 0) {
			return nil, errors.New("randoms: n(z) holds no galaxies")
		}
		for i := range s.binCDF {
			s.binCDF[i] /= t
		}
		s.binCDF[len(s.binCDF)-1] = 1
		s.ok = m.Params().OmegaK
		s.dh = cosmo.SpeedOfLight / 100
	}
	return s, nil
}

// Grid returns the envelope grid.
func (s *Sampler) Grid() *edge.Grid { return s.grid }

// Stats returns the sampler's statistics.
func (s *Sampler) Stats() Stats { return Stats{EnvelopeViolations: s.violation.Load()} }

// Sample draws n randoms with seed: right ascension and declination in
// degrees and redshift (nil when the sampler has no n(z)). It returns an
// error for n < 0, for a footprint too small to sample (see maxRejections)
// and when the distance-to-redshift conversion fails.
func (s *Sampler) Sample(n int, seed uint64) (ra, dec, z []float64, err error) {
	if n < 0 {
		return nil, nil, nil, fmt.Errorf("randoms: %d randoms requested", n)
	}
	ra, dec = make([]float64, n), make([]float64, n)
	var r []float64
	if s.nbar != nil {
		r = make([]float64, n)
	}
	var failed atomic.Bool
	parallel.For(n, chunk, func(lo, hi int) {
		rng := Stream(seed, uint64(lo/chunk))
		for i := lo; i < hi; i++ {
			var ok bool
			if ra[i], dec[i], ok = s.direction(rng); !ok {
				failed.Store(true)
				return
			}
		}
		if r != nil {
			for i := lo; i < hi; i++ {
				r[i] = s.distance(rng)
			}
		}
	})
	if failed.Load() {
		return nil, nil, nil, errNoArea
	}
	if r == nil {
		return ra, dec, nil, nil
	}
	z = r // converted in place
	if err := s.model.RedshiftsAtComovingDistancesMpch(z, r); err != nil {
		return nil, nil, nil, fmt.Errorf("randoms: %w", err)
	}
	return ra, dec, z, nil
}

// Stream returns the random stream for chunk k of a run with seed: a PCG
// generator (math/rand/v2) whose two state words are SplitMix64 hashes of
// the seed and of k (Steele, Lea & Flood 2014), so that the streams of
// neighbouring chunks start at unrelated points of the generator's cycle.
func Stream(seed, k uint64) *rand.Rand {
	return rand.New(rand.NewPCG(splitMix64(seed^0x6a09e667f3bcc909), splitMix64(k^splitMix64(seed))))
}

// splitMix64 is the output function of SplitMix64 (Steele, Lea & Flood
// 2014): a bijective mixing of the 64 bits of x.
func splitMix64(x uint64) uint64 {
	x += 0x9e3779b97f4a7c15
	x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9
	x = (x ^ (x >> 27)) * 0x94d049bb133111eb
	return x ^ (x >> 31)
}

// Sample draws n randoms following fp and nbar under cosmology m (see
// Sampler), with the envelope grid at DefaultNside.
func Sample(n int, fp footprint.Footprint, nbar *selection.NBar, m *cosmo.Model, seed uint64) (ra, dec, z []float64, err error) {
	s, err := NewSampler(fp, nbar, m, 0)
	if err != nil {
		return nil, nil, nil, err
	}
	return s.Sample(n, seed)
}

// maxRejections bounds the consecutive rejections of one direction. With
// the envelope at most 1/c_min above the completeness of a sampled pixel, a
// real footprint rejects a handful of times; a footprint whose positive
// completeness has (numerically) no area would otherwise loop for ever.
const maxRejections = 1 << 20

// errNoArea is returned by Sample when maxRejections is reached.
var errNoArea = errors.New("randoms: the footprint's completeness is positive on the grid but no direction was accepted in 2^20 draws; its area is too small to sample")

// direction draws one direction with density ∝ completeness; ok is false
// after maxRejections consecutive rejections.
func (s *Sampler) direction(rng *rand.Rand) (ra, dec float64, ok bool) {
	for try := 0; try < maxRejections; try++ {
		k := s.sky.pick(rng)
		p := s.sky.pix[k]
		phi, zc := uniformInPixel(rng, s.grid.Nside, p)
		ra = phi * (180 / math.Pi)
		if ra >= 360 {
			ra = 0
		}
		dec = math.Asin(zc) * (180 / math.Pi)
		c := s.fp.Completeness(ra, dec)
		w := s.sky.w[k]
		if c > w {
			s.violation.Add(1)
		}
		if c >= w || rng.Float64()*w < c {
			return ra, dec, true
		}
	}
	return math.NaN(), math.NaN(), false
}

// distance draws one comoving distance in Mpc/h from the radial model.
func (s *Sampler) distance(rng *rand.Rand) float64 {
	u := rng.Float64()
	i := 0
	for lo, hi := 0, len(s.binCDF)-1; lo < hi; {
		m := (lo + hi) / 2
		if s.binCDF[m] > u {
			hi = m
		} else {
			lo = m + 1
		}
		i = lo
	}
	a, b := s.nbar.DistEdges[i], s.nbar.DistEdges[i+1]
	return shellRadius(rng, a, b, s.ok, s.dh)
}

// shellRadius draws r in [a, b] with density ∝ S_k(r)², S_k the
// transverse comoving distance at comoving distance r for curvature ok and
// Hubble distance dh: r³ uniform, then for ok ≠ 0 rejection with
// probability (S_k(r)/r)² over its largest value on [a, b] (at b when
// open, at a when closed, where S_k/r decreases).
func shellRadius(rng *rand.Rand, a, b, ok, dh float64) float64 {
	a3, b3 := a*a*a, b*b*b
	for {
		r := math.Cbrt(a3 + rng.Float64()*(b3-a3))
		if ok == 0 {
			return r
		}
		f := func(x float64) float64 {
			if x == 0 {
				return 1
			}
			q := math.Sqrt(math.Abs(ok)) * x / dh
			if ok > 0 {
				return math.Sinh(q) / q
			}
			return math.Sin(q) / q
		}
		top := f(b)
		if ok < 0 {
			top = f(a)
		}
		if g := f(r) / top; rng.Float64() < g*g {
			return r
		}
	}
}
