package transport

import (
	"bufio"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"runtime"
	"strconv"
	"strings"
	"testing"
)

// minImage returns d reduced to [−L/2, L/2].
func minImage(d, L float64) float64 { return d - L*math.Round(d/L) }

// maxLagrError returns max_i max_axis |Lagr_i − q_i| (minimum image).
func maxLagrError(lagr, q []float64, L float64) float64 {
	m := 0.0
	for i := range q {
		m = math.Max(m, math.Abs(minImage(lagr[i]-q[i], L)))
	}
	return m
}

// checkVolumes fails unless every cell volume is within tol of its mass.
func checkVolumes(t *testing.T, res *Result, tol float64) {
	t.Helper()
	worst := 0.0
	for i, m := range res.Mass {
		worst = math.Max(worst, math.Abs(res.Volume[i]-m)/m)
	}
	if worst > tol {
		t.Errorf("max relative volume error %.3g > Tol %g", worst, tol)
	}
}

// A Zel'dovich plane wave before shell crossing: lattice points q moved to
// x = q + A sin(k q_x) e_x with A k = 0.5 < 1. The map is the gradient of
// |q|²/2 − (A/k) cos(k q_x), convex since A k < 1, hence the unique optimal
// map (Brenier 1991, Comm. Pure Appl. Math. 44, 375), so the centroids of the
// Laguerre cells must return the lattice. Each plane of points moves rigidly,
// so the exact semi-discrete cells are the lattice cubes themselves.
func TestZeldovichPlaneWave(t *testing.T) {
	const ng, L = 16, 50.0
	h := L / ng
	q := lattice(ng, L)
	k := 2 * math.Pi / L
	A := 0.5 / k
	x := append([]float64(nil), q...)
	for i := 0; i < len(x); i += 3 {
		x[i] += A * math.Sin(k*q[i])
	}
	wrapAll(x, L)
	opt := Options{Hi: [3]float64{L, L, L}, Periodic: true}
	res, err := Solve(x, nil, opt)
	if err != nil {
		t.Fatal(err)
	}
	checkVolumes(t, res, DefaultTol)
	e := maxLagrError(res.Lagr, q, L) / h
	t.Logf("plane wave: max |Lagr − q| = %.3g spacings after %d iterations", e, len(res.Stats.Levels[0].Iterations))
	if e > 0.01 {
		t.Errorf("max |Lagr − q| = %.3g grid spacings, want ≤ 0.01 (Brenier 1991)", e)
	}
	// The displacement must be the plane wave.
	worst := 0.0
	for i := 0; i < len(q); i += 3 {
		want := [3]float64{A * math.Sin(k*q[i]), 0, 0}
		for a := 0; a < 3; a++ {
			worst = math.Max(worst, math.Abs(res.Disp[i+a]-want[a]))
		}
	}
	if worst/h > 0.01 {
		t.Errorf("max displacement error %.3g grid spacings, want ≤ 0.01", worst/h)
	}
}

// A smooth three-dimensional Zel'dovich displacement (30 Fourier modes of a
// potential, Hessian bounded by 0.8 < 1, so no shell crossing): the map is
// again the gradient of a convex function and optimal (Brenier 1991). Unlike
// the plane wave the semi-discrete cells are not exactly the lattice cubes,
// so the centroids differ from q by a discretisation error of second order
// in the spacing; 1% of the spacing bounds it here (measured 0.5–0.7%).
func TestZeldovichRandomField(t *testing.T) {
	const ng, L = 24, 100.0
	h := L / ng
	q := lattice(ng, L)
	x := newRandomModes(30, 3, L, 0.8, 11).displace(q)
	wrapAll(x, L)
	res, err := Solve(x, nil, Options{Hi: [3]float64{L, L, L}, Periodic: true})
	if err != nil {
		t.Fatal(err)
	}
	checkVolumes(t, res, DefaultTol)
	e := maxLagrError(res.Lagr, q, L) / h
	t.Logf("random field: max |Lagr − q| = %.3g spacings after %d iterations", e, len(res.Stats.Levels[0].Iterations))
	if e > 0.01 {
		t.Errorf("max |Lagr − q| = %.3g grid spacings, want ≤ 0.01 (Brenier 1991)", e)
	}
}

// Random points with unequal masses, periodic and clipped: every cell
// volume must equal its mass to the tolerance (the definition of the
// semi-discrete solution, Mérigot 2011 eq. 1), the masses must be scaled to
// the box volume, and the iteration records must end below the tolerance.
func TestVolumesMatchMasses(t *testing.T) {
	for _, periodic := range []bool{true, false} {
		for _, tol := range []float64{1e-3, 1e-6} {
			rng := rand.New(rand.NewPCG(3, 4))
			const n = 3000
			pos := make([]float64, 3*n)
			mass := make([]float64, n)
			lo, hi := [3]float64{-10, 0, 5}, [3]float64{30, 20, 25}
			for i := 0; i < n; i++ {
				for a := 0; a < 3; a++ {
					pos[3*i+a] = lo[a] + (hi[a]-lo[a])*rng.Float64()
				}
				mass[i] = 0.5 + rng.Float64()
			}
			calls := 0
			progress := func(iter int, maxErr float64) {
				calls++
				if iter != calls || !(maxErr >= 0) {
					t.Errorf("Progress(%d, %g) at call %d", iter, maxErr, calls)
				}
			}
			res, err := Solve(pos, mass, Options{Lo: lo, Hi: hi, Periodic: periodic, Tol: tol, Progress: progress})
			if err != nil {
				t.Fatal(err)
			}
			checkVolumes(t, res, tol)
			sum := 0.0
			for _, m := range res.Mass {
				sum += m
			}
			if v := 40.0 * 20 * 20; math.Abs(sum-v) > 1e-9*v {
				t.Errorf("masses sum to %g, want the box volume %g", sum, v)
			}
			lev := res.Stats.Levels[len(res.Stats.Levels)-1]
			its := lev.Iterations
			if len(its) == 0 || its[len(its)-1].MaxErr > tol {
				t.Errorf("periodic %v: iteration records %+v do not end below %g", periodic, its, tol)
			}
			if calls != len(its) {
				t.Errorf("Progress called %d times for %d iterations", calls, len(its))
			}
			for _, it := range its {
				if it.Alpha <= 0 || it.Alpha > 1 || it.CGIter < 1 || it.Evals < 1 {
					t.Errorf("bad iteration record %+v", it)
				}
			}
			t.Logf("periodic %v tol %g: %d iterations, start error %.3g", periodic, tol, len(its), lev.StartMaxErr)
		}
	}
}

// With equal masses on an unperturbed lattice the Voronoi cells are the
// lattice cubes, of equal volume, so ψ = 0 is the solution and the
// displacement vanishes (to rounding: 1e-9 of the spacing), in both modes.
func TestLatticeZeroDisplacement(t *testing.T) {
	for _, periodic := range []bool{true, false} {
		const ng, L = 12, 24.0
		h := L / ng
		q := lattice(ng, L)
		res, err := Solve(q, nil, Options{Hi: [3]float64{L, L, L}, Periodic: periodic})
		if err != nil {
			t.Fatal(err)
		}
		worst := 0.0
		for _, d := range res.Disp {
			worst = math.Max(worst, math.Abs(d))
		}
		if worst > 1e-9*h {
			t.Errorf("periodic %v: max |displacement| = %.3g spacings, want ≤ 1e-9", periodic, worst/h)
		}
		if e := maxLagrError(res.Lagr, q, L); e > 1e-9*h {
			t.Errorf("periodic %v: max |Lagr − q| = %.3g", periodic, e)
		}
		if its := res.Stats.Levels[0].Iterations; len(its) != 0 {
			t.Errorf("periodic %v: %d Newton iterations, want 0 (start already exact)", periodic, len(its))
		}
		// Every cell is a cube of side h, whose second moment about its
		// centre is 3·h²/12·h³ = h⁵/4, so the cost is n·h⁵/4.
		n := float64(ng * ng * ng)
		if got, want := res.Cost, n*math.Pow(h, 5)/4; math.Abs(got-want) > 1e-9*want {
			t.Errorf("periodic %v: cost %g, want %g", periodic, got, want)
		}
	}
}

// reference reads testdata/transport/reference.txt.
func reference(t *testing.T) (pos []float64, upper map[int]float64) {
	t.Helper()
	f, err := os.Open("../../testdata/transport/reference.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	upper = map[int]float64{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		fs := strings.Fields(sc.Text())
		if len(fs) == 0 || strings.HasPrefix(fs[0], "#") || fs[0] == "points" {
			continue
		}
		if fs[0] == "upper" {
			g, err1 := strconv.Atoi(strings.TrimPrefix(fs[1], "g="))
			v, err2 := strconv.ParseFloat(fs[3], 64)
			if err1 != nil || err2 != nil {
				t.Fatalf("bad line %q", sc.Text())
			}
			upper[g] = v
			continue
		}
		for _, s := range fs {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatalf("bad line %q", sc.Text())
			}
			pos = append(pos, v)
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return pos, upper
}

// quadratureCost integrates Σ_i ∫_{L_i} |x − y_i|² dx over the unit box by
// the midpoint rule on g³ cubes, independently of package laguerre: each
// cube centre is assigned by brute force to the Laguerre cell with the least
// power distance |x − y_j|² − ψ_j (minimum image in periodic mode) and
// contributes h³(|x − y_i|² + h²/4), the exact integral of |x − y_i|² over
// the cube. Only cubes cut by a cell boundary are misassigned.
func quadratureCost(y, psi []float64, g int, periodic bool) float64 {
	n := len(psi)
	h := 1 / float64(g)
	total := 0.0
	var x [3]float64
	for a := 0; a < g; a++ {
		x[0] = (float64(a) + 0.5) * h
		for b := 0; b < g; b++ {
			x[1] = (float64(b) + 0.5) * h
			for c := 0; c < g; c++ {
				x[2] = (float64(c) + 0.5) * h
				best, bd := math.Inf(1), 0.0
				for j := 0; j < n; j++ {
					d := 0.0
					for k := 0; k < 3; k++ {
						e := x[k] - y[3*j+k]
						if periodic {
							e = minImage(e, 1)
						}
						d += e * e
					}
					if d-psi[j] < best {
						best, bd = d-psi[j], d
					}
				}
				total += bd
			}
		}
	}
	return total/float64(g*g*g) + h*h/4
}

// The transport cost against the exact assignment of a fine lattice
// computed by scipy.optimize.linear_sum_assignment (Debian python3-scipy
// 1.10.1; testdata/transport/make_reference.py), clipped unit box, 125
// points. The assignment value U(h) (with the exact h²/4 cube term) is the
// cost of a feasible plan, so the optimum lies below it. Its excess over the
// optimum comes from cubes cut by cell boundaries: a fraction O(h) of the
// cubes, each misplaced at an extra cost O(h), so U(h) = C + a h² + o(h²),
// and the two lattices (h = 1/15, 1/20) give the Richardson extrapolation
// C ≈ U(1/20) − (U(1/15) − U(1/20))·(1/20)²/((1/15)² − (1/20)²). The
// solver's cost must be below U(1/20) and within 1% of the extrapolation;
// a brute-force quadrature of the solved weights must agree with it too.
func TestCostAgainstAssignment(t *testing.T) {
	pos, upper := reference(t)
	if len(pos) != 3*125 || upper[20] == 0 || upper[15] == 0 {
		t.Fatalf("reference: %d coordinates, bounds %v", len(pos), upper)
	}
	res, err := Solve(pos, nil, Options{Hi: [3]float64{1, 1, 1}, Tol: 1e-8})
	if err != nil {
		t.Fatal(err)
	}
	u15, u20 := upper[15], upper[20]
	h15, h20 := 1.0/15, 1.0/20
	ext := u20 - (u15-u20)*h20*h20/(h15*h15-h20*h20)
	quad := quadratureCost(pos, res.Psi, 128, false)
	t.Logf("Result.Cost %.7g (DispCost %.7g); scipy U(1/15) %.7g, U(1/20) %.7g, extrapolated %.7g; quadrature %.7g",
		res.Cost, res.DispCost, u15, u20, ext, quad)
	if res.Cost > u20 {
		t.Errorf("cost %.7g above the feasible scipy assignment bound %.7g", res.Cost, u20)
	}
	if d := math.Abs(res.Cost-ext) / ext; d > 0.01 {
		t.Errorf("cost %.7g differs from the extrapolated scipy optimum %.7g by %.2g%%", res.Cost, ext, 100*d)
	}
	if d := math.Abs(res.Cost-quad) / quad; d > 2e-3 {
		t.Errorf("cost %.7g differs from the quadrature %.7g by %.2g%%", res.Cost, quad, 100*d)
	}
}

// In periodic mode the cost (cells rebuilt from laguerre's facets) must
// match the brute-force quadrature of the same weights (midpoint rule on
// 128³ cubes, error below 0.2% here).
func TestCostPeriodicQuadrature(t *testing.T) {
	pos, _ := reference(t)
	res, err := Solve(pos, nil, Options{Hi: [3]float64{1, 1, 1}, Periodic: true, Tol: 1e-8})
	if err != nil {
		t.Fatal(err)
	}
	quad := quadratureCost(pos, res.Psi, 128, true)
	t.Logf("periodic: Result.Cost %.7g, quadrature %.7g", res.Cost, quad)
	if d := math.Abs(res.Cost-quad) / quad; d > 2e-3 {
		t.Errorf("cost %.7g differs from the quadrature %.7g by %.2g%%", res.Cost, quad, 100*d)
	}
}

// Results must not depend on the number of threads (filigree rule): compare
// bit for bit with GOMAXPROCS 1 and 2.
func TestThreadsIndependent(t *testing.T) {
	const ng, L = 14, 30.0
	q := lattice(ng, L)
	x := newRandomModes(20, 3, L, 0.9, 7).displace(q)
	wrapAll(x, L)
	for _, periodic := range []bool{true, false} {
		var got [2]*Result
		for k, procs := range []int{1, 2} {
			old := runtime.GOMAXPROCS(procs)
			res, err := Solve(x, nil, Options{Hi: [3]float64{L, L, L}, Periodic: periodic, Threads: procs, Tol: 1e-6})
			runtime.GOMAXPROCS(old)
			if err != nil {
				t.Fatal(err)
			}
			got[k] = res
		}
		for i := range got[0].Psi {
			if got[0].Psi[i] != got[1].Psi[i] {
				t.Fatalf("periodic %v: psi[%d] differs: %v vs %v", periodic, i, got[0].Psi[i], got[1].Psi[i])
			}
		}
		for i := range got[0].Lagr {
			if got[0].Lagr[i] != got[1].Lagr[i] || got[0].Disp[i] != got[1].Disp[i] {
				t.Fatalf("periodic %v: Lagr/Disp[%d] differ", periodic, i)
			}
		}
		if got[0].Cost != got[1].Cost {
			t.Errorf("periodic %v: cost differs: %v vs %v", periodic, got[0].Cost, got[1].Cost)
		}
	}
}

// The multilevel start (Mérigot 2011) must reach the same solution.
func TestMultilevel(t *testing.T) {
	const ng, L = 20, 40.0
	q := lattice(ng, L)
	x := newRandomModes(20, 3, L, 0.7, 9).displace(q)
	wrapAll(x, L)
	opt := Options{Hi: [3]float64{L, L, L}, Periodic: true, Tol: 1e-6}
	single, err := Solve(x, nil, opt)
	if err != nil {
		t.Fatal(err)
	}
	opt.Multilevel = true
	multi, err := Solve(x, nil, opt)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("fine-level Newton steps: Voronoi start %d, multilevel start %d (start scale %g)",
		len(single.Stats.Levels[0].Iterations), len(multi.Stats.Levels[len(multi.Stats.Levels)-1].Iterations),
		multi.Stats.Levels[len(multi.Stats.Levels)-1].StartScale)
	if len(multi.Stats.Levels) < 2 {
		t.Fatalf("multilevel solve has %d levels", len(multi.Stats.Levels))
	}
	checkVolumes(t, multi, 1e-6)
	h := L / ng
	for i := range single.Lagr {
		if d := math.Abs(minImage(single.Lagr[i]-multi.Lagr[i], L)); d > 1e-4*h {
			t.Fatalf("Lagr[%d] differs by %.3g spacings between starts", i, d/h)
		}
	}
}

// Bad input is reported, not solved.
func TestSolveErrors(t *testing.T) {
	box := Options{Hi: [3]float64{1, 1, 1}}
	cases := []struct {
		name string
		pos  []float64
		mass []float64
		opt  Options
	}{
		{"no points", nil, nil, box},
		{"ragged coordinates", []float64{0.1, 0.2}, nil, box},
		{"mass count", []float64{0.1, 0.2, 0.3}, []float64{1, 2}, box},
		{"zero mass", []float64{0.1, 0.2, 0.3}, []float64{0}, box},
		{"NaN mass", []float64{0.1, 0.2, 0.3}, []float64{math.NaN()}, box},
		{"NaN coordinate", []float64{0.1, math.NaN(), 0.3}, nil, box},
		{"outside clipped box", []float64{0.1, 1.5, 0.3}, nil, box},
		{"empty box", []float64{0.1, 0.2, 0.3}, nil, Options{}},
		{"negative Tol", []float64{0.1, 0.2, 0.3}, nil, Options{Hi: [3]float64{1, 1, 1}, Tol: -1}},
		{"coincident points", []float64{0.1, 0.2, 0.3, 0.1, 0.2, 0.3, 0.7, 0.7, 0.7}, nil, box},
	}
	for _, c := range cases {
		if _, err := Solve(c.pos, c.mass, c.opt); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
	// Too few iterations: the last iterate comes back with ErrNotConverged.
	rng := rand.New(rand.NewPCG(5, 6))
	pos := make([]float64, 3*500)
	for i := range pos {
		pos[i] = rng.Float64()
	}
	res, err := Solve(pos, nil, Options{Hi: [3]float64{1, 1, 1}, MaxIter: 1, Tol: 1e-9})
	if !errors.Is(err, ErrNotConverged) || res == nil || len(res.Lagr) != len(pos) {
		t.Errorf("MaxIter 1: err %v, result %v", err, res != nil)
	}
}

// The Hessian used by Newton must be the derivative of the cell volumes:
// ∂vol_i/∂ψ_j = −A_ij/(2|y_i − y_j|) for neighbours and ∂vol_j/∂ψ_j =
// Σ_i A_ij/(2|y_i − y_j|) for the power distance |x − y|² − ψ (the volume
// derivative of Kitagawa, Mérigot & Thibert 2019 for the cost |x − y|²/2 is
// A_ij/|y_i − y_j|; with |x − y|² the facet moves by δψ/(2|y_i − y_j|)).
// Checked against central finite differences of package laguerre's volumes.
func TestHessianFiniteDifference(t *testing.T) {
	for _, periodic := range []bool{true, false} {
		rng := rand.New(rand.NewPCG(8, 9))
		const n = 400
		y := make([]float64, 3*n)
		for i := range y {
			y[i] = rng.Float64()
		}
		psi := make([]float64, n)
		s2 := math.Pow(1.0/n, 2.0/3)
		for i := range psi {
			psi[i] = 0.2 * s2 * (rng.Float64() - 0.5)
		}
		opt := Options{Hi: [3]float64{1, 1, 1}, Periodic: periodic}
		m := make([]float64, n)
		s, err := newNewton(y, m, opt)
		if err != nil {
			t.Fatal(err)
		}
		if err := s.ix.Compute(psi, s.cur); err != nil {
			t.Fatal(err)
		}
		s.laplacian()
		c := s.cur
		for _, j := range []int{0, 17, 123, 399} {
			delta := 1e-6 * s2
			vol := func(dj float64) []float64 {
				p := append([]float64(nil), psi...)
				p[j] += dj
				if err := s.ix.Compute(p, s.trial); err != nil {
					t.Fatal(err)
				}
				return append([]float64(nil), s.trial.Volume...)
			}
			vp, vm := vol(delta), vol(-delta)
			fd := func(i int) float64 { return (vp[i] - vm[i]) / (2 * delta) }
			if got, want := fd(j), s.diag[j]; math.Abs(got-want) > 1e-4*want {
				t.Errorf("periodic %v: ∂vol_%d/∂ψ_%d = %.6g by differences, Hessian diagonal %.6g", periodic, j, j, got, want)
			}
			for k := c.NbrStart[j]; k < c.NbrStart[j+1]; k++ {
				i := int(c.Nbr[k])
				if got, want := fd(i), -s.w[k]; math.Abs(got-want) > 1e-4*s.diag[j] {
					t.Errorf("periodic %v: ∂vol_%d/∂ψ_%d = %.6g by differences, Hessian %.6g", periodic, i, j, got, want)
				}
			}
		}
	}
}
