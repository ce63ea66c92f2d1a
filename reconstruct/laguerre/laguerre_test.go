package laguerre

import (
	"encoding/csv"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

func unitBox(periodic bool) Options {
	return Options{Lo: [3]float64{0, 0, 0}, Hi: [3]float64{1, 1, 1}, Periodic: periodic}
}

func randomPoints(n int, seed uint64, lo, hi [3]float64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 7))
	xyz := make([]float64, 3*n)
	for i := 0; i < n; i++ {
		for k := 0; k < 3; k++ {
			xyz[3*i+k] = lo[k] + (hi[k]-lo[k])*rng.Float64()
		}
	}
	return xyz
}

// randomWeights returns weights uniform in [-amp, amp].
func randomWeights(n int, seed uint64, amp float64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 11))
	psi := make([]float64, n)
	for i := range psi {
		psi[i] = amp * (2*rng.Float64() - 1)
	}
	return psi
}

func relClose(a, b, tol float64) bool {
	return math.Abs(a-b) <= tol*math.Max(math.Abs(a), math.Abs(b))
}

func compute(t testing.TB, xyz, psi []float64, opt Options) *Cells {
	t.Helper()
	var out Cells
	if err := Compute(xyz, psi, opt, &out); err != nil {
		t.Fatal(err)
	}
	return &out
}

// bruteCell clips the starting box of point i by every other point (and,
// in periodic mode, by the (2·images+1)³ nearest images of every point),
// with no grid and no early stop, at Compute's tolerance (with a far
// smaller one, 1e-13·d, index-order clipping of exactly aligned lattice
// points was seen to leave duplicate vertices and a wrong volume, checked
// against Monte Carlo). It checks the pruning of Index.Compute
// (security radius with weights) against the plain definition of the
// Laguerre cell.
func bruteCell(xyz, psi []float64, opt Options, i, images int) float64 {
	var p poly
	var lo, hi [3]float64
	xi := [3]float64{xyz[3*i], xyz[3*i+1], xyz[3*i+2]}
	for k := 0; k < 3; k++ {
		if opt.Periodic {
			lo[k], hi[k] = -0.5*(opt.Hi[k]-opt.Lo[k]), 0.5*(opt.Hi[k]-opt.Lo[k])
		} else {
			lo[k], hi[k] = opt.Lo[k]-xi[k], opt.Hi[k]-xi[k]
		}
	}
	p.reset(lo, hi)
	n := len(psi)
	// the clipping tolerance of Compute: epsRel times the mean spacing
	vol := (opt.Hi[0] - opt.Lo[0]) * (opt.Hi[1] - opt.Lo[1]) * (opt.Hi[2] - opt.Lo[2])
	tol := epsRel * math.Cbrt(vol/float64(n))
	r := 0
	if opt.Periodic {
		r = images
	}
	for j := 0; j < n; j++ {
		for a := -r; a <= r; a++ {
			for b := -r; b <= r; b++ {
				for c := -r; c <= r; c++ {
					if j == i && a == 0 && b == 0 && c == 0 {
						continue
					}
					dx := xyz[3*j] + float64(a)*(opt.Hi[0]-opt.Lo[0]) - xi[0]
					dy := xyz[3*j+1] + float64(b)*(opt.Hi[1]-opt.Lo[1]) - xi[1]
					dz := xyz[3*j+2] + float64(c)*(opt.Hi[2]-opt.Lo[2]) - xi[2]
					d2 := dx*dx + dy*dy + dz*dz
					if p.clip(dx, dy, dz, 0.5*(d2+psi[i]-psi[j]), tol*math.Sqrt(d2), int32(j)) == clipEmpty {
						return 0
					}
				}
			}
		}
	}
	v, _ := p.measure()
	return v
}

// TestBruteForce compares Compute with clipping by all points, for weights
// spread over several squared spacings so that the weighted stopping rule
// (lowerPlane) is exercised. Source: the definition of the power cell
// (Aurenhammer 1987, SIAM J. Comput. 16, 78), evaluated without pruning.
func TestBruteForce(t *testing.T) {
	for _, tc := range []struct {
		n      int
		amp    float64 // weight amplitude in units of s²
		images int     // periodic images per axis side in the brute force
	}{{400, 3, 1}, {150, 20, 2}} {
		s := math.Cbrt(1.0 / float64(tc.n))
		for _, periodic := range []bool{false, true} {
			opt := unitBox(periodic)
			xyz := randomPoints(tc.n, 1, opt.Lo, opt.Hi)
			psi := randomWeights(tc.n, 2, tc.amp*s*s)
			out := compute(t, xyz, psi, opt)
			for i := 0; i < tc.n; i++ {
				want := bruteCell(xyz, psi, opt, i, tc.images)
				if math.Abs(out.Volume[i]-want) > 1e-12 {
					t.Errorf("periodic=%v amp=%g cell %d: volume %.16g, brute force %.16g", periodic, tc.amp, i, out.Volume[i], want)
				}
			}
			t.Logf("periodic=%v amp=%g: %d of %d cells empty", periodic, tc.amp, out.Empty, tc.n)
		}
	}
}

// TestVolumeSum checks that the cells tile the box: their volumes add up to
// the box volume (a property of any tessellation of the box or torus).
func TestVolumeSum(t *testing.T) {
	for _, periodic := range []bool{false, true} {
		for _, amp := range []float64{0, 0.5, 4} {
			const n = 3000
			opt := Options{Lo: [3]float64{-10, 0, 5}, Hi: [3]float64{30, 20, 35}, Periodic: periodic}
			vol := 40.0 * 20 * 30
			s := math.Cbrt(vol / n)
			xyz := randomPoints(n, 3, opt.Lo, opt.Hi)
			psi := randomWeights(n, 4, amp*s*s)
			out := compute(t, xyz, psi, opt)
			sum := 0.0
			for _, v := range out.Volume {
				sum += v
			}
			if !relClose(sum, vol, 1e-9) {
				t.Errorf("periodic=%v amp=%g: volume sum %.15g, box %g", periodic, amp, sum, vol)
			}
			fb := 0
			for _, w := range out.workers {
				fb += w.p.fallbacks
			}
			t.Logf("periodic=%v amp=%g: relative volume error %.2g, empty cells %d, caps ordered by angle %d", periodic, amp, sum/vol-1, out.Empty, fb)
		}
	}
}

// TestCentroidSum checks that Σ V_i c_i equals the box volume times the box
// centre (first moment of a tiling of the box).
func TestCentroidSum(t *testing.T) {
	const n = 3000
	opt := Options{Lo: [3]float64{-1, 2, 0}, Hi: [3]float64{3, 4, 1}}
	xyz := randomPoints(n, 5, opt.Lo, opt.Hi)
	s := math.Cbrt(8.0 / n)
	psi := randomWeights(n, 6, s*s)
	out := compute(t, xyz, psi, opt)
	var m [3]float64
	for i := 0; i < n; i++ {
		for k := 0; k < 3; k++ {
			m[k] += out.Volume[i] * out.Centroid[3*i+k]
		}
	}
	want := [3]float64{8 * 1, 8 * 3, 8 * 0.5}
	for k := 0; k < 3; k++ {
		if math.Abs(m[k]-want[k]) > 1e-9*8*3 {
			t.Errorf("first moment axis %d: %.15g, want %g", k, m[k], want[k])
		}
	}
}

// TestFacetSymmetry checks that neighbour lists are symmetric and that the
// facet seen from both sides has the same area (one facet, two cells).
func TestFacetSymmetry(t *testing.T) {
	for _, periodic := range []bool{false, true} {
		const n = 3000
		opt := unitBox(periodic)
		xyz := randomPoints(n, 7, opt.Lo, opt.Hi)
		s := math.Cbrt(1.0 / n)
		psi := randomWeights(n, 8, s*s)
		out := compute(t, xyz, psi, opt)
		for i := 0; i < n; i++ {
			for k := out.NbrStart[i]; k < out.NbrStart[i+1]; k++ {
				j := out.Nbr[k]
				if k > out.NbrStart[i] && out.Nbr[k-1] >= j {
					t.Fatalf("cell %d neighbours not increasing", i)
				}
				found := false
				for m := out.NbrStart[j]; m < out.NbrStart[j+1]; m++ {
					if out.Nbr[m] == int32(i) {
						found = true
						if !relClose(out.Area[k], out.Area[m], 1e-9) {
							t.Errorf("periodic=%v facet %d-%d: area %.16g vs %.16g", periodic, i, j, out.Area[k], out.Area[m])
						}
					}
				}
				if !found {
					t.Errorf("periodic=%v: %d lists %d (area %g) but not the reverse", periodic, i, j, out.Area[k])
				}
			}
		}
	}
}

func readCSV(t *testing.T, name string) [][]string {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "..", "testdata", "laguerre", name))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows[1:]
}

func parseF(t *testing.T, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

// TestVoronoiScipy compares equal-weight cells with Voronoi cells from
// scipy 1.10.1 (scipy.spatial.Voronoi and ConvexHull, Debian
// python3-scipy 1.10.1-2), written by testdata/laguerre/make_reference.py
// for the cells that are bounded and inside the unit box: volume, centroid,
// neighbour set and the area of every facet.
func TestVoronoiScipy(t *testing.T) {
	prow := readCSV(t, "voronoi_points.csv")
	xyz := make([]float64, 3*len(prow))
	for i, r := range prow {
		for k := 0; k < 3; k++ {
			xyz[3*i+k] = parseF(t, r[k+1])
		}
	}
	psi := make([]float64, len(prow))
	out := compute(t, xyz, psi, unitBox(false))
	crow := readCSV(t, "voronoi_cells.csv")
	if len(crow) < 50 {
		t.Fatalf("only %d reference cells", len(crow))
	}
	for _, r := range crow {
		i, _ := strconv.Atoi(r[0])
		want := parseF(t, r[1])
		if !relClose(out.Volume[i], want, 1e-9) {
			t.Errorf("cell %d: volume %.16g, scipy %.16g", i, out.Volume[i], want)
		}
		for k := 0; k < 3; k++ {
			if c := parseF(t, r[2+k]); math.Abs(out.Centroid[3*i+k]-c) > 1e-9 {
				t.Errorf("cell %d: centroid[%d] %.16g, scipy %.16g", i, k, out.Centroid[3*i+k], c)
			}
		}
		var got []string
		for k := out.NbrStart[i]; k < out.NbrStart[i+1]; k++ {
			got = append(got, strconv.Itoa(int(out.Nbr[k])))
		}
		if g := strings.Join(got, " "); g != r[5] {
			t.Errorf("cell %d: neighbours %q, scipy %q", i, g, r[5])
		}
	}
	frow := readCSV(t, "voronoi_facets.csv")
	area := func(i, j int) float64 {
		for k := out.NbrStart[i]; k < out.NbrStart[i+1]; k++ {
			if int(out.Nbr[k]) == j {
				return out.Area[k]
			}
		}
		return 0
	}
	for _, r := range frow {
		i, _ := strconv.Atoi(r[0])
		j, _ := strconv.Atoi(r[1])
		want := parseF(t, r[2])
		// every ridge of a reference cell lies inside the box (the cell
		// does), so both cells sharing it see the whole ridge
		if a := area(i, j); !relClose(a, want, 1e-9) {
			t.Errorf("facet %d-%d: area %.16g, scipy %.16g", i, j, a, want)
		}
		if a := area(j, i); !relClose(a, want, 1e-9) {
			t.Errorf("facet %d-%d seen from %d: area %.16g, scipy %.16g", i, j, j, a, want)
		}
	}
}

// TestLattice: points at the centres of an m³ cubic lattice in a periodic
// box have cubic cells of side L/m with 6 facets of area (L/m)²; every
// vertex is shared by 8 cells, the most degenerate (co-spherical) input.
// Expected values follow from the symmetry of the lattice.
func TestLattice(t *testing.T) {
	for _, tc := range []struct {
		m     int
		shift float64 // lattice offset in units of the spacing
		L     float64
	}{{5, 0.5, 1}, {7, 0, 3.5}, {12, 0.25, 100}, {3, 0.5, 2}, {7, 0.3, 1}, {10, 0.1, 1}, {9, 0.7, 0.3}} {
		m := tc.m
		a := tc.L / float64(m)
		n := m * m * m
		xyz := make([]float64, 0, 3*n)
		for z := 0; z < m; z++ {
			for y := 0; y < m; y++ {
				for x := 0; x < m; x++ {
					xyz = append(xyz, (float64(x)+tc.shift)*a, (float64(y)+tc.shift)*a, (float64(z)+tc.shift)*a)
				}
			}
		}
		opt := Options{Hi: [3]float64{tc.L, tc.L, tc.L}, Periodic: true}
		out := compute(t, xyz, make([]float64, n), opt)
		for i := 0; i < n; i++ {
			if !relClose(out.Volume[i], a*a*a, 1e-12) {
				t.Fatalf("m=%d cell %d: volume %.16g, want %.16g", m, i, out.Volume[i], a*a*a)
			}
			if c := out.NbrStart[i+1] - out.NbrStart[i]; c != 6 {
				t.Fatalf("m=%d cell %d: %d neighbours, want 6", m, i, c)
			}
			for k := out.NbrStart[i]; k < out.NbrStart[i+1]; k++ {
				if !relClose(out.Area[k], a*a, 1e-12) {
					t.Fatalf("m=%d cell %d: facet area %.16g, want %.16g", m, i, out.Area[k], a*a)
				}
			}
			for k := 0; k < 3; k++ {
				if math.Abs(out.Centroid[3*i+k]-xyz[3*i+k]) > 1e-12*tc.L {
					t.Fatalf("m=%d cell %d: centroid %v, want the point", m, i, out.Centroid[3*i:3*i+3])
				}
			}
		}
	}
}

// TestTwoPoints: for points p1, p2 on the x axis the power bisector is the
// plane x = (|p2|² − |p1|² + ψ1 − ψ2) / (2 (p2x − p1x)) (Aurenhammer 1987,
// power of a point with respect to a sphere).
func TestTwoPoints(t *testing.T) {
	xyz := []float64{0.25, 0.5, 0.5, 0.75, 0.5, 0.5}
	for _, d := range []float64{0, 0.1, -0.2} {
		psi := []float64{d, 0}
		xs := (0.75*0.75 - 0.25*0.25 + d) / (2 * 0.5) // = 0.5 + d
		out := compute(t, xyz, psi, unitBox(false))
		if math.Abs(out.Volume[0]-xs) > 1e-14 || math.Abs(out.Volume[1]-(1-xs)) > 1e-14 {
			t.Errorf("Δψ=%g: volumes %v, want %g and %g", d, out.Volume, xs, 1-xs)
		}
		if math.Abs(out.Centroid[0]-xs/2) > 1e-14 || math.Abs(out.Centroid[3]-(1+xs)/2) > 1e-14 {
			t.Errorf("Δψ=%g: centroids x %g %g, want %g %g", d, out.Centroid[0], out.Centroid[3], xs/2, (1+xs)/2)
		}
		if len(out.Nbr) != 2 || out.Nbr[0] != 1 || out.Nbr[1] != 0 || math.Abs(out.Area[0]-1) > 1e-14 {
			t.Errorf("Δψ=%g: neighbours %v areas %v, want one facet of area 1", d, out.Nbr, out.Area)
		}
		// Periodic: the image of p2 at x = −0.25 gives a second plane at
		// x = (0.25² − 0.25² + Δψ)/(2·(−0.5)) = −Δψ, so cell 1 spans
		// [−Δψ, 0.5+Δψ] and meets p2 through two facets of area 1, merged.
		out = compute(t, xyz, psi, unitBox(true))
		if math.Abs(out.Volume[0]-(0.5+2*d)) > 1e-14 {
			t.Errorf("periodic Δψ=%g: volume %g, want %g", d, out.Volume[0], 0.5+2*d)
		}
		if len(out.Nbr) != 2 || math.Abs(out.Area[0]-2) > 1e-14 {
			t.Errorf("periodic Δψ=%g: neighbours %v areas %v, want one merged entry of area 2", d, out.Nbr, out.Area)
		}
	}
}

// TestEmptyCell: a point whose weight is lower than its neighbours' by more
// than the squared box diagonal (3 in the unit box) is dominated everywhere,
// |x−p_i|² − ψ_i > 3 ≥ |x−p_j|² − ψ_j, so its cell is empty.
func TestEmptyCell(t *testing.T) {
	const n = 200
	opt := unitBox(false)
	xyz := randomPoints(n, 9, opt.Lo, opt.Hi)
	psi := make([]float64, n)
	psi[17] = -10
	out := compute(t, xyz, psi, opt)
	if out.Volume[17] != 0 || out.Empty != 1 || out.NbrStart[18] != out.NbrStart[17] {
		t.Errorf("cell 17: volume %g, %d empty, %d neighbours; want an empty cell", out.Volume[17], out.Empty, out.NbrStart[18]-out.NbrStart[17])
	}
	for _, j := range out.Nbr {
		if j == 17 {
			t.Errorf("empty cell 17 listed as a neighbour")
		}
	}
	sum := 0.0
	for _, v := range out.Volume {
		sum += v
	}
	if !relClose(sum, 1, 1e-9) {
		t.Errorf("volume sum %g with an empty cell, want 1", sum)
	}
	// Coincident points: the higher weight wins; equal weights go to the
	// lower index.
	xyz2 := []float64{0.3, 0.3, 0.3, 0.3, 0.3, 0.3, 0.7, 0.7, 0.7}
	out = compute(t, xyz2, []float64{0, 0.01, 0}, opt)
	if out.Volume[0] != 0 || out.Volume[1] == 0 || out.Empty != 1 {
		t.Errorf("coincident points, ψ=(0, 0.01): volumes %v", out.Volume)
	}
	out = compute(t, xyz2, []float64{0, 0, 0}, opt)
	if out.Volume[0] == 0 || out.Volume[1] != 0 || out.Empty != 1 {
		t.Errorf("coincident points, equal ψ: volumes %v", out.Volume)
	}
}

// TestPoissonNeighbours: for a Poisson point process the mean number of
// Voronoi neighbours is 2 + 48π²/35 ≈ 15.54 (Meijering 1953; Okabe, Boots,
// Sugihara & Chiu 2000, Table 5.5.1). 20000 periodic points give a standard
// error of about 0.025.
func TestPoissonNeighbours(t *testing.T) {
	const n = 20000
	opt := unitBox(true)
	xyz := randomPoints(n, 10, opt.Lo, opt.Hi)
	out := compute(t, xyz, make([]float64, n), opt)
	mean := float64(len(out.Nbr)) / n
	want := 2 + 48*math.Pi*math.Pi/35
	if math.Abs(mean-want) > 0.1 {
		t.Errorf("mean neighbours %.4f, want %.4f", mean, want)
	}
	t.Logf("mean neighbours %.4f (Meijering %.4f)", mean, want)
}

// TestThreads checks that results are bit-identical for 1 and 2 threads
// and that an Index and a Cells can be reused with new weights.
func TestThreads(t *testing.T) {
	const n = 5000
	opt := unitBox(true)
	xyz := randomPoints(n, 12, opt.Lo, opt.Hi)
	s := math.Cbrt(1.0 / n)
	var res [2]Cells
	for k, th := range []int{1, 2} {
		opt.Threads = th
		ix, err := NewIndex(xyz, opt)
		if err != nil {
			t.Fatal(err)
		}
		// a first call with other weights, so the second reuses buffers
		if err := ix.Compute(randomWeights(n, 99, s*s), &res[k]); err != nil {
			t.Fatal(err)
		}
		if err := ix.Compute(randomWeights(n, 13, s*s), &res[k]); err != nil {
			t.Fatal(err)
		}
	}
	a, b := &res[0], &res[1]
	eqF := func(name string, x, y []float64) {
		if len(x) != len(y) {
			t.Fatalf("%s: lengths %d, %d", name, len(x), len(y))
		}
		for i := range x {
			if math.Float64bits(x[i]) != math.Float64bits(y[i]) {
				t.Fatalf("%s[%d]: %v with 1 thread, %v with 2", name, i, x[i], y[i])
			}
		}
	}
	eqI := func(name string, x, y []int32) {
		if len(x) != len(y) {
			t.Fatalf("%s: lengths %d, %d", name, len(x), len(y))
		}
		for i := range x {
			if x[i] != y[i] {
				t.Fatalf("%s[%d]: %v with 1 thread, %v with 2", name, i, x[i], y[i])
			}
		}
	}
	eqF("Volume", a.Volume, b.Volume)
	eqF("Centroid", a.Centroid, b.Centroid)
	eqF("Area", a.Area, b.Area)
	eqI("NbrStart", a.NbrStart, b.NbrStart)
	eqI("Nbr", a.Nbr, b.Nbr)
	// the reused result equals a fresh one
	fresh := compute(t, xyz, randomWeights(n, 13, s*s), opt)
	eqF("Volume (fresh)", a.Volume, fresh.Volume)
	eqI("Nbr (fresh)", a.Nbr, fresh.Nbr)
}

// TestErrors checks that bad input is reported, not panicked on.
func TestErrors(t *testing.T) {
	var out Cells
	good := []float64{0.5, 0.5, 0.5}
	cases := []struct {
		name string
		xyz  []float64
		psi  []float64
		opt  Options
	}{
		{"length", []float64{0.5, 0.5}, []float64{0}, unitBox(false)},
		{"weights", good, []float64{0, 1}, unitBox(false)},
		{"nan", []float64{math.NaN(), 0.5, 0.5}, []float64{0}, unitBox(false)},
		{"outside", []float64{1.5, 0.5, 0.5}, []float64{0}, unitBox(false)},
		{"box", good, []float64{0}, Options{Lo: [3]float64{0, 1, 0}, Hi: [3]float64{1, 1, 1}}},
		{"inf weight", good, []float64{math.Inf(1)}, unitBox(true)},
	}
	for _, c := range cases {
		if err := Compute(c.xyz, c.psi, c.opt, &out); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
	var ix *Index
	if err := ix.Compute(nil, &out); err == nil {
		t.Errorf("nil Index: no error")
	}
	// periodic mode wraps points outside the box
	if err := Compute([]float64{1.5, -0.25, 0.5}, []float64{0}, unitBox(true), &out); err != nil || !relClose(out.Volume[0], 1, 1e-12) {
		t.Errorf("periodic wrap: err %v volume %v", err, out.Volume)
	}
	if err := Compute(nil, nil, unitBox(true), &out); err != nil || len(out.Volume) != 0 {
		t.Errorf("no points: err %v", err)
	}
}

// TestFarReach: one point with a weight of 0.3 (about 60 s² for 3000
// points in the unit box) has a cell reaching more than offChunk grid cells,
// so the search for the cells it cuts must go on to the lazily scanned
// shells. Checked against the unpruned definition (bruteCell) on a subset of
// cells.
func TestFarReach(t *testing.T) {
	const n = 3000
	for _, periodic := range []bool{false, true} {
		opt := unitBox(periodic)
		xyz := randomPoints(n, 31, opt.Lo, opt.Hi)
		xyz[0], xyz[1], xyz[2] = 0.5, 0.5, 0.5
		psi := randomWeights(n, 32, 1e-4)
		psi[0] = 0.3
		out := compute(t, xyz, psi, opt)
		for i := 0; i < n; i += 25 {
			// images at offset ±2 lie ≥ 1 away: their planes are ≥ 0.35 from
			// the point, beyond the small cells; cell 0 gets more images
			images := 1
			if i == 0 {
				images = 2
			}
			want := bruteCell(xyz, psi, opt, i, images)
			if math.Abs(out.Volume[i]-want) > 1e-12 {
				t.Errorf("periodic=%v cell %d: volume %.16g, brute force %.16g", periodic, i, out.Volume[i], want)
			}
		}
		sum := 0.0
		for _, v := range out.Volume {
			sum += v
		}
		if !relClose(sum, 1, 1e-9) {
			t.Errorf("periodic=%v: volume sum %.15g, want 1", periodic, sum)
		}
		t.Logf("periodic=%v: cell 0 volume %.4f, %d empty cells", periodic, out.Volume[0], out.Empty)
	}
}

// TestAngularCap checks the fallback that orders a cap by angle: the top
// face of the unit cube, given as scrambled segments, must come out as a
// counter-clockwise square seen from +z (area vector (0, 0, 1)).
func TestAngularCap(t *testing.T) {
	var p poly
	p.reset([3]float64{0, 0, 0}, [3]float64{1, 1, 1})
	p.segs = append(p.segs[:0], 7, 4, 5, 6, 4, 7, 6, 5)
	p.angularCap(0, 0, 1)
	if len(p.capv) != 4 {
		t.Fatalf("cap %v, want 4 vertices", p.capv)
	}
	var ax, ay, az float64
	for k := range p.capv {
		a, b := p.capv[k], p.capv[(k+1)%4]
		x0, y0, z0 := p.v[3*a], p.v[3*a+1], p.v[3*a+2]
		x1, y1, z1 := p.v[3*b], p.v[3*b+1], p.v[3*b+2]
		ax += y0*z1 - z0*y1
		ay += z0*x1 - x0*z1
		az += x0*y1 - y0*x1
	}
	if math.Abs(ax) > 1e-15 || math.Abs(ay) > 1e-15 || math.Abs(az/2-1) > 1e-15 {
		t.Errorf("cap %v: area vector (%g, %g, %g), want (0, 0, 1)", p.capv, ax/2, ay/2, az/2)
	}
}
