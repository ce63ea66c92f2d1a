package tess

import (
	"runtime"
	"slices"
	"testing"
)

// TestParallelRounds checks the rounds split between two workers
// (insertParallel) and the renumbering between rounds (reorder) against
// one-by-one insertion without renumbering: the Delaunay tessellation of
// the symbolically perturbed points is unique, so the sorted tetrahedra
// must be identical, for points in general position and for a lattice,
// where nearly every insphere test is an exact tie. The records, and so the
// numbering, must also be the same with one thread as with several.
func TestParallelRounds(t *testing.T) {
	lattice := make([]float64, 0, 3*40*40*40)
	for i := 0; i < 40; i++ {
		for j := 0; j < 40; j++ {
			for k := 0; k < 40; k++ {
				lattice = append(lattice, float64(i), float64(j), float64(k))
			}
		}
	}
	for _, tc := range []struct {
		name string
		xyz  []float64
	}{
		{"uniform", randomPoints(80000, 3, 100)},
		{"clustered", clusteredPoints(80000, 4)},
		{"lattice", lattice},
	} {
		rep, _ := dedup(tc.xyz)
		build := func(mode buildMode) ([][4]int32, *builder) {
			b, err := triangulateMode(tc.xyz, rep, 9, mode)
			if err != nil {
				t.Fatalf("%s: %v", tc.name, err)
			}
			st := *b
			tets, _, _ := b.compact()
			return sortedTets(tets), &st
		}
		want, _ := build(buildMode{noReorder: true, noParallel: true})
		got, b := build(buildMode{})
		// The numbering too must not depend on the threads.
		procs := runtime.GOMAXPROCS(1)
		b1, err1 := triangulateMode(tc.xyz, rep, 9, buildMode{})
		runtime.GOMAXPROCS(procs)
		b2, err2 := triangulateMode(tc.xyz, rep, 9, buildMode{})
		if err1 != nil || err2 != nil {
			t.Fatalf("%s: %v, %v", tc.name, err1, err2)
		}
		if !slices.Equal(b1.r, b2.r) {
			t.Errorf("%s: the records differ between GOMAXPROCS 1 and %d", tc.name, procs)
		}
		if b.nParallel == 0 {
			t.Errorf("%s: no round was split between workers", tc.name)
		}
		t.Logf("%s: %d points in split rounds, %d deferred", tc.name, b.nParallel, b.nDeferred)
		if !slices.Equal(got, want) {
			t.Errorf("%s: %d tetrahedra with two workers, %d one by one, or the same number but different ones", tc.name, len(got), len(want))
		}
	}
}
