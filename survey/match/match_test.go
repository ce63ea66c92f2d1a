package match

import (
	"errors"
	"math"
	"math/rand/v2"
	"path/filepath"
	"runtime"
	"slices"
	"testing"

	"github.com/filigree-survey/filigree/survey"
)

const refDir = "../../testdata/match"

// refRadiusArcsec is RADIUS_ARCSEC of testdata/match/make_reference.py.
const refRadiusArcsec = 5.0

// sepTolArcsec is the agreement asked of separations against astropy: both
// evaluate Vincenty's formula in float64 from the same degrees, so they
// differ by rounding alone: about 2e-11 arcsec, and up to 2e-10 arcsec for
// pairs across RA 0/360, where astropy takes the sine of a difference near
// 2π rad (ulp 8.9e-16 rad = 1.8e-10 arcsec) and Separation reduces it to
// near 0 first.
const sepTolArcsec = 1e-9

type catalogue struct {
	ra, dec, z, mag []float64
	id              []int64
}

func readCatalogue(t *testing.T, name string) catalogue {
	t.Helper()
	tab, err := survey.Read(filepath.Join(refDir, name), survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	col := func(n string, k survey.Kind) *survey.Column {
		c := tab.Col(n)
		if c == nil || c.Kind != k {
			t.Fatalf("%s: column %s missing or not %v", name, n, k)
		}
		return c
	}
	return catalogue{
		ra: col("ra", survey.Float64).F, dec: col("dec", survey.Float64).F,
		z: col("z", survey.Float64).F, mag: col("mag", survey.Float64).F,
		id: col("id", survey.Int64).I,
	}
}

type pair struct {
	l, r int32
	sep  float64 // degrees
}

func readPairs(t *testing.T, name string) []pair {
	t.Helper()
	tab, err := survey.Read(filepath.Join(refDir, name), survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	out := make([]pair, tab.Len())
	l, r, s := tab.Col("left"), tab.Col("right"), tab.Col("sep_deg")
	for i := range out {
		out[i] = pair{int32(l.I[i]), int32(r.I[i]), s.F[i]}
	}
	return out
}

func pairsOf(r *Result) []pair {
	out := make([]pair, len(r.Left))
	for i := range out {
		out[i] = pair{r.Left[i], r.Right[i], r.Sep[i]}
	}
	return out
}

// comparePairs checks that got and want hold the same pairs, in the same
// order, with separations within sepTolArcsec.
func comparePairs(t *testing.T, what string, got, want []pair) {
	t.Helper()
	if len(got) != len(want) {
		t.Errorf("%s: %d pairs, astropy %d", what, len(got), len(want))
	}
	bad, worst := 0, 0.0
	defer func() {
		t.Logf("%s: %d pairs, largest separation difference from astropy %.3g arcsec", what, len(want), worst)
	}()
	for i := range min(len(got), len(want)) {
		g, w := got[i], want[i]
		if g.l == w.l && g.r == w.r {
			worst = max(worst, math.Abs(g.sep-w.sep)*3600)
		}
		if g.l != w.l || g.r != w.r || !(math.Abs(g.sep-w.sep)*3600 <= sepTolArcsec) {
			if bad++; bad <= 5 {
				t.Errorf("%s: pair %d is (%d, %d, %.17g deg), astropy (%d, %d, %.17g deg)", what, i, g.l, g.r, g.sep, w.l, w.r, w.sep)
			}
		}
	}
}

// Nearest counterparts against astropy 5.2.1 SkyCoord.match_to_catalog_sky
// (testdata/match/nearest.csv, made by make_reference.py), on catalogues
// with clusters at both poles, across RA 0/360 and with exact duplicates.
func TestSkyNearestAstropy(t *testing.T) {
	L, R := readCatalogue(t, "left.csv"), readCatalogue(t, "right.csv")
	res, err := Sky(L.ra, L.dec, R.ra, R.dec, refRadiusArcsec/3600, Options{})
	if err != nil {
		t.Fatal(err)
	}
	comparePairs(t, "nearest", pairsOf(res), readPairs(t, "nearest.csv"))
	// astropy 5.2.1 search_around_sky (all.csv): counterparts per left row.
	want := make([]int32, len(L.ra))
	for _, p := range readPairs(t, "all.csv") {
		want[p.l]++
	}
	if !slices.Equal(res.Count, want) {
		t.Errorf("counts differ from astropy search_around_sky")
	}
}

// All counterparts against astropy 5.2.1 search_around_sky
// (testdata/match/all.csv, sorted there by left row, separation, right row).
func TestSkyAllAstropy(t *testing.T) {
	L, R := readCatalogue(t, "left.csv"), readCatalogue(t, "right.csv")
	res, err := Sky(L.ra, L.dec, R.ra, R.dec, refRadiusArcsec/3600, Options{All: true})
	if err != nil {
		t.Fatal(err)
	}
	got := pairsOf(res)
	for i := 1; i < len(got); i++ {
		a, b := got[i-1], got[i]
		if a.l > b.l || (a.l == b.l && (a.sep > b.sep || (a.sep == b.sep && a.r >= b.r))) {
			t.Fatalf("pairs %d and %d out of order: %v %v", i-1, i, a, b)
		}
	}
	// Rows of one left row whose separations differ by rounding only could
	// be ordered differently by the two computations: compare in (left,
	// right) order, which is unambiguous.
	want := readPairs(t, "all.csv")
	byRow := func(a, b pair) int {
		if a.l != b.l {
			return int(a.l - b.l)
		}
		return int(a.r - b.r)
	}
	slices.SortFunc(got, byRow)
	slices.SortFunc(want, byRow)
	comparePairs(t, "all", got, want)
}

// A radius of zero matches only identical positions: astropy 5.2.1
// search_around_sky with seplimit 0 (testdata/match/zero.csv).
func TestSkyZeroRadiusAstropy(t *testing.T) {
	L, R := readCatalogue(t, "left.csv"), readCatalogue(t, "right.csv")
	res, err := Sky(L.ra, L.dec, R.ra, R.dec, 0, Options{All: true})
	if err != nil {
		t.Fatal(err)
	}
	want := readPairs(t, "zero.csv")
	if len(want) == 0 {
		t.Fatal("reference has no identical positions")
	}
	comparePairs(t, "zero radius", pairsOf(res), want)
	for _, p := range want {
		if L.ra[p.l] != R.ra[p.r] || L.dec[p.l] != R.dec[p.r] {
			t.Errorf("zero-radius pair (%d, %d) is not an exact duplicate", p.l, p.r)
		}
	}
}

// The result must not depend on the number of threads (rules: parallel.For
// with fixed chunks).
func TestSkyThreadIndependent(t *testing.T) {
	L, R := readCatalogue(t, "left.csv"), readCatalogue(t, "right.csv")
	var runs []*Result
	for _, procs := range []int{1, 2, 4} {
		old := runtime.GOMAXPROCS(procs)
		r, err := Sky(L.ra, L.dec, R.ra, R.dec, 20.0/3600, Options{All: true})
		runtime.GOMAXPROCS(old)
		if err != nil {
			t.Fatal(err)
		}
		runs = append(runs, r)
	}
	for _, r := range runs[1:] {
		if !slices.Equal(r.Left, runs[0].Left) || !slices.Equal(r.Right, runs[0].Right) ||
			!slices.Equal(r.Sep, runs[0].Sep) || !slices.Equal(r.Count, runs[0].Count) {
			t.Fatal("results differ between thread counts")
		}
	}
}

// Separations in cases with exact answers from spherical geometry: along a
// meridian through a pole, across RA 0/360, antipodes, a small circle (the
// chord 2 cos δ sin(Δα/2) gives the angle), and identical points (exactly 0).
func TestSeparationExact(t *testing.T) {
	for _, c := range []struct {
		ra1, dec1, ra2, dec2, want float64
	}{
		{0, 0, 180, 0, 180},                       // antipodes on the equator
		{10, 30, 190, -30, 180},                   // antipodes off the equator
		{10, 89.999, 190, 89.999, 0.002},          // across the north pole
		{77, -89.9999999, 257, -89.9999999, 2e-7}, // across the south pole
		{359.9999, 0, 0.0001, 0, 0.0002},          // across RA 0/360 on the equator
		{359.5, 20, 360.5, 20, 2 * math.Asin(math.Cos(20*deg)*math.Sin(0.5*deg)) / deg}, // RA beyond 360
		{0, 90, 123, 90, 0}, // the pole at any RA
		{0, 0, 0, 45, 45},   // along a meridian
		{0, 0, 90, 0, 90},   // along the equator
	} {
		got := Separation(c.ra1, c.dec1, c.ra2, c.dec2)
		if math.Abs(got-c.want) > 1e-12*math.Max(1, c.want) {
			t.Errorf("Separation(%v, %v, %v, %v) = %.17g, want %.17g", c.ra1, c.dec1, c.ra2, c.dec2, got, c.want)
		}
	}
	if got := Separation(12.345, -6.789, 12.345, -6.789); got != 0 {
		t.Errorf("identical points: separation %g, want exactly 0", got)
	}
}

// Exact duplicates: the nearest is the lowest right row, --all lists each
// duplicate, and counts include them (spec: ties to the lower right row).
func TestSkyDuplicates(t *testing.T) {
	lra, ldec := []float64{10, 10, 200}, []float64{-5, -5, 89.9999999}
	rra := []float64{10.0001, 10, 10, 20, 20, 200}
	rdec := []float64{-5, -5, -5, 89.9999999, 89.9999999, 89.9999999}
	near, err := Sky(lra, ldec, rra, rdec, 1.0/3600, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(near.Left, []int32{0, 1, 2}) || !slices.Equal(near.Right, []int32{1, 1, 5}) {
		t.Errorf("nearest: left %v right %v, want [0 1 2] [1 1 5]", near.Left, near.Right)
	}
	if !slices.Equal(near.Count, []int32{3, 3, 3}) {
		t.Errorf("counts %v, want [3 3 3]", near.Count)
	}
	all, err := Sky(lra, ldec, rra, rdec, 1.0/3600, Options{All: true})
	if err != nil {
		t.Fatal(err)
	}
	// Left row 2 and right row 5 are identical, 1e-7° from the pole; right
	// rows 3 and 4 (twins) lie across the pole from them, 2e-7° away, a tie
	// ordered by right row. Right row 0 is 1e-4° cos 5° = 0.36" from left 0.
	wantL := []int32{0, 0, 0, 1, 1, 1, 2, 2, 2}
	wantR := []int32{1, 2, 0, 1, 2, 0, 5, 3, 4}
	if !slices.Equal(all.Left, wantL) || !slices.Equal(all.Right, wantR) {
		t.Errorf("all: left %v right %v, want %v %v", all.Left, all.Right, wantL, wantR)
	}
	if all.Sep[0] != 0 || all.Sep[1] != 0 || all.Sep[6] != 0 || all.Sep[7] != all.Sep[8] {
		t.Errorf("separations %v: duplicates must be exactly 0 and equal twins equal", all.Sep)
	}
}

// Empty catalogues on either side give no pairs and zero counts, no panic.
func TestEmpty(t *testing.T) {
	one := []float64{1}
	for _, c := range []struct{ lra, rra []float64 }{{nil, nil}, {one, nil}, {nil, one}} {
		for _, all := range []bool{false, true} {
			r, err := Sky(c.lra, c.lra, c.rra, c.rra, 1, Options{All: all})
			if err != nil {
				t.Fatal(err)
			}
			if len(r.Left) != 0 || len(r.Count) != len(c.lra) || r.Matched() != 0 {
				t.Errorf("left %d right %d: %+v", len(c.lra), len(c.rra), r)
			}
			x, err := Cartesian(make([]float64, 3*len(c.lra)), make([]float64, 3*len(c.rra)), 1, Options{All: all})
			if err != nil || len(x.Left) != 0 || len(x.Count) != len(c.lra) {
				t.Errorf("Cartesian, left %d right %d: %+v %v", len(c.lra), len(c.rra), x, err)
			}
		}
	}
	k, err := Key([]int64{1, 2}, nil, nil, nil, true)
	if err != nil || len(k.Left) != 0 || !slices.Equal(k.Count, []int32{0, 0}) {
		t.Errorf("Key with empty right: %+v", k)
	}
}

// Bad coordinates are errors naming the side and row; nothing panics.
func TestSkyBadInput(t *testing.T) {
	ok := []float64{1, 2}
	for _, c := range []struct {
		lra, ldec, rra, rdec []float64
		radius               float64
		side                 string
		row                  int
		coord                string
	}{
		{ok, []float64{1, math.NaN()}, ok, ok, 1, "left", 1, "dec"},
		{ok, ok, []float64{math.Inf(1), 2}, ok, 1, "right", 0, "ra"},
		{ok, ok, ok, []float64{1, 90.0000001}, 1, "right", 1, "dec"},
	} {
		_, err := Sky(c.lra, c.ldec, c.rra, c.rdec, c.radius, Options{})
		var ie *InputError
		if !errors.As(err, &ie) || ie.Side != c.side || ie.Row != c.row || ie.Coord != c.coord {
			t.Errorf("%v: want InputError at %s row %d %s", err, c.side, c.row, c.coord)
		}
	}
	_, err := Cartesian([]float64{0, 0, 0, 1, math.NaN(), 2}, nil, 1, Options{})
	var ie *InputError
	if !errors.As(err, &ie) || ie.Side != "left" || ie.Row != 1 || ie.Coord != "y" {
		t.Errorf("Cartesian: %v, want InputError at left row 1 y", err)
	}
	for _, r := range []float64{-1, math.NaN(), math.Inf(1)} {
		if _, err := Sky(ok, ok, ok, ok, r, Options{}); err == nil {
			t.Errorf("radius %v accepted", r)
		}
	}
}

// bruteSky is the O(n m) sky match by Separation, with the tolerance rule of
// Redshifts written out again.
func bruteSky(lra, ldec, rra, rdec []float64, radius float64, z *Redshifts) (pairs [][]pair) {
	pairs = make([][]pair, len(lra))
	for i := range lra {
		for j := range rra {
			s := Separation(lra[i], ldec[i], rra[j], rdec[j])
			if !(s <= radius) {
				continue
			}
			if z != nil {
				dz := math.Abs(z.Left[i] - z.Right[j])
				if (z.DZ > 0 && dz > z.DZ) || (z.DV > 0 && 299792.458*dz/(1+z.Left[i]) > z.DV) {
					continue
				}
			}
			pairs[i] = append(pairs[i], pair{int32(i), int32(j), s})
		}
	}
	return pairs
}

func checkAgainstBrute(t *testing.T, what string, res *Result, all bool, want [][]pair) {
	t.Helper()
	var flat []pair
	for i, ps := range want {
		if int(res.Count[i]) != len(ps) {
			t.Fatalf("%s: left row %d count %d, brute force %d", what, i, res.Count[i], len(ps))
		}
		slices.SortFunc(ps, func(a, b pair) int {
			if a.sep != b.sep {
				if a.sep < b.sep {
					return -1
				}
				return 1
			}
			return int(a.r - b.r)
		})
		if all {
			flat = append(flat, ps...)
		} else if len(ps) > 0 {
			flat = append(flat, ps[0])
		}
	}
	got := pairsOf(res)
	if !slices.Equal(got, flat) {
		t.Fatalf("%s: %d pairs differ from brute force (%d)", what, len(got), len(flat))
	}
}

// Redshift and velocity tolerances against the O(n m) rule on the
// reference catalogues (the rule as documented on Redshifts).
func TestSkyRedshiftTolerance(t *testing.T) {
	L, R := readCatalogue(t, "left.csv"), readCatalogue(t, "right.csv")
	n := 400 // brute force on a part of the left catalogue
	sky := bruteSky(L.ra[:n], L.dec[:n], R.ra, R.dec, 10.0/3600, nil)
	for _, z := range []*Redshifts{
		{Left: L.z[:n], Right: R.z, DZ: 0.05},
		{Left: L.z[:n], Right: R.z, DV: 20000},
		{Left: L.z[:n], Right: R.z, DZ: 0.1, DV: 15000},
	} {
		want := bruteSky(L.ra[:n], L.dec[:n], R.ra, R.dec, 10.0/3600, z)
		kept, cut := 0, 0
		for i, ps := range want {
			kept += len(ps)
			cut += len(sky[i]) - len(ps)
		}
		if kept == 0 || cut == 0 {
			t.Fatalf("tolerance %+v keeps %d pairs and cuts %d: the test would not tell", *z, kept, cut)
		}
		for _, all := range []bool{false, true} {
			res, err := Sky(L.ra[:n], L.dec[:n], R.ra, R.dec, 10.0/3600, Options{All: all, Z: z})
			if err != nil {
				t.Fatal(err)
			}
			checkAgainstBrute(t, "tolerance", res, all, want)
		}
	}
}

// Large radii, where most of the tree is visited, against brute force.
func TestSkyLargeRadius(t *testing.T) {
	lra, ldec := uniformSky(300, 11)
	rra, rdec := uniformSky(400, 12)
	for _, r := range []float64{5, 90, 179.9, 180} {
		want := bruteSky(lra, ldec, rra, rdec, r, nil)
		for _, all := range []bool{false, true} {
			res, err := Sky(lra, ldec, rra, rdec, r, Options{All: all})
			if err != nil {
				t.Fatal(err)
			}
			checkAgainstBrute(t, "large radius", res, all, want)
		}
	}
}

// XYZ follows the equatorial convention: x toward RA 0 Dec 0, y toward RA
// 90° Dec 0, z toward the north pole (exact geometry).
func TestXYZ(t *testing.T) {
	got := XYZ([]float64{0, 90, 33, 180}, []float64{0, 0, 90, -30}, []float64{1, 2, 3, 4})
	want := []float64{1, 0, 0, 0, 2, 0, 0, 0, 3, -4 * math.Sqrt(3) / 2, 0, -2}
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-15*4 {
			t.Errorf("XYZ component %d = %g, want %g", i, got[i], want[i])
		}
	}
}

// 3-d matching against the O(n m) brute force on a small clustered set,
// including duplicates and a zero radius.
func TestCartesianBrute(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	gen := func(n int) []float64 {
		x := make([]float64, 3*n)
		for i := 0; i < n; i++ {
			// Clusters: 40 centres in a 100 Mpc/h box, spread 3 Mpc/h.
			c := rng.IntN(40)
			cr := rand.New(rand.NewPCG(uint64(c), 99))
			for a := 0; a < 3; a++ {
				x[3*i+a] = 100*cr.Float64() + 3*rng.NormFloat64()
			}
		}
		return x
	}
	left, right := gen(1500), gen(2000)
	copy(left[30:60], right[300:330]) // ten exact duplicates
	copy(right[600:615], right[0:15]) // five duplicated right rows
	for _, radius := range []float64{0, 0.7, 4} {
		want := make([][]pair, 1500)
		for i := 0; i < 1500; i++ {
			for j := 0; j < 2000; j++ {
				dx, dy, dz := right[3*j]-left[3*i], right[3*j+1]-left[3*i+1], right[3*j+2]-left[3*i+2]
				if s := math.Sqrt(dx*dx + dy*dy + dz*dz); s <= radius {
					want[i] = append(want[i], pair{int32(i), int32(j), s})
				}
			}
		}
		for _, all := range []bool{false, true} {
			res, err := Cartesian(left, right, radius, Options{All: all})
			if err != nil {
				t.Fatal(err)
			}
			checkAgainstBrute(t, "cartesian", res, all, want)
			if radius == 0 && res.Matched() < 10 {
				t.Errorf("zero radius matched %d rows, want at least the 10 duplicates", res.Matched())
			}
		}
	}
}

// Degenerate trees: every point identical, and points sorted along an
// axis, against brute force.
func TestTreeDegenerate(t *testing.T) {
	n := 3000
	same := make([]float64, 3*n)
	for i := range same {
		same[i] = 1.5
	}
	sorted := make([]float64, 3*n)
	for i := 0; i < n; i++ {
		sorted[3*i], sorted[3*i+1], sorted[3*i+2] = float64(i%97), float64(n-i), float64(i/10)
	}
	for _, pts := range [][]float64{same, sorted} {
		q := []float64{1.5, 1.5, 1.5, 50, float64(n - 1000), 100, 0, 0, 0}
		res, err := Cartesian(q, pts, 2.5, Options{All: true})
		if err != nil {
			t.Fatal(err)
		}
		want := make([][]pair, 3)
		for i := 0; i < 3; i++ {
			for j := 0; j < n; j++ {
				dx, dy, dz := pts[3*j]-q[3*i], pts[3*j+1]-q[3*i+1], pts[3*j+2]-q[3*i+2]
				if s := math.Sqrt(dx*dx + dy*dy + dz*dz); s <= 2.5 {
					want[i] = append(want[i], pair{int32(i), int32(j), s})
				}
			}
		}
		checkAgainstBrute(t, "degenerate", res, true, want)
	}
}

// Key matches against the O(n m) equality rule, for ints and strings,
// with null rows never matching.
func TestKey(t *testing.T) {
	L, R := readCatalogue(t, "left.csv"), readCatalogue(t, "right.csv")
	lnull := make([]bool, len(L.id))
	for i := range lnull {
		lnull[i] = i%17 == 0
	}
	rid := append(slices.Clone(R.id), R.id[:50]...) // repeated keys on the right
	rnull := make([]bool, len(rid))
	rnull[3] = true
	check := func(res *Result, all bool, lkey, rkey []string) {
		t.Helper()
		var wl, wr []int32
		for i := range L.id {
			var js []int32
			for j := range rid {
				if !lnull[i] && !rnull[j] && lkey[i] == rkey[j] {
					js = append(js, int32(j))
				}
			}
			if int(res.Count[i]) != len(js) {
				t.Fatalf("left row %d: count %d, want %d", i, res.Count[i], len(js))
			}
			if !all && len(js) > 1 {
				js = js[:1]
			}
			for _, j := range js {
				wl, wr = append(wl, int32(i)), append(wr, j)
			}
		}
		if !slices.Equal(res.Left, wl) || !slices.Equal(res.Right, wr) || res.Sep != nil {
			t.Fatalf("key pairs differ from brute force (%d vs %d)", len(res.Left), len(wl))
		}
	}
	ls, rs := make([]string, len(L.id)), make([]string, len(rid))
	li, ri := make([]string, len(L.id)), make([]string, len(rid))
	for i, v := range L.id {
		ls[i], li[i] = "G"+string(rune('a'+v%7))+itoa(v), itoa(v)
	}
	for j, v := range rid {
		rs[j], ri[j] = "G"+string(rune('a'+v%7))+itoa(v), itoa(v)
	}
	for _, all := range []bool{false, true} {
		res, err := Key(L.id, rid, lnull, rnull, all)
		if err != nil || res.Matched() == 0 {
			t.Fatalf("no key matches in the reference catalogues (%v)", err)
		}
		check(res, all, li, ri)
		res, err = Key(ls, rs, lnull, rnull, all)
		if err != nil {
			t.Fatal(err)
		}
		check(res, all, ls, rs)
	}
}

func itoa(v int64) string {
	var b [20]byte
	i := len(b)
	neg := v < 0
	if neg {
		v = -v
	}
	for {
		i--
		b[i] = byte('0' + v%10)
		if v /= 10; v == 0 {
			break
		}
	}
	if neg {
		i--
		b[i] = '-'
	}
	return string(b[i:])
}
