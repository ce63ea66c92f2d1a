package main

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/survey"
)

// TestMockSurveyCommand runs a small light-cone mock end to end and checks
// its columns, units, the redshift relation (1+z) = (1+z_c)(1+v/c), that
// every galaxy lies in the footprint's box, and that the same seed gives
// the same galaxies.
func TestMockSurveyCommand(t *testing.T) {
	dir := t.TempDir()
	reg := filepath.Join(dir, "fp.reg")
	os.WriteFile(reg, []byte("include box ra=140,200 dec=-10,30\nexclude cap centre=170,10 radius=3\n"), 0o644)
	out := filepath.Join(dir, "m.csv")
	args := []string{"mock", "--footprint", reg, "--grid", "48", "--box", "400", "--zmax", "0.08", "--seed", "4",
		"--nz-cap", "0.0015", "-o", out, "--summary", filepath.Join(dir, "s.json"), "--quiet"}
	code, _, stderr := run(t, args...)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	tab, err := survey.Read(out, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []string{"id", "ra", "dec", "z", "true_x", "true_y", "true_z", "true_lagr_x", "true_lagr_y", "true_lagr_z", "true_vpec_los", "true_z_cosmo"} {
		if tab.Col(c) == nil {
			t.Errorf("no column %q", c)
		}
	}
	if tab.Len() < 100 {
		t.Fatalf("only %d galaxies", tab.Len())
	}
	if u := tab.Col("true_vpec_los").Unit; u != "km/s" {
		t.Errorf("true_vpec_los unit %q", u)
	}
	ra, dec, z := tab.Col("ra").F, tab.Col("dec").F, tab.Col("z").F
	zc, v := tab.Col("true_z_cosmo").F, tab.Col("true_vpec_los").F
	for i := range ra {
		if ra[i] < 140 || ra[i] > 200 || dec[i] < -10 || dec[i] > 30 || z[i] > 0.08 {
			t.Fatalf("row %d outside the survey: %v %v %v", i, ra[i], dec[i], z[i])
		}
		if want := (1+zc[i])*(1+v[i]/cosmo.SpeedOfLight) - 1; math.Abs(z[i]-want) > 1e-9 {
			t.Fatalf("row %d: z %v, (1+z_c)(1+v/c)−1 = %v", i, z[i], want)
		}
	}
	// Same seed, same galaxies.
	out2 := filepath.Join(dir, "m2.csv")
	args[len(args)-4] = out2
	if code, _, stderr := run(t, args...); code != exitOK {
		t.Fatalf("second run: exit %d: %s", code, stderr)
	}
	tab2, _ := survey.Read(out2, survey.ReadOptions{})
	if tab2.Len() != tab.Len() {
		t.Fatalf("same seed: %d then %d galaxies", tab.Len(), tab2.Len())
	}
	for i, x := range tab.Col("true_x").F {
		if tab2.Col("true_x").F[i] != x {
			t.Fatalf("same seed: row %d differs", i)
		}
	}
}

// TestMockBoxCommand checks box mode: positions in [0, L), and in
// redshift space along z the x and y coordinates equal the real-space ones
// while z moves by v_z (1+z)/(100 E(z)) (plane-parallel distortion).
func TestMockBoxCommand(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "b.parquet")
	code, _, stderr := run(t, "mock", "--box-only", "--grid", "32", "--box", "256", "--tracer", "galaxies", "--density", "0.0005",
		"--rsd-axis", "z", "--redshift", "0.5", "-o", out, "--quiet")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	tab, err := survey.Read(out, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	p, _ := cosmo.Preset("planck2018")
	m, _ := cosmo.New(p)
	scale := 1.5 / (100 * m.E(0.5))
	x, tx := tab.Col("x").F, tab.Col("true_x").F
	zz, tz, vz := tab.Col("z").F, tab.Col("true_z").F, tab.Col("true_vz").F
	for i := range x {
		if x[i] != tx[i] || x[i] < 0 || x[i] >= 256 {
			t.Fatalf("row %d: x %v, true_x %v", i, x[i], tx[i])
		}
		d := math.Mod(zz[i]-tz[i]-scale*vz[i]+128+2560, 256) - 128
		if math.Abs(d) > 1e-9 {
			t.Fatalf("row %d: z − true_z − v/(aH) = %v", i, d)
		}
	}
	// Usage errors name the problem.
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"mock", "-o", out}, "--footprint"},
		{[]string{"mock", "--box-only", "--rsd-axis", "w", "-o", out}, "--rsd-axis"},
		{[]string{"mock", "--box-only", "--grid", "8", "--lpt", "3", "-o", out}, "order 3"},
		{[]string{"mock", "--box-only", "--grid", "8", "--density", "1", "-o", out}, "finer grid"},
	} {
		if code, _, stderr := run(t, tc.args...); code == exitOK || !strings.Contains(stderr, tc.want) {
			t.Errorf("%q: exit %d, stderr %q; want %q", tc.args, code, stderr, tc.want)
		}
	}
}
