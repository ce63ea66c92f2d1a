package dtfe

import (
	"bufio"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/tess"
)

// newField tessellates xyz and computes its DTFE field.
func mustField(t testing.TB, xyz, w []float64, opt tess.Options) (*tess.Tessellation, *Field) {
	t.Helper()
	tt, err := tess.New(xyz, opt)
	if err != nil {
		t.Fatal(err)
	}
	f, err := New(tt, xyz, w)
	if err != nil {
		t.Fatal(err)
	}
	return tt, f
}

func relErr(got, want float64) float64 {
	return math.Abs(got-want) / math.Abs(want)
}

// TestScipyReference compares the densities, hull flags, interpolated
// values and total mass with the independent computation of
// testdata/dtfe/make_reference.py from Qhull's tetrahedra
// (scipy.spatial.Delaunay, scipy 1.10.1, Debian python3-scipy), on 2000
// uniform points, 240 clumped ones and 6 duplicates with weights.
func TestScipyReference(t *testing.T) {
	fh, err := os.Open("../../testdata/dtfe/scipy_reference.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	var xyz, w, rho []float64
	var hull []bool
	type query struct {
		x      [3]float64
		inside bool
		value  float64
	}
	var qs []query
	mass := math.NaN()
	sc := bufio.NewScanner(fh)
	for line := 1; sc.Scan(); line++ {
		fs := strings.Fields(sc.Text())
		if len(fs) == 0 || fs[0] == "#" {
			continue
		}
		num := make([]float64, len(fs)-1)
		for i, s := range fs[1:] {
			if num[i], err = strconv.ParseFloat(s, 64); err != nil {
				t.Fatalf("line %d: %v", line, err)
			}
		}
		switch fs[0] {
		case "p":
			xyz = append(xyz, num[0], num[1], num[2])
			w = append(w, num[3])
			rho = append(rho, num[4])
			hull = append(hull, num[5] == 1)
		case "q":
			qs = append(qs, query{[3]float64(num[:3]), num[3] == 1, num[4]})
		case "mass":
			mass = num[0]
		}
	}
	if len(rho) != 2246 || len(qs) < 300 || math.IsNaN(mass) {
		t.Fatalf("read %d points, %d queries, mass %v", len(rho), len(qs), mass)
	}
	tt, f := mustField(t, xyz, w, tess.Options{Seed: 3})
	if tt.Duplicates() != 6 {
		t.Fatalf("%d duplicates, the reference has 6", tt.Duplicates())
	}
	// scipy 1.10.1 (Qhull): rho_i = 4 w_i / W_rep(i)
	bad := 0
	for i, want := range rho {
		if got := f.Density()[i]; relErr(got, want) > 1e-10 {
			if bad++; bad < 10 {
				t.Errorf("point %d: density %v, scipy/Qhull %v", i, got, want)
			}
		}
		if f.OnHull(i) != hull[i] {
			t.Errorf("point %d: on hull %v, scipy/Qhull %v", i, f.OnHull(i), hull[i])
		}
	}
	// scipy 1.10.1: find_simplex + barycentric transform of the vertex
	// field values 4 M_r / W_r
	in := 0
	for _, q := range qs {
		got, ok := f.At(q.x)
		if ok != q.inside {
			t.Errorf("At(%v): inside %v, scipy/Qhull %v", q.x, ok, q.inside)
			continue
		}
		if ok {
			in++
			if relErr(got, q.value) > 1e-10 {
				t.Errorf("At(%v) = %v, scipy/Qhull %v", q.x, got, q.value)
			}
		}
	}
	if in < 150 || len(qs)-in < 50 {
		t.Errorf("%d queries inside, %d outside: the reference should test both", in, len(qs)-in)
	}
	// the weights summed by numpy in the script
	if relErr(f.TotalMass(), mass) > 1e-12 {
		t.Errorf("total mass %v, reference %v", f.TotalMass(), mass)
	}
	// mass conservation (Schaap & van de Weygaert 2000)
	if got := f.Integral(); relErr(got, mass) > 1e-10 {
		t.Errorf("integral %v, total mass %v", got, mass)
	}
}

// TestDuplicates checks the rule for merged duplicates: the rows of a group
// share the cell volume of their representative, each reports 4 m_i / W,
// and the field at the point is the group's summed share 4 M / W.
func TestDuplicates(t *testing.T) {
	xyz := uniformPoints(500, 5, 10)
	xyz = append(xyz, xyz[30:33]...) // copy of point 10
	xyz = append(xyz, xyz[30:33]...)
	w := make([]float64, 502)
	for i := range w {
		w[i] = 1
	}
	w[10], w[500], w[501] = 1, 2, 0.5
	tt, f := mustField(t, xyz, w, tess.Options{Seed: 1})
	vv := tt.VoronoiVolumes(nil)
	rho := f.Density()
	for _, i := range []int{10, 500, 501} {
		if want := 4 * w[i] / vv[10]; relErr(rho[i], want) > 1e-14 {
			t.Errorf("row %d: density %v, want 4 m / W = %v", i, rho[i], want)
		}
	}
	at, ok := f.At([3]float64(xyz[30:33]))
	if sum := rho[10] + rho[500] + rho[501]; !ok || relErr(at, sum) > 1e-12 {
		t.Errorf("field at the duplicated point %v (ok %v), want the summed shares %v", at, ok, sum)
	}
}

// TestMassConservation checks that the interpolated field integrates to
// the total mass over the hull (Schaap & van de Weygaert 2000; van de
// Weygaert & Schaap 2009): exact algebraically, so to rounding.
func TestMassConservation(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	uni := uniformPoints(5000, 2, 50)
	weights := make([]float64, 5000)
	for i := range weights {
		weights[i] = 3 * rng.Float64()
	}
	weights[7] = 0
	clumped := uniformPoints(1000, 3, 50)
	for c := 0; c < 20; c++ {
		x0 := [3]float64{50 * rng.Float64(), 50 * rng.Float64(), 50 * rng.Float64()}
		for range 100 {
			for k := 0; k < 3; k++ {
				clumped = append(clumped, x0[k]+0.2*rng.NormFloat64())
			}
		}
	}
	clumped = append(clumped, clumped[:30]...) // 10 duplicates
	cases := []struct {
		name string
		xyz  []float64
		w    []float64
		opt  tess.Options
	}{
		{"uniform", uni, nil, tess.Options{Seed: 1}},
		{"weighted", uni, weights, tess.Options{Seed: 2}},
		{"clumped with duplicates", clumped, nil, tess.Options{Seed: 3}},
		{"periodic", uni, nil, tess.Options{Seed: 4, Periodic: true, L: 50}},
		{"periodic weighted", uni, weights, tess.Options{Seed: 5, Periodic: true, L: 50}},
	}
	for _, c := range cases {
		_, f := mustField(t, c.xyz, c.w, c.opt)
		want := float64(len(c.xyz) / 3)
		if c.w != nil {
			want = 0
			for _, m := range c.w {
				want += m
			}
		}
		if got := f.Integral(); relErr(got, want) > 1e-10 {
			t.Errorf("%s: integral %v, total mass %v", c.name, got, want)
		}
		if c.opt.Periodic && slices.Contains(f.Hull(), true) {
			t.Errorf("%s: a point on the hull of a periodic box", c.name)
		}
	}
}

// lattice returns the m³ points of the cubic lattice of unit spacing.
func lattice(m int) []float64 {
	xyz := make([]float64, 0, 3*m*m*m)
	for i := 0; i < m; i++ {
		for j := 0; j < m; j++ {
			for k := 0; k < m; k++ {
				xyz = append(xyz, float64(i), float64(j), float64(k))
			}
		}
	}
	return xyz
}

// TestLattice tessellates the 12³ cubic lattice of unit spacing, the most
// degenerate input (every unit cube co-spherical), which tess resolves by
// symbolic perturbation. The number density is exactly one point per unit
// volume; the DTFE recovers it at every interior point whatever the
// triangulation chosen for each cube, because a vertex's shares of the
// eight cubes around it add up to 4 (each cube's volume 1 is counted 4
// times by its corners, and the lattice triangulation repeats). Points on
// the hull have truncated cells: on a face about half, an edge a quarter
// and a corner an eighth of the interior volume, so densities of about 2,
// 4 and 8 (observed: 2 to 24, depending on how the perturbation splits the
// hull squares); all must exceed 1.
func TestLattice(t *testing.T) {
	const m = 12
	xyz := lattice(m)
	tt, f := mustField(t, xyz, nil, tess.Options{Seed: 1})
	var buf []int32
	interior := 0
	for i := 0; i < m*m*m; i++ {
		rho := f.Density()[i]
		if f.OnHull(i) {
			if !(rho > 1.5) {
				t.Errorf("hull point %v: density %v, want > 1", xyz[3*i:3*i+3], rho)
			}
			continue
		}
		touches := false
		buf = tt.VertexTets(int32(i), buf)
		for _, c := range buf {
			for _, v := range tt.Tets()[4*c : 4*c+4] {
				touches = touches || f.OnHull(int(v))
			}
		}
		if touches {
			continue
		}
		interior++
		// exact: one point per unit volume
		if math.Abs(rho-1) > 1e-12 {
			t.Errorf("interior point %v: density %v, want 1", xyz[3*i:3*i+3], rho)
		}
	}
	if interior != 8*8*8 {
		t.Errorf("%d interior points, want 8³ (two layers off each face)", interior)
	}
	// hull points: the 12³ − 10³ outer layer
	hull := 0
	for _, h := range f.Hull() {
		if h {
			hull++
		}
	}
	if hull != m*m*m-10*10*10 {
		t.Errorf("%d hull points, want %d", hull, m*m*m-1000)
	}
	// mass conservation
	if got := f.Integral(); relErr(got, m*m*m) > 1e-10 {
		t.Errorf("integral %v, want %d", got, m*m*m)
	}
}

// TestPeriodicLattice: in a periodic box every point of a cubic lattice is
// interior, so every density is exactly 1 per unit volume, and the field,
// on any grid and at any position, is the constant 1.
func TestPeriodicLattice(t *testing.T) {
	const m = 8
	xyz := lattice(m)
	_, f := mustField(t, xyz, nil, tess.Options{Seed: 2, Periodic: true, L: m})
	for i, rho := range f.Density() {
		if math.Abs(rho-1) > 1e-12 {
			t.Fatalf("point %d: density %v, want 1", i, rho)
		}
	}
	g := grid.Geometry{N: 10, L: 11, Origin: [3]float64{-3, 0.5, 2}}
	dst := make([]float64, g.Len())
	for _, sub := range []int{0, 2} {
		var out int
		if sub == 0 {
			out = f.SampleNodes(dst, g)
		} else {
			out = f.AverageCells(dst, g, sub)
		}
		if out != 0 {
			t.Errorf("sub %d: %d cells outside a periodic box", sub, out)
		}
		for i, x := range dst {
			if math.Abs(x-1) > 1e-12 {
				t.Fatalf("sub %d: cell %d: %v, want 1", sub, i, x)
			}
		}
	}
	if rho, ok := f.At([3]float64{-17.3, 100.1, 3.5}); !ok || math.Abs(rho-1) > 1e-12 {
		t.Errorf("At = %v, %v, want 1, true", rho, ok)
	}
}

// outsideHull reports whether p is outside the convex hull by more than
// tol (+1) or inside by more than tol (−1), from the hull faces' planes;
// 0 when it is within tol of the boundary.
func outsideHull(tt *tess.Tessellation, xyz []float64, p [3]float64, tol float64) int {
	hf := tt.HullFaces()
	worst := math.Inf(-1)
	for i := 0; i < len(hf); i += 3 {
		a, b, c := xyz[3*hf[i]:3*hf[i]+3], xyz[3*hf[i+1]:3*hf[i+1]+3], xyz[3*hf[i+2]:3*hf[i+2]+3]
		u := [3]float64{b[0] - a[0], b[1] - a[1], b[2] - a[2]}
		v := [3]float64{c[0] - a[0], c[1] - a[1], c[2] - a[2]}
		n := cross(u, v)
		d := dot(n, [3]float64{p[0] - a[0], p[1] - a[1], p[2] - a[2]}) / math.Sqrt(dot(n, n))
		worst = max(worst, d)
	}
	switch {
	case worst > tol:
		return 1
	case worst < -tol:
		return -1
	}
	return 0
}

// TestLinearField: linear interpolation inside a tetrahedron reproduces a
// linear function of position exactly (the defining property of the
// DTFE's piecewise-linear field, van de Weygaert & Schaap 2009), so vertex
// values a + b·x must come back exactly from At, SampleNodes and
// AverageCells (the midpoint rule is exact for linear functions) wherever
// the position is inside the hull, and nowhere outside (the hull faces'
// planes decide).
func TestLinearField(t *testing.T) {
	xyz := uniformPoints(2000, 11, 10)
	tt, err := tess.New(xyz, tess.Options{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	lin := func(p [3]float64) float64 { return 3 + 0.5*p[0] - 0.25*p[1] + 0.125*p[2] }
	vals := make([]float64, 2000)
	for i := range vals {
		vals[i] = lin([3]float64(xyz[3*i : 3*i+3]))
	}
	f := fromVertexValues(tt, xyz, vals)
	rng := rand.New(rand.NewPCG(4, 4))
	for range 2000 {
		p := [3]float64{12*rng.Float64() - 1, 12*rng.Float64() - 1, 12*rng.Float64() - 1}
		got, ok := f.At(p)
		switch outsideHull(tt, xyz, p, 1e-9) {
		case 1:
			if ok {
				t.Errorf("At(%v) = %v, true outside the hull", p, got)
			}
		case -1:
			if !ok || math.Abs(got-lin(p)) > 1e-12*math.Abs(lin(p)) {
				t.Errorf("At(%v) = %v, %v, want %v", p, got, ok, lin(p))
			}
		}
	}
	g := grid.Geometry{N: 16, L: 12, Origin: [3]float64{-1, -1, -1}}
	dst := make([]float64, g.Len())
	out := f.SampleNodes(dst, g)
	h := g.H()
	wantOut := 0
	for i := 0; i < g.N; i++ {
		for j := 0; j < g.N; j++ {
			for k := 0; k < g.N; k++ {
				p := [3]float64{g.Origin[0] + (float64(i)+0.5)*h, g.Origin[1] + (float64(j)+0.5)*h, g.Origin[2] + (float64(k)+0.5)*h}
				x := dst[g.Index(i, j, k)]
				switch outsideHull(tt, xyz, p, 1e-9) {
				case 1:
					wantOut++
					if !math.IsNaN(x) {
						t.Errorf("node %v outside the hull: %v, want NaN", p, x)
					}
				case -1:
					if math.Abs(x-lin(p)) > 1e-12*math.Abs(lin(p)) {
						t.Errorf("node %v: %v, want %v", p, x, lin(p))
					}
				default:
					t.Fatalf("node %v on the hull: choose another grid", p)
				}
			}
		}
	}
	if out != wantOut || out == 0 || out == g.Len() {
		t.Errorf("%d nodes outside, hull planes say %d", out, wantOut)
	}
	// cells with all 8 corners inside the (convex) hull
	out = f.AverageCells(dst, g, 3)
	full := 0
	for i := 0; i < g.N; i++ {
		for j := 0; j < g.N; j++ {
			for k := 0; k < g.N; k++ {
				inside := true
				for c := 0; c < 8; c++ {
					p := [3]float64{g.Origin[0] + float64(i+c&1)*h, g.Origin[1] + float64(j+c>>1&1)*h, g.Origin[2] + float64(k+c>>2&1)*h}
					inside = inside && outsideHull(tt, xyz, p, 1e-9) == -1
				}
				if !inside {
					continue
				}
				full++
				p := [3]float64{g.Origin[0] + (float64(i)+0.5)*h, g.Origin[1] + (float64(j)+0.5)*h, g.Origin[2] + (float64(k)+0.5)*h}
				if x := dst[g.Index(i, j, k)]; math.Abs(x-lin(p)) > 1e-12*math.Abs(lin(p)) {
					t.Errorf("cell %v: mean %v, want %v", p, x, lin(p))
				}
			}
		}
	}
	if full < 1000 || out >= wantOut {
		t.Errorf("%d cells inside the hull, %d outside (nodes outside: %d)", full, out, wantOut)
	}
}

// gridMean returns the mean of the non-NaN values of dst, their number,
// and the Monte Carlo standard error of the mean of n independent samples
// of the same spread, σ/√n.
func gridMean(dst []float64, n float64) (mean float64, count int, stderr float64) {
	s, s2 := 0.0, 0.0
	for _, x := range dst {
		if x == x {
			s += x
			s2 += x * x
			count++
		}
	}
	mean = s / float64(count)
	return mean, count, math.Sqrt(max(0, s2/float64(count)-mean*mean) / n)
}

// sameBits reports whether two grids are identical bit for bit.
func sameBits(a, b []float64) bool {
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// sampleAll returns SampleNodes (sub = 0) or AverageCells (sub ≥ 1) under
// GOMAXPROCS 1 and 2, failing unless they agree bit for bit.
func sampleAll(t *testing.T, f *Field, g grid.Geometry, sub int) ([]float64, int) {
	t.Helper()
	var res [][]float64
	var outs []int
	for _, procs := range []int{1, 2} {
		old := runtime.GOMAXPROCS(procs)
		dst := make([]float64, g.Len())
		var out int
		if sub == 0 {
			out = f.SampleNodes(dst, g)
		} else {
			out = f.AverageCells(dst, g, sub)
		}
		runtime.GOMAXPROCS(old)
		res, outs = append(res, dst), append(outs, out)
	}
	if outs[0] != outs[1] || !sameBits(res[0], res[1]) {
		t.Errorf("sub %d: GOMAXPROCS 1 and 2 give different grids", sub)
	}
	return res[0], outs[0]
}

// TestGridMean samples the field of 20000 uniform random points in a ball
// of radius 48 on grids over the cube [0, 100]³ around it. The nodes form
// a lattice placed at random with respect to the points and not aligned
// with their hull (points in a cube would have a hull aligned with the
// grid, and a biased count of the nodes inside), so H³ Σ ρ(node) over the nodes inside
// the hull and H³ × (their number) are unbiased estimates of the integral
// of the field over the hull — the total mass, by mass conservation
// (Schaap & van de Weygaert 2000) — and of the hull volume (a randomly
// shifted lattice rule is unbiased for any integrand), and their ratio,
// the grid mean, estimates total mass / hull volume. The errors are
// sampling errors, checked against three Monte Carlo standard errors of as
// many independent samples (regular samples do better). AverageCells with
// sub = 2 must be the block means of the nodes of the twice finer grid,
// which are its sub-samples; a grid twice as large as the cube must have
// every cell outside the cube outside the hull.
func TestGridMean(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 21))
	var xyz []float64
	for len(xyz) < 3*20000 {
		p := [3]float64{2*rng.Float64() - 1, 2*rng.Float64() - 1, 2*rng.Float64() - 1}
		if dot(p, p) < 1 {
			xyz = append(xyz, 50.3+48*p[0], 49.1+48*p[1], 50.7+48*p[2])
		}
	}
	tt, f := mustField(t, xyz, nil, tess.Options{Seed: 1})
	hullVol := 0.0
	for _, v := range tt.Volumes(nil) {
		hullVol += v
	}
	const mass = 20000.0
	for _, n := range []int{32, 64} {
		g := grid.Geometry{N: n, L: 100}
		dst, out := sampleAll(t, f, g, 0)
		h3 := g.H() * g.H() * g.H()
		s, s2, count := 0.0, 0.0, 0
		for _, x := range dst {
			if x == x {
				s, s2, count = s+x, s2+x*x, count+1
			}
		}
		if count+out != g.Len() {
			t.Fatalf("N %d: %d values and %d outside in %d cells", n, count, out, g.Len())
		}
		nt := float64(g.Len())
		integral, volume := h3*s, h3*float64(count)
		// standard errors of the lattice sums as sums of nt independent
		// samples of ρ·1_hull and of 1_hull
		seI := h3 * math.Sqrt(nt*(s2/nt-(s/nt)*(s/nt)))
		p := float64(count) / nt
		seV := h3 * math.Sqrt(nt*p*(1-p))
		mean, want := s/float64(count), mass/hullVol
		seMean := want * (seI/mass + seV/hullVol)
		t.Logf("N %d: integral %.6g (mass %g, %.2g se), volume %.6g (hull %.6g, %.2g se), mean %.6g (mass/volume %.6g, %.2g se)",
			n, integral, mass, (integral-mass)/seI, volume, hullVol, (volume-hullVol)/seV, mean, want, (mean-want)/seMean)
		if math.Abs(integral-mass) > 3*seI || math.Abs(volume-hullVol) > 3*seV || math.Abs(mean-want) > 3*seMean {
			t.Errorf("N %d: integral %v (mass %v, se %v), volume %v (hull %v, se %v), mean %v (mass/volume %v, se %v)",
				n, integral, mass, seI, volume, hullVol, seV, mean, want, seMean)
		}
		if out == 0 {
			t.Errorf("N %d: no node outside the hull of random points", n)
		}
	}
	fine, _ := sampleAll(t, f, grid.Geometry{N: 64, L: 100}, 0)
	g := grid.Geometry{N: 32, L: 100}
	avg, out := sampleAll(t, f, g, 2)
	gf := grid.Geometry{N: 64, L: 100}
	empty := 0
	for i := 0; i < 32; i++ {
		for j := 0; j < 32; j++ {
			for k := 0; k < 32; k++ {
				s, c := 0.0, 0
				for a := 0; a < 8; a++ {
					if x := fine[gf.Index(2*i+a&1, 2*j+a>>1&1, 2*k+a>>2)]; x == x {
						s, c = s+x, c+1
					}
				}
				got := avg[g.Index(i, j, k)]
				if c == 0 {
					empty++
					if !math.IsNaN(got) {
						t.Errorf("cell %d %d %d: %v, want NaN", i, j, k, got)
					}
				} else if relErr(got, s/float64(c)) > 1e-12 {
					t.Errorf("cell %d %d %d: %v, block mean of the fine nodes %v", i, j, k, got, s/float64(c))
				}
			}
		}
	}
	if out != empty {
		t.Errorf("AverageCells: %d cells outside, %d without a sub-sample inside", out, empty)
	}
	big := grid.Geometry{N: 32, L: 200, Origin: [3]float64{-50, -50, -50}}
	for _, sub := range []int{0, 2} {
		dst, out := sampleAll(t, f, big, sub)
		// cells i < 8 or i ≥ 24 on any axis lie outside [0, 100]³, which
		// holds the ball
		for i := 0; i < 32; i++ {
			for j := 0; j < 32; j++ {
				for k := 0; k < 32; k++ {
					if min(i, j, k) < 8 || max(i, j, k) >= 24 {
						if x := dst[big.Index(i, j, k)]; !math.IsNaN(x) {
							t.Fatalf("sub %d: cell %d %d %d outside the cube: %v", sub, i, j, k, x)
						}
					}
				}
			}
		}
		if out < 32*32*32-16*16*16 {
			t.Errorf("sub %d: %d cells outside, fewer than the %d outside the cube", sub, out, 32*32*32-16*16*16)
		}
	}
}

// TestPeriodicGrid: in a periodic box the samplers cover the whole box
// (no NaN), the grid integral mean × L³ is the total mass within the
// sampling error (three Monte Carlo standard errors, as in TestGridMean;
// exact mass conservation, Schaap & van de Weygaert 2000), and a grid
// that straddles the box edges gives the same values as At at the
// positions taken modulo the box (minimum-image interpolation).
func TestPeriodicGrid(t *testing.T) {
	const L = 100.0
	xyz := uniformPoints(20000, 31, L)
	_, f := mustField(t, xyz, nil, tess.Options{Seed: 1, Periodic: true, L: L})
	g := grid.Geometry{N: 32, L: L}
	for _, sub := range []int{0, 2} {
		dst, out := sampleAll(t, f, g, sub)
		if out != 0 || slices.ContainsFunc(dst, math.IsNaN) {
			t.Fatalf("sub %d: %d cells outside a periodic box", sub, out)
		}
		mean, _, se := gridMean(dst, float64(g.Len()*max(1, sub*sub*sub)))
		total := mean * L * L * L
		t.Logf("sub %d: grid integral %.6g, total mass 20000, error %.2g standard errors", sub, total, (mean-20000/(L*L*L))/se)
		if math.Abs(total-20000) > 3*se*L*L*L {
			t.Errorf("sub %d: grid integral %v, total mass 20000, beyond 3 standard errors %v", sub, total, se*L*L*L)
		}
	}
	off := grid.Geometry{N: 8, L: 80, Origin: [3]float64{-30, 10, 55}}
	dst, out := sampleAll(t, f, off, 0)
	if out != 0 {
		t.Errorf("%d nodes outside a periodic box", out)
	}
	h := off.H()
	for i := 0; i < off.N; i++ {
		for j := 0; j < off.N; j++ {
			for k := 0; k < off.N; k++ {
				p := [3]float64{off.Origin[0] + (float64(i)+0.5)*h, off.Origin[1] + (float64(j)+0.5)*h, off.Origin[2] + (float64(k)+0.5)*h}
				want, ok := f.At(p)
				if x := dst[off.Index(i, j, k)]; !ok || relErr(x, want) > 1e-9 {
					t.Errorf("node %v: %v, At gives %v (%v)", p, x, want, ok)
				}
			}
		}
	}
	a, _ := f.At([3]float64{12.5, 99.9, 0.1})
	b, ok := f.At([3]float64{12.5 - 3*L, 99.9 - L, 0.1 + 2*L})
	if !ok || relErr(a, b) > 1e-9 {
		t.Errorf("At is not periodic: %v, %v", a, b)
	}
}

// TestErrors checks the errors New returns and the panics for programmer
// errors.
func TestErrors(t *testing.T) {
	xyz := uniformPoints(100, 1, 1)
	tt, err := tess.New(xyz, tess.Options{})
	if err != nil {
		t.Fatal(err)
	}
	w := make([]float64, 100)
	for _, bad := range []float64{-1, math.NaN(), math.Inf(1)} {
		w[17] = bad
		var we *WeightError
		if _, err := New(tt, xyz, w); !errors.As(err, &we) || we.Row != 17 {
			t.Errorf("weight %v: error %v, want a WeightError for row 17", bad, err)
		}
	}
	scaled := slices.Clone(xyz)
	for i := range scaled {
		scaled[i] *= 2
	}
	if _, err := New(tt, scaled, nil); !errors.Is(err, ErrMismatch) {
		t.Errorf("other coordinates: error %v, want ErrMismatch", err)
	}
	f, err := New(tt, xyz, nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, ok := f.At([3]float64{math.NaN(), 0, 0}); ok {
		t.Error("At(NaN) ok")
	}
	panics := func(name string, fn func()) {
		defer func() {
			if recover() == nil {
				t.Errorf("%s: no panic", name)
			}
		}()
		fn()
	}
	panics("short xyz", func() { New(tt, xyz[:30], nil) })
	panics("short weights", func() { New(tt, xyz, w[:5]) })
	panics("short grid", func() { f.SampleNodes(make([]float64, 7), grid.Geometry{N: 2, L: 1}) })
	panics("odd grid", func() { f.SampleNodes(make([]float64, 27), grid.Geometry{N: 3, L: 1}) })
	panics("sub 0", func() { f.AverageCells(make([]float64, 8), grid.Geometry{N: 2, L: 1}, 0) })
}
