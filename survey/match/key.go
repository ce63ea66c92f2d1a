package match

import (
	"cmp"
	"slices"
	"sort"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// KeyValue is the type of the values Key compares: integers or strings,
// for which equality is exact (no floating-point keys, whose NaN and −0
// make equality ambiguous).
type KeyValue interface{ ~int64 | ~string }

// Key matches left and right rows whose key values are equal. A row whose
// null flag is set (leftNull or rightNull, either of which may be nil for
// none) never matches. Without all, each left row's counterpart is the
// lowest right row with its key; with all, every such right row, in
// increasing order. Count holds the number of equal right keys per left
// row and Sep is nil. It takes O((n + m) log m) time: the right rows are
// sorted by key once and each left key is found by binary search. It
// returns an error for a catalogue of 2^31 rows or more and panics if a
// null mask's length differs from its keys'.
func Key[K KeyValue](left, right []K, leftNull, rightNull []bool, all bool) (*Result, error) {
	if (leftNull != nil && len(leftNull) != len(left)) || (rightNull != nil && len(rightNull) != len(right)) {
		panic("match: Key: null mask length differs from keys")
	}
	if err := checkLen(len(left), len(right)); err != nil {
		return nil, err
	}
	order := make([]int32, 0, len(right))
	for j := range right {
		if rightNull == nil || !rightNull[j] {
			order = append(order, int32(j))
		}
	}
	// Stable, so that equal keys stay in increasing right row.
	slices.SortStableFunc(order, func(a, b int32) int { return cmp.Compare(right[a], right[b]) })
	count := make([]int32, len(left))
	first := make([]int32, len(left)) // position in order of the first equal key
	parallel.For(len(left), chunk, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			if leftNull != nil && leftNull[i] {
				continue
			}
			k := left[i]
			a := sort.Search(len(order), func(p int) bool { return right[order[p]] >= k })
			b := a
			for b < len(order) && right[order[b]] == k {
				b++
			}
			first[i], count[i] = int32(a), int32(b-a)
		}
	})
	total := 0
	for _, c := range count {
		if all {
			total += int(c)
		} else if c > 0 {
			total++
		}
	}
	r := &Result{Left: make([]int32, 0, total), Right: make([]int32, 0, total), Count: count}
	for i, c := range count {
		if c == 0 {
			continue
		}
		if !all {
			c = 1
		}
		for p := first[i]; p < first[i]+c; p++ {
			r.Left = append(r.Left, int32(i))
			r.Right = append(r.Right, order[p])
		}
	}
	return r, nil
}
