package grid

import (
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// DistanceToOutside returns, for every cell of the (non-periodic) grid g,
// the Euclidean distance in Mpc/h from its centre to the centre of the
// nearest cell with inside[c] false (0 for such cells; +Inf when every cell
// is inside). It is the exact squared Euclidean distance transform of
// Felzenszwalb & Huttenlocher (2012, Theory of Computing 8, 415), done
// separably along x, y and z with the lower envelope of parabolas, in
// O(N³), parallel over lines and independent of the number of threads.
func DistanceToOutside(inside []bool, g Geometry) []float64 {
	n := g.N
	if len(inside) != g.Len() {
		panic("grid: DistanceToOutside length mismatch")
	}
	inf := math.Inf(1)
	d := make([]float64, g.Len())
	for i, in := range inside {
		if !in {
			d[i] = 0
		} else {
			d[i] = inf
		}
	}
	// One pass per axis; stride and line starts for each.
	pass := func(stride int, starts func(line int) int) {
		parallel.For(n*n, 64, func(lo, hi int) {
			f := make([]float64, n)
			out := make([]float64, n)
			v := make([]int, n)
			z := make([]float64, n+1)
			for line := lo; line < hi; line++ {
				s := starts(line)
				for k := 0; k < n; k++ {
					f[k] = d[s+k*stride]
				}
				edt1(out, f, v, z)
				for k := 0; k < n; k++ {
					d[s+k*stride] = out[k]
				}
			}
		})
	}
	pass(1, func(l int) int { return l * n })           // along z
	pass(n, func(l int) int { return (l/n)*n*n + l%n }) // along y
	pass(n*n, func(l int) int { return (l/n)*n + l%n }) // along x
	h := g.H()
	parallel.For(len(d), 1<<16, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			d[i] = math.Sqrt(d[i]) * h
		}
	})
	return d
}

// edt1 is the one-dimensional squared distance transform of f (cell
// units): out[q] = min_p (q − p)² + f[p], by the lower envelope of the
// parabolas rooted at the finite f[p] (Felzenszwalb & Huttenlocher 2012,
// algorithm DT(f)). v and z are scratch of lengths n and n+1.
func edt1(out, f []float64, v []int, z []float64) {
	n := len(f)
	k := -1
	for q := 0; q < n; q++ {
		if math.IsInf(f[q], 1) {
			continue
		}
		fq := f[q] + float64(q*q)
		for k >= 0 {
			p := v[k]
			s := (fq - (f[p] + float64(p*p))) / float64(2*(q-p))
			if s <= z[k] {
				k--
				continue
			}
			k++
			v[k], z[k] = q, s
			break
		}
		if k < 0 {
			k = 0
			v[0], z[0] = q, math.Inf(-1)
		}
		z[k+1] = math.Inf(1)
	}
	if k < 0 {
		for q := range out {
			out[q] = math.Inf(1)
		}
		return
	}
	j := 0
	for q := 0; q < n; q++ {
		for z[j+1] < float64(q) {
			j++
		}
		p := v[j]
		out[q] = float64((q-p)*(q-p)) + f[p]
	}
}
