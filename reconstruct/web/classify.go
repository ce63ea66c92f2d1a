package web

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// Web codes: the number of tidal eigenvalues above the threshold, i.e. of
// axes along which matter collapses (Hahn et al. 2007).
const (
	Void     uint8 = 0
	Sheet    uint8 = 1
	Filament uint8 = 2
	Knot     uint8 = 3
)

// code returns the number of l1, l2, l3 strictly above th. A NaN
// eigenvalue counts as not above.
func code(l1, l2, l3, th float64) uint8 {
	var c uint8
	if l1 > th {
		c++
	}
	if l2 > th {
		c++
	}
	if l3 > th {
		c++
	}
	return c
}

// Classify returns the web code of every cell (len G.Len()): the number of
// the eigenvalues L1, L2, L3 strictly greater than threshold (Void 0, Sheet
// 1, Filament 2, Knot 3). The comparison is made in float64 with the
// float32 eigenvalue widened exactly; a NaN threshold or eigenvalue
// counts as not above. Parallel; independent of GOMAXPROCS.
func (f *Fields) Classify(threshold float64) []uint8 {
	out := make([]uint8, len(f.L1))
	parallel.For(len(out), cellChunk, func(lo, hi int) {
		for c := lo; c < hi; c++ {
			out[c] = code(float64(f.L1[c]), float64(f.L2[c]), float64(f.L3[c]), threshold)
		}
	})
	return out
}

// sampleChunk is the number of positions per parallel chunk of Sample.
const sampleChunk = 1 << 13

// Sample interpolates Delta and L1, L2, L3 trilinearly (periodic, values
// at cell centres: the cloud-in-cell kernel of grid.InterpolateTrilinear)
// at the n positions pos (flat x, y, z triples, Mpc/h, len 3n), wrapping
// them into the box, and returns them with the web code of each position.
//
// Rule for the code: it counts the interpolated eigenvalues above
// threshold, exactly as Classify does per cell. Since each eigenvalue is
// interpolated with the same non-negative weights and L1 ≥ L2 ≥ L3 holds
// at every corner, the interpolated values keep that order; they are the
// weighted mean of the corner eigenvalues, not the eigenvalues of the
// interpolated tensor (which the fields do not keep). At a cell centre the
// code equals Classify's.
//
// f must hold fields of len G.Len() (as Tidal returns). It panics if
// len(pos) is not a multiple of 3 or a position is not finite. Parallel in
// fixed chunks; independent of GOMAXPROCS.
func (f *Fields) Sample(pos []float64, threshold float64) (delta, l1, l2, l3 []float64, codes []uint8) {
	if len(pos)%3 != 0 {
		panic(fmt.Sprintf("web: Sample got %d coordinates, not a multiple of 3", len(pos)))
	}
	n := len(pos) / 3
	delta, l1, l2, l3 = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	codes = make([]uint8, n)
	g := f.G
	N := g.N
	invH := 1 / g.H()
	parallel.For(n, sampleChunk, func(lo, hi int) {
		for p := lo; p < hi; p++ {
			i0, dx := cellWeight(pos[3*p], g.Origin[0], invH, N)
			j0, dy := cellWeight(pos[3*p+1], g.Origin[1], invH, N)
			k0, dz := cellWeight(pos[3*p+2], g.Origin[2], invH, N)
			i1, j1, k1 := wrapNext(i0, N), wrapNext(j0, N), wrapNext(k0, N)
			// The eight surrounding cell centres and their weights.
			var idx [8]int
			var w [8]float64
			wx := [2]float64{1 - dx, dx}
			wy := [2]float64{1 - dy, dy}
			for a, ii := range [2]int{i0, i1} {
				for b, jj := range [2]int{j0, j1} {
					row := (ii*N + jj) * N
					q := 4*a + 2*b
					idx[q], w[q] = row+k0, wx[a]*wy[b]*(1-dz)
					idx[q+1], w[q+1] = row+k1, wx[a]*wy[b]*dz
				}
			}
			var sd, s1, s2, s3 float64
			for m := range 8 {
				c, wm := idx[m], w[m]
				sd += wm * float64(f.Delta[c])
				s1 += wm * float64(f.L1[c])
				s2 += wm * float64(f.L2[c])
				s3 += wm * float64(f.L3[c])
			}
			delta[p], l1[p], l2[p], l3[p] = sd, s1, s2, s3
			codes[p] = code(s1, s2, s3, threshold)
		}
	})
	return delta, l1, l2, l3, codes
}

// cellWeight returns, for coordinate x on one axis, the lower cell i0 ∈
// [0, n) of the two cell centres bracketing x periodically and the weight
// d ∈ [0, 1) of the upper one (i0+1 mod n). Cell i's centre is at
// origin + (i+½)/invH. It panics on a non-finite x or one more than
// 2⁵² cells away.
func cellWeight(x, origin, invH float64, n int) (int, float64) {
	u := (x-origin)*invH - 0.5
	f := math.Floor(u)
	if math.IsNaN(f) || math.IsInf(f, 0) || math.Abs(f) > 1<<52 {
		panic(fmt.Sprintf("web: position %g is not finite (or beyond 2⁵² cells)", x))
	}
	d := u - f
	i := int(f)
	if i < 0 || i >= n {
		i %= n
		if i < 0 {
			i += n
		}
	}
	if d >= 1 { // u − floor(u) rounds up to 1 for tiny negative u
		d = 0
		i = wrapNext(i, n)
	}
	return i, d
}

// wrapNext returns (i+1) mod n for i ∈ [0, n).
func wrapNext(i, n int) int {
	if i+1 == n {
		return 0
	}
	return i + 1
}

// Fractions returns, for web codes 0–3, the volume fraction (share of the
// counted cells) and the mass fraction (share of Σ(1+δ) over the counted
// cells, with δ = weight[c] and 1+δ clamped to 0 where it is negative or NaN) of cells with each
// code. weight is a density contrast per cell; filigree passes Fields.Delta,
// the smoothed δ_R the codes were computed from, so that mass and labels
// refer to the same scale (a smoothed non-negative density stays
// non-negative; the clamp only matters for fields such as Gaussian ones
// with δ < −1). weight nil means uniform density (mass = volume fraction).
// mask nil counts every cell, else only cells with mask[c] true. Codes
// above 3 are not counted in any class but do count in the totals. With no
// counted cell (or zero total mass) the fractions are NaN.
//
// It panics if weight or mask is non-nil and not of len(code). Sums are
// made in fixed chunks and added in order, so the result does not depend
// on GOMAXPROCS.
func Fractions(code []uint8, weight []float32, mask []bool) (volume, mass [4]float64) {
	if weight != nil && len(weight) != len(code) {
		panic(fmt.Sprintf("web: Fractions weight length %d, want %d", len(weight), len(code)))
	}
	if mask != nil && len(mask) != len(code) {
		panic(fmt.Sprintf("web: Fractions mask length %d, want %d", len(mask), len(code)))
	}
	nc := (len(code) + cellChunk - 1) / cellChunk
	// Per chunk: counts and masses for codes 0–3 and the totals (index 4).
	counts := make([][5]int, nc)
	masses := make([][5]float64, nc)
	parallel.For(nc, 1, func(lo, hi int) {
		for ch := lo; ch < hi; ch++ {
			var cnt [5]int
			var ms [5]float64
			for c := ch * cellChunk; c < min(len(code), (ch+1)*cellChunk); c++ {
				if mask != nil && !mask[c] {
					continue
				}
				m := 1.0
				if weight != nil {
					if m = 1 + float64(weight[c]); !(m > 0) {
						m = 0 // clamp 1+δ < 0, and NaN
					}
				}
				cnt[4]++
				ms[4] += m
				if k := code[c]; k < 4 {
					cnt[k]++
					ms[k] += m
				}
			}
			counts[ch], masses[ch] = cnt, ms
		}
	})
	var cnt [5]int
	var ms [5]float64
	for ch := range counts {
		for k := range 5 {
			cnt[k] += counts[ch][k]
			ms[k] += masses[ch][k]
		}
	}
	for k := range 4 {
		volume[k] = math.NaN()
		mass[k] = math.NaN()
		if cnt[4] > 0 {
			volume[k] = float64(cnt[k]) / float64(cnt[4])
		}
		if ms[4] > 0 {
			mass[k] = ms[k] / ms[4]
		}
	}
	return volume, mass
}
