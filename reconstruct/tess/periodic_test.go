package tess

import (
	"math"
	"testing"
)

// poissonStats tessellates n uniform points in a periodic box and returns
// the mean number of tetrahedra and of Delaunay neighbours per point, and
// the sum of the contiguous Voronoi volumes.
func poissonStats(t testing.TB, n int, seed uint64) (tetsPer, nbrsPer, volSum float64, l float64) {
	l = 100.0
	xyz := randomPoints(n, seed, l)
	tt, err := New(xyz, Options{Seed: seed, Periodic: true, L: l, Threads: 2})
	if err != nil {
		t.Fatal(err)
	}
	var dst []int32
	nb := 0
	for v := 0; v < n; v++ {
		dst = tt.VertexNeighbours(int32(v), dst)
		nb += len(dst)
	}
	for _, v := range tt.VoronoiVolumes(nil) {
		volSum += v
	}
	return float64(tt.NumTets()) / float64(n), float64(nb) / float64(n), volSum, l
}

// TestPoissonStatistics: for a Poisson point process the mean number of
// Delaunay tetrahedra per point is 24π²/35 ≈ 6.768 and the mean number of
// Delaunay neighbours 2 + 48π²/35 ≈ 15.54 (Okabe, Boots, Sugihara & Chiu
// 2000, Spatial Tessellations, 2nd ed., Poisson–Voronoi and Poisson–Delaunay
// moments; Meijering 1953; as quoted in ../shared/checks.md). In a
// periodic box there is no hull, so the sample means estimate them without
// edge effects; with 2·10^5 points the sampling error is about 0.1%.
// Every tetrahedron is counted by its 4 corners, so the contiguous Voronoi
// volumes sum to 4 L³.
func TestPoissonStatistics(t *testing.T) {
	n := 200000
	if testing.Short() {
		n = 50000
	}
	tets, nbrs, vol, l := poissonStats(t, n, 11)
	wantT := 24 * math.Pi * math.Pi / 35
	wantN := 2 + 48*math.Pi*math.Pi/35
	tol := 0.005
	if math.Abs(tets/wantT-1) > tol {
		t.Errorf("tetrahedra per point %.4f, want %.4f within %.1f%%", tets, wantT, 100*tol)
	}
	if math.Abs(nbrs/wantN-1) > tol {
		t.Errorf("neighbours per point %.4f, want %.4f within %.1f%%", nbrs, wantN, 100*tol)
	}
	// Exact identity up to rounding of the sums.
	if math.Abs(vol/(4*l*l*l)-1) > 1e-9 {
		t.Errorf("Voronoi volumes sum to %.12g, want 4L³ = %.12g", vol, 4*l*l*l)
	}
	t.Logf("n=%d: %.4f tetrahedra/point (%.4f), %.4f neighbours/point (%.4f)", n, tets, wantT, nbrs, wantN)
}

// TestPoissonStatistics1M is the same check on 10^6 points (sampling error
// about 0.05%).
func TestPoissonStatistics1M(t *testing.T) {
	if testing.Short() {
		t.Skip("10^6 points")
	}
	tets, nbrs, _, _ := poissonStats(t, 1000000, 12)
	wantT := 24 * math.Pi * math.Pi / 35
	wantN := 2 + 48*math.Pi*math.Pi/35
	if math.Abs(tets/wantT-1) > 0.002 || math.Abs(nbrs/wantN-1) > 0.002 {
		t.Errorf("%.4f tetrahedra and %.4f neighbours per point, want %.4f and %.4f within 0.2%%", tets, nbrs, wantT, wantN)
	}
	t.Logf("%.4f tetrahedra/point (%.4f), %.4f neighbours/point (%.4f)", tets, wantT, nbrs, wantN)
}

// TestPeriodicLattice: a periodic cubic lattice of m³ points (fully
// degenerate) splits the box into tetrahedra of total volume L³, and every
// point has the same contiguous Voronoi volume 4L³/m³ — the lattice looks
// the same from every point only up to the perturbation, so only the sum is
// exact.
func TestPeriodicLattice(t *testing.T) {
	const m = 10
	var xyz []float64
	for i := 0; i < m; i++ {
		for j := 0; j < m; j++ {
			for k := 0; k < m; k++ {
				xyz = append(xyz, float64(i), float64(j), float64(k))
			}
		}
	}
	tt, err := New(xyz, Options{Periodic: true, L: m})
	if err != nil {
		t.Fatal(err)
	}
	sum := 0.0
	for _, v := range tt.Volumes(nil) {
		if !(v > 0) {
			t.Fatalf("tetrahedron volume %v", v)
		}
		sum += v
	}
	if math.Abs(sum-m*m*m) > 1e-9*m*m*m {
		t.Errorf("volumes sum to %v, want L³ = %v", sum, m*m*m)
	}
	checkPeriodicNeighbours(t, tt)
}

// checkPeriodicNeighbours checks that every face has a neighbour that
// shares its three corners and points back.
func checkPeriodicNeighbours(t *testing.T, tt *Tessellation) {
	tets, nbr := tt.Tets(), tt.Neighbours()
	for k := 0; k < tt.NumTets(); k++ {
		for i := 0; i < 4; i++ {
			u := nbr[4*k+i]
			if u < 0 {
				t.Fatalf("tetrahedron %d has no neighbour %d", k, i)
			}
			back := false
			for j := 0; j < 4; j++ {
				if nbr[4*u+int32(j)] == int32(k) {
					back = true
				}
			}
			shared := 0
			for a := 0; a < 4; a++ {
				for b := 0; b < 4; b++ {
					if a != i && tets[4*k+a] == tets[4*int(u)+b] {
						shared++
					}
				}
			}
			if !back || shared != 3 {
				t.Fatalf("tetrahedra %d and %d: not mutual neighbours sharing a face", k, u)
			}
		}
	}
}
