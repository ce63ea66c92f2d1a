package tess

import (
	"bufio"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// readReference reads testdata/tess/qhull_reference.txt, written by
// testdata/tess/make_reference.py with scipy 1.10.1 (Qhull 2020.2).
func readReference(t *testing.T) (xyz []float64, tets [][4]int32, hullVol float64) {
	t.Helper()
	f, err := os.Open("../../testdata/tess/qhull_reference.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		fs := strings.Fields(sc.Text())
		if len(fs) == 0 || strings.HasPrefix(fs[0], "#") {
			continue
		}
		switch fs[0] {
		case "p":
			for _, s := range fs[1:4] {
				v, err := strconv.ParseFloat(s, 64)
				if err != nil {
					t.Fatal(err)
				}
				xyz = append(xyz, v)
			}
		case "t":
			var tt [4]int32
			for k, s := range fs[1:5] {
				v, err := strconv.Atoi(s)
				if err != nil {
					t.Fatal(err)
				}
				tt[k] = int32(v)
			}
			tets = append(tets, tt)
		case "hullvolume":
			hullVol, err = strconv.ParseFloat(fs[1], 64)
			if err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return xyz, tets, hullVol
}

func sortedTets(tets []int32) [][4]int32 {
	out := make([][4]int32, len(tets)/4)
	for k := range out {
		copy(out[k][:], tets[4*k:4*k+4])
		slices.Sort(out[k][:])
	}
	slices.SortFunc(out, func(a, b [4]int32) int { return slices.Compare(a[:], b[:]) })
	return out
}

// TestQhullReference: for points in general position the Delaunay
// tessellation is unique, so the tetrahedra must equal Qhull's exactly
// (scipy 1.10.1 scipy.spatial.Delaunay, testdata/tess/qhull_reference.txt),
// and their volumes must add up to the hull volume (scipy ConvexHull).
func TestQhullReference(t *testing.T) {
	xyz, want, hullVol := readReference(t)
	for _, seed := range []uint64{1, 2} {
		tt, err := New(xyz, Options{Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		got := sortedTets(tt.Tets())
		if len(got) != len(want) {
			t.Fatalf("seed %d: %d tetrahedra, Qhull has %d", seed, len(got), len(want))
		}
		for k := range got {
			if got[k] != want[k] {
				t.Fatalf("seed %d: tetrahedron %d is %v, Qhull has %v", seed, k, got[k], want[k])
			}
		}
		vol := 0.0
		for _, v := range tt.Volumes(nil) {
			vol += v
		}
		if math.Abs(vol-hullVol) > 1e-9*hullVol {
			t.Errorf("seed %d: volume sum %.15g, Qhull hull volume %.15g", seed, vol, hullVol)
		}
		checkValid(t, tt, xyz)
	}
}

// checkValid checks the tessellation with exact predicates: every
// tetrahedron positively oriented (Orient3D), neighbours symmetric and
// sharing a face, the local Delaunay property across every interior face
// (which implies the global one, Delaunay's lemma), the empty-sphere
// property itself for a sample of tetrahedra against all points, and the
// hull locally convex; every distinct input point must be a vertex.
func checkValid(t *testing.T, tt *Tessellation, xyz []float64) {
	t.Helper()
	pt := func(v int32) [3]float64 { return [3]float64{xyz[3*v], xyz[3*v+1], xyz[3*v+2]} }
	tets, nbr := tt.Tets(), tt.Neighbours()
	used := make([]bool, tt.NumPoints())
	for k := 0; k < tt.NumTets(); k++ {
		v := tets[4*k : 4*k+4]
		for _, w := range v {
			used[w] = true
		}
		if o := Orient3D(pt(v[0]), pt(v[1]), pt(v[2]), pt(v[3])); o != 1 {
			t.Fatalf("tetrahedron %d %v has orientation %d", k, v, o)
		}
		for i := 0; i < 4; i++ {
			u := nbr[4*k+i]
			if u < 0 {
				continue
			}
			j := slices.Index(nbr[4*u:4*u+4], int32(k))
			if j < 0 {
				t.Fatalf("tetrahedron %d has neighbour %d, but not the reverse", k, u)
			}
			shared := 0
			for a := 0; a < 4; a++ {
				if a != i && slices.Contains(tets[4*u:4*u+4], v[a]) {
					shared++
				}
			}
			opp := tets[4*u+int32(j)]
			if shared != 3 || slices.Contains(v, opp) {
				t.Fatalf("tetrahedra %d and %d do not share face %d", k, u, i)
			}
			if s := InSphere(pt(v[0]), pt(v[1]), pt(v[2]), pt(v[3]), pt(opp)); s > 0 {
				t.Fatalf("tetrahedron %d %v: point %d of neighbour %d is inside its circumsphere", k, v, opp, u)
			}
		}
	}
	// Empty-sphere property directly (the definition), on a sample of
	// tetrahedra against every point.
	step := max(1, tt.NumTets()/20)
	for k := 0; k < tt.NumTets(); k += step {
		v := tets[4*k : 4*k+4]
		for w := int32(0); w < int32(tt.NumPoints()); w++ {
			if s := InSphere(pt(v[0]), pt(v[1]), pt(v[2]), pt(v[3]), pt(w)); s > 0 {
				t.Fatalf("point %d is inside the circumsphere of tetrahedron %d %v", w, k, v)
			}
		}
	}
	for i, r := range tt.Rep() {
		if int(r) == i && !used[i] {
			t.Fatalf("point %d is in no tetrahedron", i)
		}
		if int(r) != i && used[i] {
			t.Fatalf("duplicate point %d is a vertex", i)
		}
	}
	// Hull: each hull face, seen from every vertex of the tetrahedra at its
	// edges, must not be reflex: no hull vertex strictly outside the plane
	// of an adjacent hull face.
	hull := tt.HullFaces()
	byEdge := map[[2]int32][]int{}
	for f := 0; f < len(hull)/3; f++ {
		for e := 0; e < 3; e++ {
			a, b := hull[3*f+e], hull[3*f+(e+1)%3]
			byEdge[[2]int32{min(a, b), max(a, b)}] = append(byEdge[[2]int32{min(a, b), max(a, b)}], f)
		}
	}
	for e, fs := range byEdge {
		if len(fs) != 2 {
			t.Fatalf("hull edge %v is on %d faces", e, len(fs))
		}
		f, g := fs[0], fs[1]
		for _, w := range hull[3*g : 3*g+3] {
			if o := Orient3D(pt(hull[3*f]), pt(hull[3*f+1]), pt(hull[3*f+2]), pt(w)); o > 0 {
				t.Fatalf("hull is not convex at edge %v", e)
			}
		}
	}
}

func randomPoints(n int, seed uint64, scale float64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 7))
	xyz := make([]float64, 3*n)
	for i := range xyz {
		xyz[i] = rng.Float64() * scale
	}
	return xyz
}

func TestDegenerateInputs(t *testing.T) {
	lattice := func(m int) []float64 {
		var xyz []float64
		for i := 0; i < m; i++ {
			for j := 0; j < m; j++ {
				for k := 0; k < m; k++ {
					xyz = append(xyz, float64(i), float64(j), float64(k))
				}
			}
		}
		return xyz
	}
	rng := rand.New(rand.NewPCG(5, 6))
	var planes, sphere, near, dups []float64
	for i := 0; i < 3000; i++ {
		// points on four planes z = 0, 1, 2, 3 with coordinates on a grid
		planes = append(planes, float64(rng.IntN(20)), float64(rng.IntN(20)), float64(rng.IntN(4)))
	}
	for i := 0; i < 2000; i++ {
		// points on one sphere of radius 13 with integer coordinates:
		// all permutations and signs of (3, 4, 12) and (5, 12, 0) etc.
		base := [][3]float64{{3, 4, 12}, {5, 12, 0}, {12, 3, 4}, {0, 5, 12}, {4, 12, 3}, {12, 0, 5}, {13, 0, 0}, {0, 13, 0}, {0, 0, 13}}
		b := base[rng.IntN(len(base))]
		s := [3]float64{float64(rng.IntN(2)*2 - 1), float64(rng.IntN(2)*2 - 1), float64(rng.IntN(2)*2 - 1)}
		sphere = append(sphere, b[0]*s[0], b[1]*s[1], b[2]*s[2])
	}
	for i := 0; i < 2000; i++ {
		x, y, z := rng.Float64(), rng.Float64(), rng.Float64()
		near = append(near, x, y, z, math.Nextafter(x, 2), y, z)
		dups = append(dups, x, y, z)
		if i%3 == 0 {
			dups = append(dups, x, y, z)
		}
	}
	cases := []struct {
		name string
		xyz  []float64
		dups int
	}{
		{"lattice 12^3", lattice(12), 0},
		{"four planes", planes, -1},
		{"one sphere", sphere, -1},
		{"nearly coincident pairs", near, 0},
		{"duplicates", dups, 667},
	}
	for _, c := range cases {
		tt, err := New(c.xyz, Options{Seed: 3})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if c.dups >= 0 && tt.Duplicates() != c.dups {
			t.Errorf("%s: %d duplicates, want %d", c.name, tt.Duplicates(), c.dups)
		}
		checkValid(t, tt, c.xyz)
	}
}

// TestLattice64 tessellates the 64^3 cubic lattice (262144 points, every
// unit cube co-spherical): the tessellation must be valid and fill the
// cube [0, 63]^3 exactly.
func TestLattice64(t *testing.T) {
	if testing.Short() {
		t.Skip("262144 degenerate points")
	}
	const m = 64
	xyz := make([]float64, 0, 3*m*m*m)
	for i := 0; i < m; i++ {
		for j := 0; j < m; j++ {
			for k := 0; k < m; k++ {
				xyz = append(xyz, float64(i), float64(j), float64(k))
			}
		}
	}
	tt, err := New(xyz, Options{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	checkValid(t, tt, xyz)
	vol := 0.0
	for _, v := range tt.Volumes(nil) {
		vol += v
	}
	// the hull is the cube of side 63 (the volumes are integers / 6, so
	// only the rounding of the sum remains)
	if want := 63.0 * 63 * 63; math.Abs(vol-want) > 1e-9*want {
		t.Errorf("volume %v, want %v", vol, want)
	}
}

func TestCoplanarError(t *testing.T) {
	cases := map[string][]float64{
		"empty":     nil,
		"one":       {1, 2, 3},
		"same":      {1, 2, 3, 1, 2, 3, 1, 2, 3, 1, 2, 3, 1, 2, 3},
		"collinear": {0, 0, 0, 1, 1, 1, 2, 2, 2, 3, 3, 3, 0.5, 0.5, 0.5},
		"coplanar":  {0, 0, 1, 1, 0, 1, 0, 1, 1, 5, 7, 1, 0.25, 3, 1},
	}
	dims := map[string]int{"empty": 0, "one": 0, "same": 0, "collinear": 1, "coplanar": 2}
	for name, xyz := range cases {
		_, err := New(xyz, Options{})
		var de *DegenerateError
		if !errors.Is(err, ErrCoplanar) || !errors.As(err, &de) {
			t.Errorf("%s: error %v, want a DegenerateError", name, err)
			continue
		}
		if de.Dim != dims[name] {
			t.Errorf("%s: Dim %d, want %d", name, de.Dim, dims[name])
		}
	}
	_, err := New([]float64{0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, math.NaN()}, Options{})
	var ie *InputError
	if !errors.As(err, &ie) || ie.Row != 3 || ie.Col != 2 {
		t.Errorf("NaN: error %v, want an InputError at row 3, z", err)
	}
}
