package randoms

import (
	"errors"
	"math"
	"math/rand/v2"

	"github.com/filigree-survey/filigree/mask/edge"
	"github.com/filigree-survey/filigree/mask/healpix"
)

// skyTable is the angular envelope: the pixels with a positive envelope
// value, their values, and Walker's alias table over them (Walker 1977;
// the construction of Vose 1991) for O(1) draws.
type skyTable struct {
	pix   []int64
	w     []float64
	prob  []float64
	alias []int32
}

// build fills the table from grid g; with dilate, each pixel's envelope is
// the largest Max over it and its neighbours.
func (t *skyTable) build(g *edge.Grid, dilate bool) error {
	for p := range g.Max {
		w := float64(g.Max[p])
		if dilate {
			for _, q := range healpix.Neighbours(g.Nside, int64(p), true) {
				if q >= 0 {
					w = max(w, float64(g.Max[q]))
				}
			}
		}
		if w > 0 {
			t.pix = append(t.pix, int64(p))
			t.w = append(t.w, w)
		}
	}
	if len(t.pix) == 0 {
		return errors.New("randoms: the footprint is empty on the grid")
	}
	if len(t.pix) > math.MaxInt32 {
		return errors.New("randoms: too many pixels")
	}
	// Vose's alias construction.
	n := len(t.w)
	sum := 0.0
	for _, w := range t.w {
		sum += w
	}
	t.prob = make([]float64, n)
	t.alias = make([]int32, n)
	small, large := make([]int32, 0, n), make([]int32, 0, n)
	scaled := make([]float64, n)
	for i, w := range t.w {
		scaled[i] = w * float64(n) / sum
		if scaled[i] < 1 {
			small = append(small, int32(i))
		} else {
			large = append(large, int32(i))
		}
	}
	for len(small) > 0 && len(large) > 0 {
		l := small[len(small)-1]
		small = small[:len(small)-1]
		g := large[len(large)-1]
		t.prob[l] = scaled[l]
		t.alias[l] = g
		scaled[g] += scaled[l] - 1
		if scaled[g] < 1 {
			large = large[:len(large)-1]
			small = append(small, g)
		}
	}
	for _, i := range large {
		t.prob[i] = 1
		t.alias[i] = i
	}
	for _, i := range small { // rounding leftovers
		t.prob[i] = 1
		t.alias[i] = i
	}
	return nil
}

// pick returns the index of a pixel drawn with probability ∝ w.
func (t *skyTable) pick(rng *rand.Rand) int {
	i := rng.IntN(len(t.prob))
	if rng.Float64() < t.prob[i] {
		return i
	}
	return int(t.alias[i])
}
