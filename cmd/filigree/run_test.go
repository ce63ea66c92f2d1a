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

// TestRunSurveyAndBox runs the whole chain on small mocks in both modes
// and checks the output columns, that every labelled galaxy has a code in
// 0–3 consistent with its eigenvalues and the threshold (the code counts
// eigenvalues above λ_th: Hahn et al. 2007), that the volume and mass
// fractions sum to 1, and that the fields cube and summary are written.
func TestRunSurveyAndBox(t *testing.T) {
	dir := t.TempDir()
	reg := filepath.Join(dir, "fp.reg")
	os.WriteFile(reg, []byte("include box ra=150,190 dec=0,25\nexclude cap centre=170,12 radius=2\n"), 0o644)
	mock := filepath.Join(dir, "m.fits")
	if code, _, e := run(t, "mock", "--footprint", reg, "--grid", "64", "--box", "300", "--zmax", "0.07",
		"--nz-cap", "0.004", "--seed", "3", "-o", mock, "--quiet"); code != exitOK {
		t.Fatalf("mock: %s", e)
	}
	out := filepath.Join(dir, "r.fits")
	sum := filepath.Join(dir, "s.json")
	fields := filepath.Join(dir, "f.fits")
	groupsOut := filepath.Join(dir, "g.csv")
	code, _, stderr := run(t, "run", mock, "--footprint", reg, "-o", out, "--fields", fields, "--summary", sum, "--max-grid", "96",
		"--rsd", "full", "--bias", "1.3", "--groups", groupsOut, "--recon", "zeldovich", "--quiet")
	if code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	checkRunOutput(t, out, sum, true)
	checkRSDOutput(t, out, groupsOut)
	if _, err := survey.ReadCubeFile(fields); err != nil {
		t.Errorf("fields cube: %v", err)
	}
	checkProbe(t, dir, fields, out, out)

	box := filepath.Join(dir, "b.csv")
	if code, _, e := run(t, "mock", "--box-only", "--grid", "32", "--box", "200", "--density", "0.002", "-o", box, "--quiet"); code != exitOK {
		t.Fatalf("mock box: %s", e)
	}
	out2 := filepath.Join(dir, "rb.parquet")
	sum2 := filepath.Join(dir, "s2.json")
	if code, _, e := run(t, "run", box, "--box", "200", "--xyz-cols", "x,y,z", "--recon", "transport", "--recon-resamples", "2", "-o", out2, "--summary", sum2, "--quiet"); code != exitOK {
		t.Fatalf("run --box: %s", e)
	}
	checkRunOutput(t, out2, sum2, false)
	checkReconOutput(t, out2, 200)
}

// checkReconOutput checks the reconstruction columns of a box run: every
// point has a Lagrangian position in the box whose displacement is the
// minimum-image difference from its position, a Lagrangian web code in
// 0–3 consistent with its deformation eigenvalues, and the displacements
// correlate with the mock's true ones (Lagrangian positions are the
// particles' grid points).
func checkReconOutput(t *testing.T, out string, L float64) {
	t.Helper()
	tab, err := survey.Read(out, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []string{"lagr_x", "lagr_y", "lagr_z", "disp_x", "disp_y", "disp_z", "deform_l1", "deform_l2", "deform_l3", "web_lagr", "web_agree"} {
		if tab.Col(c) == nil {
			t.Fatalf("no column %q", c)
		}
	}
	// web_agree is a fraction of 2 resamples (0, ½ or 1) or null
	for i, v := range tab.Col("web_agree").F {
		if !tab.Col("web_agree").IsNull(i) && v != 0 && v != 0.5 && v != 1 {
			t.Fatalf("web_agree row %d is %g, want 0, 0.5 or 1", i, v)
		}
	}
	var sxy, sxx, syy float64
	for a, ax := range []string{"x", "y", "z"} {
		x, q, d := tab.Col(ax).F, tab.Col("lagr_"+ax).F, tab.Col("disp_"+ax).F
		tq := tab.Col("true_lagr_" + ax).F
		for i := range x {
			if q[i] < 0 || q[i] >= L {
				t.Fatalf("row %d: lagr_%s = %v outside [0, %v)", i, ax, q[i], L)
			}
			dd := x[i] - q[i]
			dd -= L * math.Round(dd/L)
			if math.Abs(dd-d[i]) > 1e-6 {
				t.Fatalf("row %d axis %d: disp %v, x − q %v", i, a, d[i], dd)
			}
			td := x[i] - tq[i]
			td -= L * math.Round(td/L)
			sxy += d[i] * td
			sxx += d[i] * d[i]
			syy += td * td
		}
	}
	r := sxy / math.Sqrt(sxx*syy)
	t.Logf("correlation of reconstructed and true displacements: %.3f", r)
	if r < 0.5 {
		t.Errorf("displacement correlation %.3f", r)
	}
}

func checkRunOutput(t *testing.T, out, sum string, surveyMode bool) {
	t.Helper()
	tab, err := survey.Read(out, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"weight", "dtfe_density", "delta", "tidal_l1", "tidal_l2", "tidal_l3", "web_tidal", "flags"}
	if surveyMode {
		want = append(want, "comov_dist", "cart_x", "cart_y", "cart_z", "edge_dist")
	}
	for _, c := range want {
		if tab.Col(c) == nil {
			t.Fatalf("%s: no column %q", out, c)
		}
	}
	var s struct {
		Threshold float64            `json:"threshold"`
		Vol       map[string]float64 `json:"volume_fractions"`
		Mass      map[string]float64 `json:"mass_fractions"`
	}
	b, err := os.ReadFile(sum)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	var sv, sm float64
	for _, v := range s.Vol {
		sv += v
	}
	for _, v := range s.Mass {
		sm += v
	}
	if math.Abs(sv-1) > 1e-9 || math.Abs(sm-1) > 1e-9 {
		t.Errorf("fractions sum to %v (volume) and %v (mass)", sv, sm)
	}
	web, l1, l2, l3 := tab.Col("web_tidal"), tab.Col("tidal_l1").F, tab.Col("tidal_l2").F, tab.Col("tidal_l3").F
	labelled := 0
	for i, c := range web.I {
		if web.IsNull(i) {
			continue
		}
		labelled++
		n := 0
		for _, l := range []float64{l1[i], l2[i], l3[i]} {
			if l > s.Threshold {
				n++
			}
		}
		if int64(n) != c || l1[i] < l2[i] || l2[i] < l3[i] {
			t.Fatalf("row %d: code %d for eigenvalues %v %v %v at λ_th %v", i, c, l1[i], l2[i], l3[i], s.Threshold)
		}
	}
	if labelled < tab.Len()/2 {
		t.Errorf("only %d of %d rows labelled", labelled, tab.Len())
	}
}

// checkProbe samples the run's fields cube at the same galaxies with
// probe, placed by their z_cosmo (the redshift of the distance the run
// used after its redshift-space correction): inside the surveyed volume it
// must give the run's own delta and eigenvalues (the same trilinear
// interpolation of the same fields, stored as float32), and it must refuse
// a different cosmology unless forced.
func checkProbe(t *testing.T, dir, fields, cat, runOut string) {
	t.Helper()
	out := filepath.Join(dir, "probe.csv")
	if code, _, e := run(t, "probe", fields, cat, "--z-col", "z_cosmo", "--prefix", "probe_", "-o", out, "--quiet"); code != exitOK {
		t.Fatalf("probe: %s", e)
	}
	p, err := survey.Read(out, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	r, _ := survey.Read(runOut, survey.ReadOptions{})
	if p.Len() != r.Len() {
		t.Fatalf("probe rows %d, run rows %d", p.Len(), r.Len())
	}
	pd, rd := p.Col("probe_delta"), r.Col("delta")
	pl, rl := p.Col("probe_tidal_l1"), r.Col("tidal_l1")
	compared := 0
	for i := 0; i < p.Len(); i++ {
		if pd.IsNull(i) || rd.IsNull(i) {
			continue
		}
		compared++
		if math.Abs(pd.F[i]-rd.F[i]) > 1e-5*(1+math.Abs(rd.F[i])) || math.Abs(pl.F[i]-rl.F[i]) > 1e-5*(1+math.Abs(rl.F[i])) {
			t.Fatalf("row %d: probe delta %v, l1 %v; run delta %v, l1 %v", i, pd.F[i], pl.F[i], rd.F[i], rl.F[i])
		}
	}
	if compared < p.Len()/2 {
		t.Errorf("only %d of %d rows compared", compared, p.Len())
	}
	// The run reconstructed (Zel'dovich): the probe finds Lagrangian
	// positions by q = x − Ψ(q) and its web_lagr should mostly agree with
	// the run's own (the run samples at x − Ψ(x), the probe iterates).
	pw, rw := p.Col("probe_web_lagr"), r.Col("web_lagr")
	if pw == nil || rw == nil {
		t.Fatal("no web_lagr from probe or run")
	}
	same, tot := 0, 0
	for i := range pw.I {
		if pw.IsNull(i) || rw.IsNull(i) {
			continue
		}
		tot++
		if pw.I[i] == rw.I[i] {
			same++
		}
	}
	if tot == 0 || float64(same) < 0.8*float64(tot) {
		t.Errorf("probe and run web_lagr agree for %d of %d galaxies", same, tot)
	}
	if code, _, e := run(t, "probe", fields, cat, "--z-col", "z_cosmo", "--prefix", "probe_", "-o", out, "--cosmology", "wmap9", "--quiet"); code != exitUsage || !strings.Contains(e, "--force") {
		t.Errorf("conflicting cosmology: exit %d: %s", code, e)
	}
	if code, _, e := run(t, "probe", fields, cat, "--z-col", "z_cosmo", "--prefix", "probe_", "-o", out, "--cosmology", "wmap9", "--force", "--quiet"); code != exitOK {
		t.Errorf("--force: exit %d: %s", code, e)
	}
}

// checkRSDOutput checks the redshift-space columns: every weighted galaxy
// has a group whose size group_n matches the group catalogue's richness and
// the count of its members in the table, and the velocities and
// cosmological redshifts obey (1+z) = (1+z_cosmo)(1+v/c) to the accuracy
// (to 1e-9, as z_cosmo and vpec_los are defined).
func checkRSDOutput(t *testing.T, out, groupsPath string) {
	t.Helper()
	tab, err := survey.Read(out, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	gt, err := survey.Read(groupsPath, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	gid, gn := tab.Col("group_id"), tab.Col("group_n")
	if gid == nil || gn == nil || tab.Col("vpec_los") == nil || tab.Col("z_cosmo") == nil {
		t.Fatal("missing group_id, group_n, vpec_los or z_cosmo")
	}
	count := map[int64]int64{}
	for i, g := range gid.I {
		if !gid.IsNull(i) {
			count[g]++
		}
	}
	rich := gt.Col("n_members").I
	for i, g := range gid.I {
		if gid.IsNull(i) {
			continue
		}
		if gn.I[i] != count[g] || rich[g] != count[g] {
			t.Fatalf("row %d: group %d has group_n %d, catalogue %d, members counted %d", i, g, gn.I[i], rich[g], count[g])
		}
	}
	z, zc, v := tab.Col("z").F, tab.Col("z_cosmo"), tab.Col("vpec_los")
	for i := range z {
		if zc.IsNull(i) {
			continue
		}
		if want := (1+zc.F[i])*(1+v.F[i]/299792.458) - 1; math.Abs(z[i]-want) > 1e-9 {
			t.Fatalf("row %d: z %v, (1+z_cosmo)(1+v/c)−1 = %v", i, z[i], want)
		}
	}
}
