package cosmo

import (
	"errors"
	"math"
	"math/rand/v2"
	"runtime"
	"testing"
)

// tableModels span the shapes of χ(z) the table must follow.
func tableModels(t *testing.T) []*Model {
	var ms []*Model
	for _, p := range []Params{
		referenceModels["flat_lcdm"],
		referenceModels["closed_lcdm"],
		referenceModels["open_matter"],
		referenceModels["w0wa_open"],
		referenceModels["w0wa_closed_radiation"],
		{H0: 70, OmegaK: 1, W0: -1},                              // empty (Milne)
		{H0: 70, OmegaM: 1, W0: -1},                              // Einstein–de Sitter
		{H0: 60, OmegaM: 0.25, W0: -0.5, Wa: -1.2, TCMB: 2.7255}, // strongly evolving w
	} {
		m, err := New(p)
		if err != nil {
			t.Fatal(err)
		}
		ms = append(ms, m)
	}
	p, _ := Preset(DefaultPreset)
	m, _ := New(p)
	return append(ms, m)
}

// randomRedshifts returns n redshifts: half uniform in [0, 5], half
// log-uniform in [1e-6, MaxRedshift], plus the ends 0 and MaxRedshift.
func randomRedshifts(n int, seed uint64) []float64 {
	r := rand.New(rand.NewPCG(seed, 1))
	z := make([]float64, n)
	for i := range z {
		if i%2 == 0 {
			z[i] = 5 * r.Float64()
		} else {
			z[i] = math.Exp(math.Log(1e-6) + r.Float64()*(math.Log(MaxRedshift)-math.Log(1e-6)))
		}
	}
	z[0], z[n-1] = 0, MaxRedshift
	return z
}

// TestComovingDistancesTable checks the interpolated distances against
// direct integration (ComovingDistance × h) at 10^4 random redshifts per
// model: within the documented 1e-13 D_H absolute and 1e-11 relative.
func TestComovingDistancesTable(t *testing.T) {
	z := randomRedshifts(10000, 7)
	got := make([]float64, len(z))
	for _, m := range tableModels(t) {
		if err := m.ComovingDistancesMpch(got, z); err != nil {
			t.Fatal(err)
		}
		var worstRel, worstAbs float64
		for i, zi := range z {
			want := m.ComovingDistance(zi) * m.LittleH()
			abs := math.Abs(got[i] - want)
			rel := relDiff(got[i], want)
			worstRel, worstAbs = math.Max(worstRel, rel), math.Max(worstAbs, abs)
			if abs > 1e-13*mpchPerDH || rel > 1e-11 {
				t.Errorf("%v: z=%v table %.17g, direct %.17g (rel %.2g)", m, zi, got[i], want, rel)
				break
			}
		}
		t.Logf("%s: table vs direct: largest relative %.2g, absolute %.2g Mpc/h; midpoint check %.2g D_H",
			m.KeyValues()[1:6], worstRel, worstAbs, m.table().midErr)
	}
}

// TestRedshiftsAtComovingDistancesTable checks the vectorised inverse against
// the Newton-polished scalar inverse at 10^4 random distances per model,
// within the documented 1e-12 (1+z), and its round trip through the
// forward table.
func TestRedshiftsAtComovingDistancesTable(t *testing.T) {
	zs := randomRedshifts(10000, 11)
	for _, m := range tableModels(t) {
		d := make([]float64, len(zs))
		if err := m.ComovingDistancesMpch(d, zs); err != nil {
			t.Fatal(err)
		}
		got := make([]float64, len(d))
		if err := m.RedshiftsAtComovingDistancesMpch(got, d); err != nil {
			t.Fatal(err)
		}
		var worst float64
		for i, di := range d {
			want, err := m.RedshiftAtComovingDistance(di / m.LittleH())
			if err != nil {
				t.Fatal(err)
			}
			e := math.Abs(got[i]-want) / (1 + want)
			worst = math.Max(worst, e)
			if e > 1e-12 {
				t.Errorf("%v: d=%v Mpc/h: table z %.17g, direct %.17g", m, di, got[i], want)
				break
			}
			// Round trip through the same interpolant.
			if e := math.Abs(got[i]-zs[i]) / (1 + zs[i]); e > 1e-12 {
				t.Errorf("%v: z=%v → d → z=%v", m, zs[i], got[i])
				break
			}
		}
		t.Logf("%s: table inverse vs direct inverse: largest |Δz|/(1+z) %.2g", m.KeyValues()[1:6], worst)
	}
}

// TestVectorisedThreadIndependence checks that results do not depend on the
// number of threads (design.md: same input, same numbers).
func TestVectorisedThreadIndependence(t *testing.T) {
	p, _ := Preset(DefaultPreset)
	m, _ := New(p)
	z := randomRedshifts(200000, 3)
	run := func(procs int) ([]float64, []float64) {
		old := runtime.GOMAXPROCS(procs)
		defer runtime.GOMAXPROCS(old)
		d := make([]float64, len(z))
		back := make([]float64, len(z))
		if err := m.ComovingDistancesMpch(d, z); err != nil {
			t.Fatal(err)
		}
		if err := m.RedshiftsAtComovingDistancesMpch(back, d); err != nil {
			t.Fatal(err)
		}
		return d, back
	}
	d1, b1 := run(1)
	d4, b4 := run(4)
	for i := range z {
		if d1[i] != d4[i] || b1[i] != b4[i] {
			t.Fatalf("z=%v: 1 thread %v, %v; 4 threads %v, %v", z[i], d1[i], b1[i], d4[i], b4[i])
		}
	}
}

// TestVectorisedDomain checks NaN entries and the *DomainError for the first
// bad index, also when bad entries fall in several parallel chunks.
func TestVectorisedDomain(t *testing.T) {
	p, _ := Preset(DefaultPreset)
	m, _ := New(p)
	z := make([]float64, 100000)
	for i := range z {
		z[i] = 0.5
	}
	z[70000], z[40000], z[90000] = -0.01, math.NaN(), 2e4
	d := make([]float64, len(z))
	err := m.ComovingDistancesMpch(d, z)
	var de *DomainError
	if !errors.As(err, &de) || de.Index != 40000 {
		t.Fatalf("error %v, want *DomainError at index 40000", err)
	}
	for _, i := range []int{40000, 70000, 90000} {
		if !math.IsNaN(d[i]) {
			t.Errorf("d[%d] = %v, want NaN", i, d[i])
		}
	}
	if math.IsNaN(d[0]) || math.IsNaN(d[99999]) {
		t.Errorf("valid entries not computed")
	}
	back := make([]float64, 3)
	err = m.RedshiftsAtComovingDistancesMpch(back, []float64{100, -1, 1e9})
	if !errors.As(err, &de) || de.Index != 1 || !math.IsNaN(back[2]) || math.IsNaN(back[0]) {
		t.Errorf("inverse: error %v, values %v", err, back)
	}
	defer func() {
		if recover() == nil {
			t.Errorf("length mismatch did not panic")
		}
	}()
	_ = m.ComovingDistancesMpch(d[:2], z)
}
