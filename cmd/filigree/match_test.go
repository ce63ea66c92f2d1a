package main

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/filigree-survey/filigree/survey"
)

const matchRef = "../../testdata/match"

func readTable(t *testing.T, path string) *survey.Table {
	t.Helper()
	tab, err := survey.Read(path, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return tab
}

// refNearest returns astropy 5.2.1's nearest right row within 5 arcsec of
// every left row (−1: none) and its separation in arcsec, and the number
// of right rows within 5 arcsec from search_around_sky (testdata/match,
// made by make_reference.py).
func refNearest(t *testing.T) (right []int, sep []float64, count []int) {
	n := readTable(t, filepath.Join(matchRef, "left.csv")).Len()
	right, sep, count = make([]int, n), make([]float64, n), make([]int, n)
	for i := range right {
		right[i] = -1
	}
	near := readTable(t, filepath.Join(matchRef, "nearest.csv"))
	for k := range near.Len() {
		i := near.Col("left").I[k]
		right[i], sep[i] = int(near.Col("right").I[k]), near.Col("sep_deg").F[k]*3600
	}
	all := readTable(t, filepath.Join(matchRef, "all.csv"))
	for _, i := range all.Col("left").I {
		count[i]++
	}
	return right, sep, count
}

// The default left join with the nearest counterpart, against astropy
// 5.2.1 SkyCoord.match_to_catalog_sky and search_around_sky: every left
// row once, in order, with the astropy counterpart's id, the separation to
// 1e-9 arcsec, the count, and nulls where astropy finds nothing within 5".
func TestMatchNearestLeftJoinAstropy(t *testing.T) {
	dir := t.TempDir()
	out, sum := filepath.Join(dir, "m.csv"), filepath.Join(dir, "s.json")
	code, _, stderr := run(t, "match", filepath.Join(matchRef, "left.csv"), filepath.Join(matchRef, "right.csv"),
		"--radius", "5 arcsec", "-o", out, "--summary", sum)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	left := readTable(t, filepath.Join(matchRef, "left.csv"))
	right := readTable(t, filepath.Join(matchRef, "right.csv"))
	got := readTable(t, out)
	if got.Len() != left.Len() {
		t.Fatalf("%d rows, want one per left row (%d)", got.Len(), left.Len())
	}
	wantR, wantSep, wantCount := refNearest(t)
	idR, sep, cnt := got.Col("id_r"), got.Col("match_sep_arcsec"), got.Col("match_count")
	if idR == nil || sep == nil || cnt == nil || got.Col("name") == nil || got.Col("mag_r") == nil {
		t.Fatalf("missing columns: %v", got.Cols)
	}
	matched := 0
	for i := range got.Len() {
		if got.Col("id").I[i] != left.Col("id").I[i] {
			t.Fatalf("row %d: left rows out of order", i)
		}
		if int(cnt.I[i]) != wantCount[i] {
			t.Errorf("row %d: match_count %d, astropy %d", i, cnt.I[i], wantCount[i])
		}
		if wantR[i] < 0 {
			if !idR.IsNull(i) || !sep.IsNull(i) || !got.Col("name").IsNull(i) {
				t.Errorf("row %d: unmatched left row without nulls", i)
			}
			continue
		}
		matched++
		if idR.IsNull(i) || idR.I[i] != right.Col("id").I[wantR[i]] || !(math.Abs(sep.F[i]-wantSep[i]) <= 1e-9) {
			t.Errorf("row %d: counterpart id %d sep %.12g\", astropy id %d sep %.12g\"", i, idR.I[i], sep.F[i], right.Col("id").I[wantR[i]], wantSep[i])
		}
	}
	var s map[string]any
	b, err := os.ReadFile(sum)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	if s["matched_left_rows"] != float64(matched) || s["pairs"] != float64(matched) || s["left_rows"] != float64(left.Len()) {
		t.Errorf("summary counts %v %v %v, want %d %d %d", s["matched_left_rows"], s["pairs"], s["left_rows"], matched, matched, left.Len())
	}
	if sec, ok := s["seconds"].(float64); !ok || !(sec >= 0) {
		t.Errorf("summary seconds %v", s["seconds"])
	}
}

// --all --inner gives exactly astropy 5.2.1 search_around_sky's pairs;
// --all alone adds one null row per unmatched left row.
func TestMatchAllAstropy(t *testing.T) {
	dir := t.TempDir()
	l, r := filepath.Join(matchRef, "left.csv"), filepath.Join(matchRef, "right.csv")
	want := readTable(t, filepath.Join(matchRef, "all.csv"))
	_, _, wantCount := refNearest(t)
	unmatched := 0
	for _, c := range wantCount {
		if c == 0 {
			unmatched++
		}
	}
	for _, inner := range []bool{true, false} {
		out := filepath.Join(dir, "all.parquet")
		args := []string{"match", l, r, "--radius", "5arcsec", "--all", "-o", out, "--suffix", "_right", "-q"}
		if inner {
			args = append(args, "--inner")
		}
		if code, _, stderr := run(t, args...); code != exitOK {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		got := readTable(t, out)
		wantRows := want.Len()
		if !inner {
			wantRows += unmatched
		}
		if got.Len() != wantRows {
			t.Fatalf("inner %v: %d rows, want %d", inner, got.Len(), wantRows)
		}
		// Pairs as (left id, right id) sets against the reference.
		lid, rid := readTable(t, l).Col("id").I, readTable(t, r).Col("id").I
		type key struct{ l, r int64 }
		ref := map[key]float64{}
		for k := range want.Len() {
			ref[key{lid[want.Col("left").I[k]], rid[want.Col("right").I[k]]}] = want.Col("sep_deg").F[k] * 3600
		}
		gl, gr, gs := got.Col("id"), got.Col("id_right"), got.Col("match_sep_arcsec")
		for k := range got.Len() {
			if gr.IsNull(k) {
				continue
			}
			s, ok := ref[key{gl.I[k], gr.I[k]}]
			if !ok || !(math.Abs(s-gs.F[k]) <= 1e-9) {
				t.Fatalf("inner %v: pair (%d, %d) sep %.12g not in astropy's (%v, %.12g)", inner, gl.I[k], gr.I[k], gs.F[k], ok, s)
			}
			delete(ref, key{gl.I[k], gr.I[k]})
		}
		if len(ref) != 0 {
			t.Errorf("inner %v: %d astropy pairs missing", inner, len(ref))
		}
	}
}

func writeFile(t *testing.T, dir, name, body string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// A 3-d match along one line of sight in an Einstein–de Sitter universe,
// where D_C = (2c/H0)(1 − 1/√(1+z)) (Hogg 1999, eq. 15 with Ωm = 1) gives
// the separation in closed form; positions off the line of sight are too
// far on the sky to match.
func TestMatch3DEdS(t *testing.T) {
	dir := t.TempDir()
	l := writeFile(t, dir, "l.csv", "RAJ2000,DEJ2000,zspec\n150,2,0.3\n150,2,0.5\n10,-89.99,0.2\n")
	r := writeFile(t, dir, "r.csv", "alpha,delta,redshift\n150,2,0.31\n150,20,0.3\n190,-89.99,0.2\n")
	out := filepath.Join(dir, "m.csv")
	code, _, stderr := run(t, "match", l, r, "--radius-mpc", "30", "--h0", "70", "--omega-m", "1",
		"--right-ra-col", "alpha", "--right-dec-col", "delta", "-o", out, "-q")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	got := readTable(t, out)
	dc := func(z float64) float64 { return 2 * 299792.458 / 100 * (1 - 1/math.Sqrt(1+z)) } // Mpc/h
	sep, cnt := got.Col("match_sep_mpc"), got.Col("match_count")
	if got.Len() != 3 || sep == nil || sep.Unit != "Mpc/h" {
		t.Fatalf("output %d rows, columns %v", got.Len(), got.Cols)
	}
	if want := dc(0.31) - dc(0.3); math.Abs(sep.F[0]-want) > 1e-6*want || cnt.I[0] != 1 {
		t.Errorf("row 0: sep %.9g Mpc/h count %d, want %.9g (Hogg 1999 EdS) and 1", sep.F[0], cnt.I[0], want)
	}
	if !sep.IsNull(1) || cnt.I[1] != 0 {
		t.Errorf("row 1 (no counterpart within 30 Mpc/h) not null")
	}
	// Across the south pole: 0.02° apart at the same distance, chord
	// 2 D_C sin(0.01°).
	if want := 2 * dc(0.2) * math.Sin(0.01*math.Pi/180); math.Abs(sep.F[2]-want) > 1e-6*want {
		t.Errorf("row 2: sep %.9g, want %.9g", sep.F[2], want)
	}
}

// --on matches equal keys (integers or text), nearest = lowest right row,
// and --inner keeps only matched left rows; separations are not added.
func TestMatchOnKey(t *testing.T) {
	dir := t.TempDir()
	l := writeFile(t, dir, "l.csv", "objid,x\n5,a\n7,b\n9,c\n5,d\n")
	r := writeFile(t, dir, "r.csv", "OBJID,name\n9,nine\n5,five\n5,cinq\n11,eleven\n")
	out := filepath.Join(dir, "m.csv")
	if code, _, stderr := run(t, "match", l, r, "--on", "objid=OBJID", "-o", out, "-q"); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	got := readTable(t, out)
	if got.Col("match_sep_arcsec") != nil || got.Len() != 4 {
		t.Fatalf("rows %d, columns %v", got.Len(), got.Cols)
	}
	name, cnt := got.Col("name"), got.Col("match_count")
	wantName := []string{"five", "", "nine", "five"}
	wantCnt := []int64{2, 0, 1, 2}
	for i := range 4 {
		if name.Format(i) != wantName[i] || cnt.I[i] != wantCnt[i] || (wantName[i] == "") != name.IsNull(i) {
			t.Errorf("row %d: name %q count %d, want %q %d", i, name.Format(i), cnt.I[i], wantName[i], wantCnt[i])
		}
	}
	if code, _, stderr := run(t, "match", l, r, "--on", "objid=OBJID", "--all", "--inner", "-o", out, "-q"); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	got = readTable(t, out)
	var pairs []string
	for i := range got.Len() {
		pairs = append(pairs, got.Col("x").Format(i)+":"+got.Col("name").Format(i))
	}
	if s := strings.Join(pairs, " "); s != "a:five a:cinq c:nine d:five d:cinq" {
		t.Errorf("--all --inner pairs %q", s)
	}
	// Text keys, and a kind mismatch named with the file and column.
	if code, _, stderr := run(t, "match", l, r, "--on", "x=name", "-o", out, "-q"); code != exitOK {
		t.Fatalf("text keys: exit %d: %s", code, stderr)
	}
	code, _, stderr := run(t, "match", l, r, "--on", "objid=name", "-o", out, "-q")
	if code != exitFail || !strings.Contains(stderr, "r.csv") || !strings.Contains(stderr, `"name"`) {
		t.Errorf("kind mismatch: exit %d: %s", code, stderr)
	}
}

// Redshift tolerance and a zero radius through the command line: two
// identical positions match at radius 0 only when |Δz| ≤ dz.
func TestMatchZeroRadiusAndDZ(t *testing.T) {
	dir := t.TempDir()
	l := writeFile(t, dir, "l.csv", "ra,dec,z\n0,0,0.1\n359.9999999,0,0.1\n")
	r := writeFile(t, dir, "r.csv", "ra,dec,z\n0,0,0.1005\n0,0,0.2\n0.0000001,0,0.1\n")
	out := filepath.Join(dir, "m.csv")
	for _, c := range []struct {
		dz     string
		counts []int64
	}{{"0.001", []int64{1, 0}}, {"0.2", []int64{2, 0}}} {
		code, _, stderr := run(t, "match", l, r, "--radius", "0deg", "--dz", c.dz, "-o", out, "-q")
		if code != exitOK {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		cnt := readTable(t, out).Col("match_count").I
		if cnt[0] != c.counts[0] || cnt[1] != c.counts[1] {
			t.Errorf("--dz %s: counts %v, want %v", c.dz, cnt, c.counts)
		}
	}
	// --dv: c|Δz|/(1 + z_left) = 299792.458 × 0.0005 / 1.1 = 136.27 km/s for
	// left row 0 and right row 0 (the rule documented in match.Redshifts).
	for _, c := range []struct {
		dv   string
		want int64
	}{{"140", 1}, {"130", 0}} {
		code, _, stderr := run(t, "match", l, r, "--radius", "0deg", "--dv", c.dv, "-o", out, "-q")
		if code != exitOK {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		if cnt := readTable(t, out).Col("match_count").I; cnt[0] != c.want {
			t.Errorf("--dv %s: count %d, want %d", c.dv, cnt[0], c.want)
		}
	}
	// Across RA 0/360: left row 1 is 1e-7° from right rows 0 and 1 and
	// 2e-7° from right row 2 (on the equator, the angle is the RA
	// difference), all within 1 mas.
	code, _, stderr := run(t, "match", l, r, "--radius", "0.001 arcsec", "--all", "-o", out, "-q")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	got := readTable(t, out)
	if got.Len() != 6 || got.Col("match_count").I[3] != 3 {
		t.Fatalf("RA wrap: %d rows, counts %v", got.Len(), got.Col("match_count").I)
	}
	sep := got.Col("match_sep_arcsec").F
	for k, want := range []float64{0, 0, 1e-7, 1e-7, 1e-7, 2e-7} {
		// 359.9999999 is stored to 5.7e-14° (2e-10"), and its RA difference
		// taken in radians near 2π to 8.9e-16 rad (1.8e-10"): allow 2e-9".
		if math.Abs(sep[k]-want*3600) > 2e-9 {
			t.Errorf("RA wrap: pair %d sep %.6g arcsec, want %.6g", k, sep[k], want*3600)
		}
	}
}

// Bad input names the file, row and column and exits 1; bad options exit 2.
func TestMatchErrors(t *testing.T) {
	dir := t.TempDir()
	good := writeFile(t, dir, "good.csv", "ra,dec,z\n1,2,0.1\n")
	bad := writeFile(t, dir, "bad.csv", "ra,dec,z\n1,2,0.1\n3,4,0.2\n5,95,0.3\n")
	out := filepath.Join(dir, "m.csv")
	for _, c := range []struct {
		args []string
		code int
		want []string
	}{
		{[]string{good, bad, "-o", out}, exitFail, []string{"bad.csv", "row 3", `"dec"`}},
		{[]string{bad, good, "-o", out, "--drop-bad"}, exitOK, nil},
		{[]string{good, bad, "-o", out, "--radius", "5"}, exitUsage, []string{"unit"}},
		{[]string{good, bad, "-o", out, "--radius", "-1deg"}, exitUsage, []string{"≥ 0"}},
		{[]string{good, bad}, exitUsage, []string{"-o OUT"}},
		{[]string{good}, exitUsage, []string{"two catalogues"}},
		{[]string{good, bad, "-o", out, "--on", "ra", "--radius", "1deg"}, exitUsage, []string{"--radius"}},
		{[]string{good, bad, "-o", out, "--radius-mpc", "1", "--dz", "0.1"}, exitUsage, []string{"--dz"}},
		{[]string{good, good, "-o", out, "--on", "nosuch"}, exitFail, []string{"good.csv", "nosuch"}},
		{[]string{good, good, "-o", out, "--on", "ra"}, exitOK, nil},
		{[]string{good, good, "-o", out, "--on", "z"}, exitFail, []string{"good.csv", `"z"`, "float64"}},
		{[]string{good, good, "-o", out, "--right-ra-col", "nosuch"}, exitFail, []string{"good.csv", "nosuch"}},
	} {
		code, _, stderr := run(t, append([]string{"match", "-q"}, c.args...)...)
		if code != c.code {
			t.Errorf("%q: exit %d, want %d: %s", c.args, code, c.code, stderr)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(stderr, w) {
				t.Errorf("%q: stderr %q lacks %q", c.args, stderr, w)
			}
		}
	}
}

// With --drop-bad, bad rows of either side are left out and the rows that
// remain keep their own values: right rows are found through the map from
// validated positions back to table rows.
func TestMatchDropBad(t *testing.T) {
	dir := t.TempDir()
	l := writeFile(t, dir, "l.csv", "ra,dec,tag\n1,95,bad\n3,4,keep\n7,8,alone\n")
	r := writeFile(t, dir, "r.csv", "ra,dec,name\n5,-91,bad\n3,4,hit\n3,4.0001,near\n")
	out := filepath.Join(dir, "m.csv")
	code, _, stderr := run(t, "match", l, r, "--drop-bad", "--radius", "1arcmin", "-o", out)
	if code != exitOK || !strings.Contains(stderr, "dropped 1 bad rows of "+l) || !strings.Contains(stderr, "dropped 1 bad rows of "+r) {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	got := readTable(t, out)
	var rows []string
	for i := range got.Len() {
		rows = append(rows, got.Col("tag").Format(i)+":"+got.Col("name").Format(i)+":"+got.Col("match_count").Format(i))
	}
	if s := strings.Join(rows, " "); s != "keep:hit:2 alone::0" {
		t.Errorf("rows %q, want \"keep:hit:2 alone::0\"", s)
	}
}
