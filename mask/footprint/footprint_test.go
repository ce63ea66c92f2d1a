package footprint

import (
	"bufio"
	"compress/gzip"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"testing"

	"github.com/filigree-survey/filigree/mask/healpix"
	"github.com/filigree-survey/filigree/survey"
)

const dir = "../../testdata/footprint"

// refMap is one map of maps_ref.txt, written by healpy 1.16.1 (see
// testdata/footprint/make_fixtures.py).
type refMap struct {
	nside     int
	area, eff float64
	pix       []int64
	val       []float64
}

func fields(t *testing.T, line string, n int) []string {
	t.Helper()
	f := strings.Fields(line)
	if len(f) != n {
		t.Fatalf("reference line %q: want %d fields", line, n)
	}
	return f
}

func num(t *testing.T, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

func readMapsRef(t *testing.T) map[string]*refMap {
	f, err := os.Open(filepath.Join(dir, "maps_ref.txt"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	out := map[string]*refMap{}
	var cur *refMap
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		switch {
		case strings.HasPrefix(line, "#"):
		case strings.HasPrefix(line, "map "):
			x := fields(t, line, 6)
			cur = &refMap{nside: int(num(t, x[2])), area: num(t, x[3]), eff: num(t, x[4])}
			out[x[1]] = cur
		default:
			x := fields(t, line, 2)
			cur.pix = append(cur.pix, int64(num(t, x[0])))
			cur.val = append(cur.val, num(t, x[1]))
		}
	}
	return out
}

type refPoints struct{ ra, dec, c []float64 }

// readPointsRef reads points_ref.txt.gz: random directions and the
// completeness expected there, from healpy 1.16.1 ang2pix and the map
// values, or pymoc 0.5.0 MOC.contains for MOCs.
func readPointsRef(t *testing.T) map[string]*refPoints {
	f, err := os.Open(filepath.Join(dir, "points_ref.txt.gz"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	z, err := gzip.NewReader(f)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]*refPoints{}
	var cur *refPoints
	sc := bufio.NewScanner(z)
	for sc.Scan() {
		line := sc.Text()
		switch {
		case strings.HasPrefix(line, "#"):
		case strings.HasPrefix(line, "points "):
			cur = &refPoints{}
			out[fields(t, line, 3)[1]] = cur
		default:
			x := fields(t, line, 3)
			cur.ra = append(cur.ra, num(t, x[0]))
			cur.dec = append(cur.dec, num(t, x[1]))
			cur.c = append(cur.c, num(t, x[2]))
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

// readMOCRef reads mocs_ref.txt (pymoc 0.5.0 and healpy 1.16.1 values).
func readMOCRef(t *testing.T) (order map[string]int, area map[string]float64) {
	b, err := os.ReadFile(filepath.Join(dir, "mocs_ref.txt"))
	if err != nil {
		t.Fatal(err)
	}
	order, area = map[string]int{}, map[string]float64{}
	for _, line := range strings.Split(strings.TrimSpace(string(b)), "\n") {
		x := strings.Fields(line)
		switch {
		case x[0] == "#":
		case x[0] == "moc":
			order[x[1]] = int(num(t, x[2]))
			area[x[1]] = num(t, x[3])
		default:
			area[x[0]] = num(t, x[1])
		}
	}
	return order, area
}

func close(a, b, rel float64) bool { return math.Abs(a-b) <= rel*math.Max(math.Abs(a), math.Abs(b)) }

// TestReadMapHealpy checks maps written by healpy 1.16.1 write_map (RING and
// NESTED, full-sky and partial=True) against the values healpy reads back
// at every nonzero NESTED pixel, healpy's area (nonzero pixels × pixel
// area) and the map values at healpy ang2pix of 1000 random points.
func TestReadMapHealpy(t *testing.T) {
	ref := readMapsRef(t)
	pts := readPointsRef(t)
	if len(ref) != 4 {
		t.Fatalf("maps_ref.txt holds %d maps, want 4", len(ref))
	}
	for name, r := range ref {
		m, err := ReadMap(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		if m.Nside() != r.nside {
			t.Errorf("%s: Nside %d, healpy %d", name, m.Nside(), r.nside)
		}
		if !close(m.Area(), r.area, 1e-9) || !close(m.EffectiveArea(), r.eff, 1e-6) {
			t.Errorf("%s: area %.10g effective %.10g, healpy %.10g and %.10g", name, m.Area(), m.EffectiveArea(), r.area, r.eff)
		}
		nonzero := 0
		for p := range healpix.NPix(m.Nside()) {
			if m.at(p) > 0 {
				nonzero++
			}
		}
		if nonzero != len(r.pix) {
			t.Errorf("%s: %d nonzero pixels, healpy %d", name, nonzero, len(r.pix))
		}
		for i, p := range r.pix {
			if got := m.at(p); !close(got, r.val[i], 1e-7) {
				t.Errorf("%s: NESTED pixel %d = %g, healpy %g", name, p, got, r.val[i])
			}
		}
		pp := pts[name]
		if pp == nil || len(pp.ra) != 1000 {
			t.Fatalf("%s: no reference points", name)
		}
		got := make([]float64, len(pp.ra))
		CompletenessMany(m, got, pp.ra, pp.dec)
		for i := range got {
			if !close(got[i], pp.c[i], 1e-7) || got[i] != m.Completeness(pp.ra[i], pp.dec[i]) {
				t.Errorf("%s: completeness at (%g, %g) = %g, healpy %g", name, pp.ra[i], pp.dec[i], got[i], pp.c[i])
			}
		}
	}
}

// TestReadMOCPymoc checks MOCs written by pymoc 0.5.0: the order, the area
// (pymoc area_sq_deg) and membership of 10^4 points (pymoc MOC.contains
// of healpy 1.16.1 ang2pix at the MOC order).
func TestReadMOCPymoc(t *testing.T) {
	order, area := readMOCRef(t)
	pts := readPointsRef(t)
	for _, name := range []string{"moc_discs.fits", "moc_ring7.fits"} {
		m, err := ReadMOC(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		if m.Order() != order[name] {
			t.Errorf("%s: order %d, pymoc %d", name, m.Order(), order[name])
		}
		if !close(m.Area(), area[name], 1e-9) {
			t.Errorf("%s: area %.10g, pymoc %.10g", name, m.Area(), area[name])
		}
		pp := pts[name]
		if pp == nil || len(pp.ra) != 10000 {
			t.Fatalf("%s: no reference points", name)
		}
		got := make([]float64, len(pp.ra))
		CompletenessMany(m, got, pp.ra, pp.dec)
		in := 0
		for i := range got {
			if got[i] != pp.c[i] {
				t.Errorf("%s: completeness at (%.8f, %.8f) = %g, pymoc %g", name, pp.ra[i], pp.dec[i], got[i], pp.c[i])
			}
			if got[i] == 1 {
				in++
			}
		}
		if in < 1000 || in > 9000 {
			t.Errorf("%s: %d of 10^4 points inside: the test points do not probe both sides", name, in)
		}
	}
}

// TestCombineMOCs compares exact combination areas with pymoc 0.5.0 union
// (+), intersection and difference (-) of the two MOCs.
func TestCombineMOCs(t *testing.T) {
	_, area := readMOCRef(t)
	a, err := Open(filepath.Join(dir, "moc_discs.fits"))
	if err != nil {
		t.Fatal(err)
	}
	b, err := Open(filepath.Join(dir, "moc_ring7.fits"))
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		c    *Combined
	}{
		{"union", Union(a, b)},
		{"intersection", Intersect(a, b)},
		{"difference", Subtract(a, b)},
	} {
		if got := tc.c.Area(); !close(got, area[tc.name], 1e-9) || tc.c.SumNside() != 0 {
			t.Errorf("%s: area %.10g (sum Nside %d), pymoc %.10g", tc.name, got, tc.c.SumNside(), area[tc.name])
		}
		if tc.c.EffectiveArea() != tc.c.Area() {
			t.Errorf("%s: effective area %g differs from area %g for 0/1 MOCs", tc.name, tc.c.EffectiveArea(), tc.c.Area())
		}
	}
}

// TestCombineExactMatchesPixelSum checks the exact run merge of two
// healpy-written maps at different Nside against the pixel-centre sum on the
// finer grid, which is exact too (every finer pixel lies in one coarser
// pixel), so the two must agree to rounding.
func TestCombineExactMatchesPixelSum(t *testing.T) {
	a, err := ReadMap(filepath.Join(dir, "map_ring32.fits"))
	if err != nil {
		t.Fatal(err)
	}
	b, err := ReadMap(filepath.Join(dir, "map_partial64.fits"))
	if err != nil {
		t.Fatal(err)
	}
	moc, err := ReadMOC(filepath.Join(dir, "moc_discs.fits"))
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []*Combined{Intersect(a, b), Union(a, b), Subtract(a, b), Subtract(b, a), Union(Intersect(a, b), b)} {
		area, eff := pixelSum(c, 64)
		if !close(c.Area(), area, 1e-12) || !close(c.EffectiveArea(), eff, 1e-9) || c.Area() == 0 {
			t.Errorf("%s: exact %.12g %.12g, pixel sum %.12g %.12g", c.Describe(), c.Area(), c.EffectiveArea(), area, eff)
		}
	}
	// Against the MOC at order 10: each run of the merge is checked by the
	// sum at Nside 1024.
	c := Union(a, moc)
	area, eff := pixelSum(c, 1024)
	if !close(c.Area(), area, 1e-12) || !close(c.EffectiveArea(), eff, 1e-9) {
		t.Errorf("%s: exact %.12g %.12g, pixel sum %.12g %.12g", c.Describe(), c.Area(), c.EffectiveArea(), area, eff)
	}
}

// TestCombineRegion checks the numerical pixel sum for a region cap
// intersected with a MOC against healpy 1.16.1 at Nside 4096 (query_disc
// pixels whose order-7 parent is in the MOC), within the bound stated on
// Combined.Area: boundary length × pixel size of the sum grid.
func TestCombineRegion(t *testing.T) {
	_, area := readMOCRef(t)
	capF, err := Open(filepath.Join(dir, "cap.reg"))
	if err != nil {
		t.Fatal(err)
	}
	if _, ok := capF.(regionFootprint); !ok {
		t.Fatalf("Open(cap.reg) gave %T", capF)
	}
	moc, err := Open(filepath.Join(dir, "moc_ring7.fits"))
	if err != nil {
		t.Fatal(err)
	}
	c := Intersect(capF, moc)
	ns := c.SumNside()
	if ns == 0 || math.Sqrt(healpix.PixelArea(ns))*180/math.Pi > moc.Resolution()/2*(1+1e-9) {
		t.Errorf("sum Nside %d is not finer than half the MOC resolution %g°", ns, moc.Resolution())
	}
	theta := math.Sqrt(healpix.PixelArea(ns)) * 180 / math.Pi
	// Boundary: the cap's circumference plus, generously, the same again
	// for the MOC cell edges inside the cap.
	length := 2 * (2 * math.Pi * math.Sin(10*math.Pi/180) * 180 / math.Pi)
	if d := math.Abs(c.Area() - area["cap_and_ring7"]); d > length*theta {
		t.Errorf("area %.6g, healpy %.6g: difference %.3g above the bound %.3g", c.Area(), area["cap_and_ring7"], d, length*theta)
	}
	// The region's own area is exact; healpy's Nside-4096 count agrees to
	// its boundary error.
	if !close(capF.Area(), area["cap"], 1e-3) {
		t.Errorf("cap area %g, healpy %g", capF.Area(), area["cap"])
	}
}

// TestBadFiles checks that malformed files give errors naming the file and
// the problem (files written by astropy 5.2.1 in make_fixtures.py).
func TestBadFiles(t *testing.T) {
	for _, tc := range []struct{ file, want string }{
		{"bad_no_nside.fits", "no NSIDE keyword"},
		{"bad_ordering.fits", `unknown ORDERING "SPIRAL"`},
		{"bad_value.fits", "row 18: column \"SIGNAL\": completeness 1.5 at pixel 17 (RING) is outside [0, 1]"},
		{"bad_nside.fits", "bad NSIDE 3"},
		{"bad_rows.fits", "wrong row count"},
		{"bad_moc_layout.fits", "must hold one 32- or 64-bit integer"},
		{"bad_moc_uniq.fits", "row 1: column \"UNIQ\": uniq value 3 does not decode"},
		{"map_ring32.fits.missing", "no such file"},
	} {
		path := filepath.Join(dir, tc.file)
		_, err := Open(path)
		if err == nil {
			t.Errorf("%s: no error", tc.file)
			continue
		}
		if !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %q does not name the file and %q", tc.file, err, tc.want)
		}
		var ie *survey.InputError
		if tc.file != "map_ring32.fits.missing" && !errors.As(err, &ie) {
			t.Errorf("%s: error %T is not an *survey.InputError", tc.file, err)
		}
	}
	// A map read as a MOC and a MOC read as a map.
	if _, err := ReadMOC(filepath.Join(dir, "map_nest16.fits")); err == nil || !strings.Contains(err.Error(), "a MOC needs 'NUNIQ'") {
		t.Errorf("ReadMOC of a map: %v", err)
	}
	if _, err := ReadMap(filepath.Join(dir, "moc_ring7.fits")); err == nil || !strings.Contains(err.Error(), "is a MOC") {
		t.Errorf("ReadMap of a MOC: %v", err)
	}
}

// TestDecodeUniq checks uniq = 4·4^order + ipix (MOC 2.0 §4.3.1) at the
// ends of each order.
func TestDecodeUniq(t *testing.T) {
	for o := 0; o <= 29; o++ {
		first := int64(4) << (2 * o)
		for _, ipix := range []int64{0, 12<<(2*o) - 1} {
			got, p, ok := decodeUniq(first + ipix)
			if !ok || got != o || p != ipix {
				t.Errorf("decodeUniq(%d) = %d, %d, %v; want %d, %d", first+ipix, got, p, ok, o, ipix)
			}
		}
	}
	for _, u := range []int64{-1, 0, 3, math.MaxInt64} {
		if _, _, ok := decodeUniq(u); ok && u != math.MaxInt64 {
			t.Errorf("decodeUniq(%d) accepted", u)
		}
	}
}

// TestCompletenessManyThreads checks that the result does not depend on
// GOMAXPROCS.
func TestCompletenessManyThreads(t *testing.T) {
	m, err := ReadMap(filepath.Join(dir, "map_ring32.fits"))
	if err != nil {
		t.Fatal(err)
	}
	f := Union(m, FromRegionMust(t, filepath.Join(dir, "cap.reg")))
	const n = 100000
	rng := rand.New(rand.NewPCG(1, 2))
	ra, dec := make([]float64, n), make([]float64, n)
	for i := range ra {
		ra[i] = 360 * rng.Float64()
		dec[i] = math.Asin(2*rng.Float64()-1) * 180 / math.Pi
	}
	ra[0], dec[0] = math.NaN(), 95
	one, two := make([]float64, n), make([]float64, n)
	old := runtime.GOMAXPROCS(1)
	CompletenessMany(f, one, ra, dec)
	runtime.GOMAXPROCS(4)
	CompletenessMany(f, two, ra, dec)
	runtime.GOMAXPROCS(old)
	for i := range one {
		if one[i] != two[i] {
			t.Fatalf("point %d: %g with 1 thread, %g with 4", i, one[i], two[i])
		}
	}
	if one[0] != 0 {
		t.Errorf("invalid direction gave %g", one[0])
	}
}

func FromRegionMust(t *testing.T, path string) Footprint {
	f, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// BenchmarkApplyMap10M evaluates a full-sky map at Nside 1024 at 10^7
// random directions.
func BenchmarkApplyMap10M(b *testing.B) {
	const nside, n = 1024, 10_000_000
	vals := make([]float32, healpix.NPix(nside))
	for p := range vals {
		vals[p] = float32(p%7) / 6
	}
	m, err := NewMap("bench", nside, vals)
	if err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	ra, dec, dst := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range ra {
		ra[i] = 360 * rng.Float64()
		dec[i] = math.Asin(2*rng.Float64()-1) * 180 / math.Pi
	}
	b.ResetTimer()
	for range b.N {
		CompletenessMany(m, dst, ra, dec)
	}
}
