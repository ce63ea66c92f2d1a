package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/filigree-survey/filigree/survey"
)

func run(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var o, e bytes.Buffer
	code = runMain(append([]string{"filigree"}, args...), &o, &e)
	return code, o.String(), e.String()
}

func TestUsageErrors(t *testing.T) {
	for _, tc := range []struct {
		args []string
		code int
		want string
	}{
		{nil, exitUsage, "Commands:"},
		{[]string{"frobnicate"}, exitUsage, `unknown command "frobnicate"`},
		{[]string{"distances", "--no-such-flag"}, exitUsage, "unknown flag: --no-such-flag"},
		{[]string{"distances"}, exitUsage, "no redshifts"},
		{[]string{"distances", "--z", "0.1,x"}, exitUsage, `"x" is not a number`},
		{[]string{"distances", "--z", "1", "--h0", "70"}, exitUsage, "--omega-m"},
		{[]string{"distances", "--z", "1", "--cosmology", "nosuch"}, exitUsage, "nosuch"},
		{[]string{"inspect"}, exitUsage, "one catalogue"},
		{[]string{"inspect", "/nonexistent/cat.csv"}, exitFail, "/nonexistent/cat.csv"},
		{[]string{"version", "extra"}, exitUsage, "no arguments"},
	} {
		code, _, stderr := run(t, tc.args...)
		if code != tc.code || !strings.Contains(stderr, tc.want) {
			t.Errorf("%q: exit %d, stderr %q; want exit %d and %q", tc.args, code, stderr, tc.code, tc.want)
		}
	}
}

func TestHelpHasExample(t *testing.T) {
	for name := range commands {
		code, out, _ := run(t, name, "--help")
		if code != exitOK || !strings.Contains(out, "Example:") || !strings.Contains(out, "filigree "+name) {
			t.Errorf("%s --help: exit %d\n%s", name, code, out)
		}
	}
}

// The Einstein–de Sitter closed form D_C = (2c/H0)(1 − 1/√(1+z)) (Hogg 1999,
// eq. 15 with Ωm = 1) checks the wiring of explicit cosmology flags end to end.
func TestDistancesEdS(t *testing.T) {
	code, out, stderr := run(t, "distances", "--z", "0,0.5,3", "--h0", "70", "--omega-m", "1")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	var body []string
	for _, l := range strings.Split(out, "\n") {
		if !strings.HasPrefix(l, "#") && l != "" {
			body = append(body, l)
		}
	}
	recs, err := csv.NewReader(strings.NewReader(strings.Join(body, "\n"))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	head := recs[0]
	idx := map[string]int{}
	for i, h := range head {
		idx[h] = i
	}
	for _, want := range []string{"z", "comov_dist", "comov_dist_mpc", "lum_dist_mpc", "ang_dist_mpc", "dist_mod", "growth", "growth_rate"} {
		if _, ok := idx[want]; !ok {
			t.Fatalf("column %s missing from %q", want, head)
		}
	}
	const c = 299792.458
	for _, r := range recs[1:] {
		z, _ := strconv.ParseFloat(r[idx["z"]], 64)
		d, _ := strconv.ParseFloat(r[idx["comov_dist_mpc"]], 64)
		dh, _ := strconv.ParseFloat(r[idx["comov_dist"]], 64)
		g, _ := strconv.ParseFloat(r[idx["growth"]], 64)
		want := 2 * c / 70 * (1 - 1/math.Sqrt(1+z))
		if math.Abs(d-want) > 1e-9*math.Max(1, want) || math.Abs(dh-0.7*want) > 1e-9*math.Max(1, want) {
			t.Errorf("z=%v: D_C %v (%v Mpc/h), want %v", z, d, dh, want)
		}
		// EdS growth: D ∝ a (from memory: the growing mode of an EdS universe).
		if math.Abs(g-1/(1+z)) > 1e-6 {
			t.Errorf("z=%v: growth %v, want %v", z, g, 1/(1+z))
		}
	}
	if !strings.Contains(out, "# cosmology: custom") {
		t.Errorf("no cosmology line in CSV output:\n%s", out)
	}
}

func TestDistancesFileAndSummary(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "d.csv")
	sum := filepath.Join(dir, "s.json")
	code, _, stderr := run(t, "distances", "--zmin", "0", "--zmax", "2", "--steps", "5", "-o", out, "--summary", sum)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	b, err := os.ReadFile(sum)
	if err != nil {
		t.Fatal(err)
	}
	var s map[string]any
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatalf("summary is not JSON: %v\n%s", err, b)
	}
	if s["command"] != "distances" || s["rows"] != 5.0 || s["provenance"] == nil {
		t.Errorf("summary: %s", b)
	}
	if _, err := os.Stat(out); err != nil {
		t.Error(err)
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 2 {
		t.Errorf("leftover files: %v", entries)
	}
}

func TestInspectReportsProblems(t *testing.T) {
	dir := t.TempDir()
	cat := filepath.Join(dir, "cat.csv")
	data := "ObjID,RAJ2000,DEJ2000,zspec,mag\n1,10.5,-3.2,0.12,17.1\n2,370,5,0.2,18\n3,20,95,0.3,\n1,30,1,-0.1,19\n"
	if err := os.WriteFile(cat, []byte(data), 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, stderr := run(t, "inspect", cat)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	for _, want := range []string{"rows:    4", "RAJ2000 (guessed)", "zspec (guessed)", "ObjID (guessed)", "2 bad rows", "1 RA values outside [0, 360) wrapped", "row 3: column \"DEJ2000\": value 95", "duplicate ID (first at row 1)"} {
		if !strings.Contains(out, want) {
			t.Errorf("inspect output lacks %q:\n%s", want, out)
		}
	}
}

// A cap of radius θ has area 2π(1 − cos θ) sr (spherical geometry, e.g.
// Górski et al. 2005 §4); the region file is one cap of 10°.
func TestFootprintInfoAndApply(t *testing.T) {
	dir := t.TempDir()
	reg := filepath.Join(dir, "cap.reg")
	if err := os.WriteFile(reg, []byte("include cap centre=150,2 radius=10 completeness=0.5\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, stderr := run(t, "footprint", "info", reg)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	const deg = math.Pi / 180
	area := 2 * math.Pi * (1 - math.Cos(10*deg)) / (deg * deg)
	if !strings.Contains(out, fmt.Sprintf("area:           %.6g deg²", area)) || !strings.Contains(out, fmt.Sprintf("effective area: %.6g deg²", area/2)) {
		t.Errorf("info output, want area %.6g:\n%s", area, out)
	}
	cat := filepath.Join(dir, "g.csv")
	if err := os.WriteFile(cat, []byte("RA,DEC,mag\n150,2,17\n150,12.5,18\n0,0,19\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	res := filepath.Join(dir, "g_fp.parquet")
	code, _, stderr = run(t, "footprint", "apply", reg, cat, "-o", res)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	tab, err := survey.Read(res, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	c, in := tab.Col("completeness"), tab.Col("in_footprint")
	if c == nil || in == nil || tab.Col("mag") == nil {
		t.Fatalf("columns: %v", tab.Cols)
	}
	want := []float64{0.5, 0, 0}
	for i, w := range want {
		if c.F[i] != w || in.B[i] != (w > 0) {
			t.Errorf("row %d: completeness %v in %v, want %v", i, c.F[i], in.B[i], w)
		}
	}
	if code, _, _ := run(t, "footprint", "apply", reg, cat); code != exitUsage {
		t.Errorf("apply without -o: exit %d, want %d", code, exitUsage)
	}
}

// The tetrahedra of a Delaunay tessellation tile the convex hull (its
// definition), so for the corners and centre of a unit cube — a degenerate,
// co-spherical input — the written tetrahedra's volumes sum to 1.
func TestTessellateCube(t *testing.T) {
	dir := t.TempDir()
	pts := filepath.Join(dir, "cube.csv")
	var b strings.Builder
	b.WriteString("px,py,pz\n")
	var xyz [][3]float64
	for i := 0; i < 8; i++ {
		p := [3]float64{float64(i & 1), float64(i >> 1 & 1), float64(i >> 2 & 1)}
		xyz = append(xyz, p)
	}
	xyz = append(xyz, [3]float64{0.5, 0.5, 0.5}, [3]float64{0.5, 0.5, 0.5}) // an exact duplicate
	for _, p := range xyz {
		fmt.Fprintf(&b, "%g,%g,%g\n", p[0], p[1], p[2])
	}
	if err := os.WriteFile(pts, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "tets.csv")
	sum := filepath.Join(dir, "s.json")
	code, _, stderr := run(t, "tessellate", pts, "--xyz-cols", "px,py,pz", "-o", out, "--summary", sum)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	tab, err := survey.Read(out, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	vol := 0.0
	for j := 0; j < tab.Len(); j++ {
		var v [4][3]float64
		for k := 0; k < 4; k++ {
			v[k] = xyz[tab.Cols[k].I[j]]
		}
		a := [3]float64{v[1][0] - v[0][0], v[1][1] - v[0][1], v[1][2] - v[0][2]}
		bb := [3]float64{v[2][0] - v[0][0], v[2][1] - v[0][1], v[2][2] - v[0][2]}
		c := [3]float64{v[3][0] - v[0][0], v[3][1] - v[0][1], v[3][2] - v[0][2]}
		det := a[0]*(bb[1]*c[2]-bb[2]*c[1]) - a[1]*(bb[0]*c[2]-bb[2]*c[0]) + a[2]*(bb[0]*c[1]-bb[1]*c[0])
		vol += math.Abs(det) / 6
	}
	if math.Abs(vol-1) > 1e-12 {
		t.Errorf("tetrahedra volumes sum to %v, want 1", vol)
	}
	js, _ := os.ReadFile(sum)
	var s map[string]any
	if err := json.Unmarshal(js, &s); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"points", "tetrahedra", "seconds", "peak_bytes"} {
		if _, ok := s[k]; !ok {
			t.Errorf("summary lacks %q: %s", k, js)
		}
	}
	if s["duplicates_merged"] != 1.0 || int(s["tetrahedra"].(float64)) != tab.Len() {
		t.Errorf("summary: %s", js)
	}
	// Coplanar input is a clear error.
	if err := os.WriteFile(pts, []byte("x,y,z\n0,0,0\n1,0,0\n0,1,0\n1,1,0\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := run(t, "tessellate", pts); code != exitFail || !strings.Contains(stderr, "coplanar") {
		t.Errorf("coplanar: exit %d, %s", code, stderr)
	}
}

// Randoms in a cap footprint stay inside it (cap of 5°: angular separation
// from the centre ≤ 5°), follow the n(z) table's range, and repeat with
// the same seed.
func TestRandomsCommand(t *testing.T) {
	dir := t.TempDir()
	reg := filepath.Join(dir, "cap.reg")
	nz := filepath.Join(dir, "nz.csv")
	if err := os.WriteFile(reg, []byte("include cap centre=30,-20 radius=5\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(nz, []byte("zmid,count\n0.1,10\n0.2,30\n0.3,20\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	read := func(path string) *survey.Table {
		tab, err := survey.Read(path, survey.ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		return tab
	}
	var tabs []*survey.Table
	for i := 0; i < 2; i++ {
		out := filepath.Join(dir, fmt.Sprintf("r%d.csv", i))
		code, _, stderr := run(t, "randoms", reg, "--nz", nz, "-n", "2000", "--seed", "3", "-o", out)
		if code != exitOK {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		tabs = append(tabs, read(out))
	}
	const deg = math.Pi / 180
	ra, dec, z := tabs[0].Col("ra").F, tabs[0].Col("dec").F, tabs[0].Col("z").F
	for i := range ra {
		cs := math.Sin(dec[i]*deg)*math.Sin(-20*deg) + math.Cos(dec[i]*deg)*math.Cos(-20*deg)*math.Cos((ra[i]-30)*deg)
		if math.Acos(math.Min(1, cs)) > 5*deg+1e-9 {
			t.Fatalf("random %d at (%v, %v) outside the cap", i, ra[i], dec[i])
		}
		// Bin edges halfway between centres: [0.05, 0.35].
		if z[i] < 0.05-1e-9 || z[i] > 0.35+1e-9 {
			t.Fatalf("random %d has z = %v outside the n(z) table's bins", i, z[i])
		}
		if tabs[1].Col("ra").F[i] != ra[i] || tabs[1].Col("z").F[i] != z[i] {
			t.Fatalf("same seed, different random %d", i)
		}
	}
	if code, _, _ := run(t, "randoms", reg, "-n", "10", "-o", filepath.Join(dir, "x.csv")); code != exitUsage {
		t.Errorf("no n(z): exit %d, want %d", code, exitUsage)
	}
}

// Mass weights w = 1/(c n̄) make the weighted density 1 over the geometric
// footprint (mask/selection.Weights): for randoms following the footprint
// and n(z), Σw equals the survey's comoving volume over the footprint's
// area, V_eff × A/A_eff, within the Poisson error of the sample (≈ 1/√N).
func TestFootprintApplyWeights(t *testing.T) {
	dir := t.TempDir()
	reg := filepath.Join(dir, "two.reg")
	nz := filepath.Join(dir, "nz.csv")
	if err := os.WriteFile(reg, []byte("include cap centre=30,-20 radius=6 completeness=0.5\ninclude box ra=100,110 dec=0,8\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(nz, []byte("zmid,count\n0.1,10\n0.2,30\n0.3,20\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	r := filepath.Join(dir, "r.csv")
	if code, _, stderr := run(t, "randoms", reg, "--nz", nz, "-n", "40000", "-o", r); code != exitOK {
		t.Fatalf("randoms: exit %d: %s", code, stderr)
	}
	out := filepath.Join(dir, "rw.csv")
	sum := filepath.Join(dir, "s.json")
	if code, _, stderr := run(t, "footprint", "apply", reg, r, "-o", out, "--weights", "--summary", sum); code != exitOK {
		t.Fatalf("apply: exit %d: %s", code, stderr)
	}
	js, _ := os.ReadFile(sum)
	var s map[string]any
	if err := json.Unmarshal(js, &s); err != nil {
		t.Fatal(err)
	}
	tab, err := survey.Read(out, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	total := 0.0
	for _, w := range tab.Col("weight").F {
		total += w
	}
	const deg = math.Pi / 180
	capA := 2 * math.Pi * (1 - math.Cos(6*deg))
	boxA := 10 * deg * math.Sin(8*deg)
	want := s["survey_volume_mpch3"].(float64) * (capA + boxA) / (0.5*capA + boxA)
	if rel := math.Abs(total/want - 1); rel > 0.02 {
		t.Errorf("Σw = %.5g, want %.5g (rel. diff %.3g)", total, want, rel)
	}
	for i, e := range tab.Col("edge_dist").F {
		if !(e >= 0) {
			t.Fatalf("row %d: edge_dist %v", i, e)
		}
	}
}

// A 10° cap minus a concentric 5° cap is an annulus of area
// 2π(cos 5° − cos 10°) sr (spherical zone area, Archimedes); the combined
// footprint's area is a HEALPix pixel sum, good to well under 1% here.
func TestFootprintCombine(t *testing.T) {
	dir := t.TempDir()
	big, small := filepath.Join(dir, "big.reg"), filepath.Join(dir, "small.reg")
	os.WriteFile(big, []byte("include cap centre=200,40 radius=10\n"), 0o644)
	os.WriteFile(small, []byte("include cap centre=200,40 radius=5\n"), 0o644)
	sum := filepath.Join(dir, "s.json")
	if code, _, stderr := run(t, "footprint", "info", big, "--minus", small, "--summary", sum); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	js, _ := os.ReadFile(sum)
	var s map[string]any
	if err := json.Unmarshal(js, &s); err != nil {
		t.Fatal(err)
	}
	const deg = math.Pi / 180
	want := 2 * math.Pi * (math.Cos(5*deg) - math.Cos(10*deg)) / (deg * deg)
	if got := s["area_deg2"].(float64); math.Abs(got/want-1) > 0.005 {
		t.Errorf("annulus area %v deg², want %v", got, want)
	}
}
