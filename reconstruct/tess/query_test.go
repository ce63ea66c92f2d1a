package tess

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestQueries checks the vertex, location and volume queries on random
// points against brute force over the tetrahedron list (definitions).
func TestQueries(t *testing.T) {
	xyz := randomPoints(3000, 4, 10)
	// add duplicates of the first points
	xyz = append(xyz, xyz[:30]...)
	tt, err := New(xyz, Options{Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	if tt.Duplicates() != 10 {
		t.Fatalf("Duplicates() = %d, want 10", tt.Duplicates())
	}
	tets := tt.Tets()
	incident := make([][]int32, tt.NumPoints())
	for k := 0; k < tt.NumTets(); k++ {
		for _, v := range tets[4*k : 4*k+4] {
			incident[v] = append(incident[v], int32(k))
		}
	}
	var dst, nb []int32
	for v := int32(0); v < int32(tt.NumPoints()); v++ {
		r := tt.Rep()[v]
		dst = tt.VertexTets(v, dst)
		slices.Sort(dst)
		if !slices.Equal(dst, incident[r]) {
			t.Fatalf("VertexTets(%d) = %v, want %v", v, dst, incident[r])
		}
		var want []int32
		for _, k := range incident[r] {
			for _, w := range tets[4*k : 4*k+4] {
				if w != r && !slices.Contains(want, w) {
					want = append(want, w)
				}
			}
		}
		nb = tt.VertexNeighbours(v, nb)
		slices.Sort(nb)
		slices.Sort(want)
		if !slices.Equal(nb, want) {
			t.Fatalf("VertexNeighbours(%d) = %v, want %v", v, nb, want)
		}
	}

	// Locate: the returned tetrahedron contains the point (exact
	// orientation of the four sub-tetrahedra ≥ 0).
	rng := rand.New(rand.NewPCG(1, 1))
	pt := func(v int32) [3]float64 { return [3]float64{xyz[3*v], xyz[3*v+1], xyz[3*v+2]} }
	for it := 0; it < 500; it++ {
		p := [3]float64{10 * rng.Float64(), 10 * rng.Float64(), 10 * rng.Float64()}
		k, err := tt.Locate(p)
		if errors.Is(err, ErrOutside) {
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		v := tets[4*k : 4*k+4]
		q := [4][3]float64{pt(v[0]), pt(v[1]), pt(v[2]), pt(v[3])}
		for i := 0; i < 4; i++ {
			r := q
			r[i] = p
			if Orient3D(r[0], r[1], r[2], r[3]) < 0 {
				t.Fatalf("Locate(%v) = %d, which does not contain it", p, k)
			}
		}
	}
	if _, err := tt.Locate([3]float64{-1, 5, 5}); !errors.Is(err, ErrOutside) {
		t.Errorf("Locate outside the hull: error %v, want ErrOutside", err)
	}

	// VoronoiVolumes: brute-force sums; independent of the thread count.
	vol := tt.Volumes(nil)
	want := make([]float64, tt.NumPoints())
	for k, v := range tets {
		want[v] += vol[k/4]
	}
	for i, r := range tt.Rep() {
		want[i] = want[r]
	}
	for _, thr := range []int{1, 2, 3} {
		tt.thr = thr
		got := tt.VoronoiVolumes(nil)
		for i := range got {
			if got[i] != want[i] {
				t.Fatalf("threads %d: VoronoiVolumes[%d] = %v, want %v", thr, i, got[i], want[i])
			}
		}
	}
	// Every tetrahedron is counted by its four corners.
	sumV, sumT := 0.0, 0.0
	for i, r := range tt.Rep() {
		if int(r) == i {
			sumV += want[i]
		}
	}
	for _, v := range vol {
		sumT += v
	}
	if math.Abs(sumV-4*sumT) > 1e-9*sumV {
		t.Errorf("Voronoi volumes sum %v, want 4 × %v", sumV, sumT)
	}
	// Hull faces: their count is 2V−4 for a triangulated sphere with V
	// vertices (Euler), and each is a face of exactly one tetrahedron.
	hull := tt.HullFaces()
	var hv []int32
	for _, v := range hull {
		if !slices.Contains(hv, v) {
			hv = append(hv, v)
		}
	}
	if len(hull)/3 != 2*len(hv)-4 {
		t.Errorf("%d hull faces on %d hull vertices, Euler wants %d", len(hull)/3, len(hv), 2*len(hv)-4)
	}
	missing := 0
	for _, u := range tt.Neighbours() {
		if u < 0 {
			missing++
		}
	}
	if missing != len(hull)/3 {
		t.Errorf("%d faces without neighbour, %d hull faces", missing, len(hull)/3)
	}
}

// FuzzTessellate builds small point sets on a small integer grid from the
// fuzz bytes — so with many duplicates, coplanar and co-spherical subsets —
// and checks that the result is a valid Delaunay tessellation (exact
// predicates, see checkValid) or the typed degenerate error.
func FuzzTessellate(f *testing.F) {
	f.Add([]byte{0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1, 1, 1, 1})
	f.Add([]byte{0, 0, 0, 1, 1, 1, 2, 2, 2, 3, 3, 3})
	f.Add([]byte{0, 0, 0, 3, 0, 0, 0, 3, 0, 3, 3, 0, 0, 0, 3, 3, 0, 3, 0, 3, 3, 3, 3, 3, 1, 1, 1, 2, 2, 2})
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) > 3*400 {
			data = data[:3*400]
		}
		xyz := make([]float64, 0, len(data))
		for _, c := range data[:len(data)/3*3] {
			xyz = append(xyz, float64(c%8))
		}
		tt, err := New(xyz, Options{})
		if err != nil {
			if !errors.Is(err, ErrCoplanar) {
				t.Fatalf("unexpected error %v", err)
			}
			return
		}
		checkValid(t, tt, xyz)
	})
}
