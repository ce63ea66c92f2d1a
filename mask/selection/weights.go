package selection

import (
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"
)

// WeightError reports the first galaxy Weights could not weight: its index
// in the input slices, the offending quantity and value.
type WeightError struct {
	Index    int     // 0-based index of the galaxy
	Quantity string  // "redshift", "completeness" or "user weight"
	Value    float64 // the offending value
	Msg      string  // what was expected
}

// Error returns the message "selection: galaxy INDEX: QUANTITY VALUE: MSG".
func (e *WeightError) Error() string {
	return fmt.Sprintf("selection: galaxy %d: %s %v: %s", e.Index, e.Quantity, e.Value, e.Msg)
}

// weightChunk is the number of galaxies a goroutine of Weights takes at a
// time.
const weightChunk = 1 << 14

// Weights sets dst[i] to the mass weight of galaxy i,
//
//	w_i = u_i / (c_i n̄(z_i)),
//
// in (Mpc/h)³, where c_i = completeness[i] (1 when completeness is nil),
// u_i = userWeight[i] (1 when userWeight is nil) and n̄ = nbar.At. With
// these weights Σ_i w_i estimates the comoving volume of the survey over
// its geometric footprint, so the mean weighted density is 1: a galaxy in
// a region of completeness c stands for 1/c galaxies, and n̄ is the true
// density because it was estimated over the effective solid angle (and,
// exactly, Σ c_i w_i = Σ_bins V_bin = nbar.TotalVolume() when n̄ comes
// from the same galaxies unsmoothed and u = 1).
//
// Galaxies with a redshift outside the bins or in a bin with n̄ = 0, a
// completeness outside (0, 1] or a user weight that is negative or not
// finite get NaN, and Weights returns a *WeightError for the first of them.
// Large inputs are split over GOMAXPROCS goroutines; each weight is
// computed independently, so results do not depend on the thread count.
// It panics if the non-nil slices' lengths differ from len(z).
func Weights(dst, z, completeness, userWeight []float64, nbar *NBar) error {
	n := len(z)
	if len(dst) != n || (completeness != nil && len(completeness) != n) || (userWeight != nil && len(userWeight) != n) {
		panic("selection: Weights: slice lengths differ")
	}
	// Equal-width bins (EstimateNZ's) are found by arithmetic.
	e := nbar.Edges
	nb := len(e) - 1
	lo, width := e[0], (e[nb]-e[0])/float64(nb)
	uniform := true
	for i := 0; i <= nb && uniform; i++ {
		uniform = math.Abs(e[i]-(lo+width*float64(i))) <= 1e-12*math.Max(1, e[nb])
	}
	body := func(a, b int) *WeightError {
		for i := a; i < b; i++ {
			zi := z[i]
			k := -1
			if uniform && zi >= e[0] && zi <= e[nb] {
				k = min(int((zi-lo)/width), nb-1)
				if zi < e[k] {
					k--
				} else if k+1 < nb && zi >= e[k+1] {
					k++
				}
			} else if !uniform {
				k = nbar.Bin(zi)
			}
			var werr *WeightError
			switch {
			case k < 0:
				werr = &WeightError{i, "redshift", zi, fmt.Sprintf("outside the n(z) range [%v, %v]", e[0], e[nb])}
			case !(nbar.Density[k] > 0):
				werr = &WeightError{i, "redshift", zi, "n(z) is 0 in its bin"}
			}
			c, u := 1.0, 1.0
			if werr == nil && completeness != nil {
				if c = completeness[i]; !(c > 0 && c <= 1) {
					werr = &WeightError{i, "completeness", c, "expected a value in (0, 1]"}
				}
			}
			if werr == nil && userWeight != nil {
				if u = userWeight[i]; !(u >= 0) || math.IsInf(u, 0) {
					werr = &WeightError{i, "user weight", u, "expected a finite value ≥ 0"}
				}
			}
			if werr != nil {
				dst[i] = math.NaN()
				return werr
			}
			dst[i] = u / (c * nbar.Density[k])
		}
		return nil
	}
	chunks := (n + weightChunk - 1) / weightChunk
	workers := min(runtime.GOMAXPROCS(0), chunks)
	errs := make([]*WeightError, chunks)
	run := func(c int) {
		a, b := c*weightChunk, min((c+1)*weightChunk, n)
		if err := body(a, b); err != nil {
			errs[c] = err
			// Keep going so that every bad entry gets NaN.
			for i := err.Index + 1; i < b; i++ {
				body(i, i+1)
			}
		}
	}
	if workers <= 1 {
		for c := 0; c < chunks; c++ {
			run(c)
		}
	} else {
		var next atomic.Int64
		var wg sync.WaitGroup
		for w := 0; w < workers; w++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for {
					c := int(next.Add(1) - 1)
					if c >= chunks {
						return
					}
					run(c)
				}
			}()
		}
		wg.Wait()
	}
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}
