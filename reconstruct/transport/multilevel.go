package transport

import (
	"math"
	"math/rand/v2"
	"slices"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// coarsen draws the coarse level of the multilevel start (Mérigot 2011):
// a random 1/coarseFactor of the points (seeded by Options.Seed and the
// depth, so it is reproducible), each carrying the masses of the fine points
// nearest to it. It returns the coarse positions and masses and the coarse
// owner of every fine point.
func coarsen(y, m []float64, opt Options, depth int) (yc, mc []float64, owner []int32) {
	n := len(m)
	nc := n / coarseFactor
	rng := rand.New(rand.NewPCG(opt.Seed, 0x7472616e73706f72+uint64(depth)))
	perm := make([]int32, n)
	for i := range perm {
		perm[i] = int32(i)
	}
	for i := 0; i < nc; i++ { // partial Fisher–Yates shuffle
		j := i + rng.IntN(n-i)
		perm[i], perm[j] = perm[j], perm[i]
	}
	sel := perm[:nc:nc]
	slices.Sort(sel) // keep the input's memory order on the coarse level
	yc = make([]float64, 3*nc)
	for k, i := range sel {
		copy(yc[3*k:3*k+3], y[3*i:3*i+3])
	}
	owner = nearest(y, yc, opt)
	mc = make([]float64, nc)
	for i, o := range owner {
		mc[o] += m[i]
	}
	return yc, mc, owner
}

// interpolate returns the fine start weights from the coarse solution: the
// weight of the nearest coarse point o extended to first order with the
// gradient 2(y_o − c_o), twice the coarse displacement (see the package
// comment), with minimum images in periodic mode.
func interpolate(y, yc, psiC, centC []float64, owner []int32, opt Options) []float64 {
	n := len(owner)
	psi := make([]float64, n)
	parallel.For(n, chunk, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			o := int(owner[i])
			v := psiC[o]
			for a := 0; a < 3; a++ {
				g := yc[3*o+a] - centC[3*o+a]
				d := y[3*i+a] - yc[3*o+a]
				if opt.Periodic {
					L := opt.Hi[a] - opt.Lo[a]
					g -= L * math.Round(g/L)
					d -= L * math.Round(d/L)
				}
				v += 2 * g * d
			}
			psi[i] = v
		}
	})
	return psi
}

// nearest returns for every point of y the index of the nearest point of yc
// (minimum image in periodic mode; ties go to the lower index), found on a
// uniform bucket grid of about two coarse points per bucket by searching
// rings of buckets outwards until the distance to the unsearched buckets
// exceeds the best distance found.
func nearest(y, yc []float64, opt Options) []int32 {
	n, nc := len(y)/3, len(yc)/3
	vol := 1.0
	var L [3]float64
	for a := 0; a < 3; a++ {
		L[a] = opt.Hi[a] - opt.Lo[a]
		vol *= L[a]
	}
	side := math.Cbrt(2 * vol / float64(nc))
	var nb [3]int
	var h [3]float64
	for a := 0; a < 3; a++ {
		nb[a] = max(1, min(1024, int(L[a]/side)))
		h[a] = L[a] / float64(nb[a])
	}
	bucketOf := func(p []float64) (b [3]int) {
		for a := 0; a < 3; a++ {
			b[a] = min(nb[a]-1, max(0, int((p[a]-opt.Lo[a])/h[a])))
		}
		return b
	}
	nbk := nb[0] * nb[1] * nb[2]
	start := make([]int32, nbk+1)
	bk := make([]int32, nc)
	for j := 0; j < nc; j++ {
		b := bucketOf(yc[3*j : 3*j+3])
		bk[j] = int32((b[0]*nb[1]+b[1])*nb[2] + b[2])
		start[bk[j]+1]++
	}
	for k := 0; k < nbk; k++ {
		start[k+1] += start[k]
	}
	items := make([]int32, nc)
	fill := append([]int32(nil), start[:nbk]...)
	for j := 0; j < nc; j++ {
		items[fill[bk[j]]] = int32(j)
		fill[bk[j]]++
	}
	maxRing := max(nb[0], nb[1], nb[2])

	owner := make([]int32, n)
	parallel.For(n, chunk, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			p := y[3*i : 3*i+3]
			b := bucketOf(p)
			best, bestJ := math.Inf(1), int32(-1)
			for r := 0; r <= maxRing; r++ {
				if r > 0 {
					// Distance from p to the outside of the searched cube.
					bound := math.Inf(1)
					for a := 0; a < 3; a++ {
						f := p[a] - (opt.Lo[a] + float64(b[a])*h[a])
						bound = math.Min(bound, math.Min(f, h[a]-f)+float64(r-1)*h[a])
					}
					if bound > 0 && best <= bound*bound {
						break
					}
				}
				for dx := -r; dx <= r; dx++ {
					bx, okx := cellIndex(b[0]+dx, nb[0], opt.Periodic)
					if !okx {
						continue
					}
					for dy := -r; dy <= r; dy++ {
						by, oky := cellIndex(b[1]+dy, nb[1], opt.Periodic)
						if !oky {
							continue
						}
						for dz := -r; dz <= r; dz++ {
							if max(abs(dx), abs(dy), abs(dz)) != r {
								continue
							}
							bz, okz := cellIndex(b[2]+dz, nb[2], opt.Periodic)
							if !okz {
								continue
							}
							k := (bx*nb[1]+by)*nb[2] + bz
							for _, j := range items[start[k]:start[k+1]] {
								d2 := 0.0
								for a := 0; a < 3; a++ {
									d := yc[3*int(j)+a] - p[a]
									if opt.Periodic {
										d -= L[a] * math.Round(d/L[a])
									}
									d2 += d * d
								}
								if d2 < best || (d2 == best && j < bestJ) {
									best, bestJ = d2, j
								}
							}
						}
					}
				}
			}
			owner[i] = bestJ
		}
	})
	return owner
}

// cellIndex maps a bucket coordinate onto the grid: wrapped in periodic
// mode, reported as outside (false) otherwise.
func cellIndex(c, nb int, periodic bool) (int, bool) {
	if periodic {
		c %= nb
		if c < 0 {
			c += nb
		}
		return c, true
	}
	return c, c >= 0 && c < nb
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}
