package selection

import (
	"errors"
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"testing"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/survey"
)

func planck(t testing.TB) *cosmo.Model {
	p, err := cosmo.Preset("planck2018")
	if err != nil {
		t.Fatal(err)
	}
	m, err := cosmo.New(p)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func TestEstimateNZBinning(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	z := make([]float64, 1000)
	for i := range z {
		z[i] = 0.1 + 0.4*rng.Float64()
	}
	z[0], z[1] = 0.1, 0.5 // the range is exactly [0.1, 0.5]
	nz, err := EstimateNZ(z, EstimateOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// Rule: max(0.005, 0.4/(2·1000^{1/3})) = 0.02, so 20 bins.
	if len(nz.Raw) != 20 || math.Abs(nz.Binning.Width-0.02) > 1e-15 || nz.Binning.Smooth != nz.Binning.Width {
		t.Errorf("binning %+v with %d bins", nz.Binning, len(nz.Raw))
	}
	var raw, sm float64
	for i := range nz.Raw {
		raw += nz.Raw[i]
		sm += nz.Counts[i]
	}
	if raw != 1000 || math.Abs(sm-1000) > 1e-9 || nz.Binning.N != 1000 {
		t.Errorf("totals: raw %v smoothed %v", raw, sm)
	}
	// Given width, tiled: ⌈0.4/0.03⌉ = 14 bins; values outside are dropped.
	nz, err = EstimateNZ(append(z, 0.05, 0.7), EstimateOptions{ZMin: 0.1, ZMax: 0.5, Width: 0.03, Smooth: -1})
	if err != nil {
		t.Fatal(err)
	}
	if len(nz.Raw) != 14 || nz.Binning.Outside != 2 || nz.Binning.Smooth != 0 || nz.Counts[3] != nz.Raw[3] {
		t.Errorf("given width: %+v, %d bins", nz.Binning, len(nz.Raw))
	}
	// Every redshift lands in the bin whose edges hold it.
	nb, _ := newNBar(nz.Edges, nz.Raw, nil, planck(t), 1)
	count := make([]float64, len(nz.Raw))
	for _, v := range z {
		count[nb.Bin(v)]++
	}
	for i := range count {
		if count[i] != nz.Raw[i] {
			t.Fatalf("bin %d: histogram %v, Bin() %v", i, nz.Raw[i], count[i])
		}
	}
	kv := nz.Binning.KeyValues()
	if len(kv) != 7 || kv[2][0] != "nz.bin_width" {
		t.Errorf("KeyValues %v", kv)
	}
}

// A spike smoothed by a Gaussian of σ = 3 bin widths far from the edges:
// the discretised kernel's variance is σ² + w²/12 (Sheppard's correction
// for grouping, Sheppard 1898; from memory), its mean the spike's bin centre
// and its total the spike's count.
func TestSmoothSheppard(t *testing.T) {
	edges := make([]float64, 101)
	for i := range edges {
		edges[i] = float64(i) * 0.01
	}
	counts := make([]float64, 100)
	counts[50] = 1000
	out := smooth(edges, counts, 0.03)
	var s0, s1, s2 float64
	for i, c := range out {
		x := (edges[i] + edges[i+1]) / 2
		s0 += c
		s1 += c * x
		s2 += c * x * x
	}
	mean := s1 / s0
	v := s2/s0 - mean*mean
	want := 0.03*0.03 + 0.01*0.01/12
	if math.Abs(s0-1000) > 1e-9 || math.Abs(mean-0.505) > 1e-12 || math.Abs(v-want) > 1e-6*want {
		t.Errorf("total %v mean %v variance %v, want 1000, 0.505, %v", s0, mean, v, want)
	}
}

func TestEstimateNZErrors(t *testing.T) {
	for _, c := range []struct {
		z   []float64
		opt EstimateOptions
	}{
		{nil, EstimateOptions{}},
		{[]float64{0.1, math.NaN()}, EstimateOptions{}},
		{[]float64{0.1, -0.2}, EstimateOptions{}},
		{[]float64{0.1, 0.1}, EstimateOptions{}},
		{[]float64{0.1, 0.2}, EstimateOptions{ZMin: 0.3, ZMax: 0.2}},
		{[]float64{0.1, 0.2}, EstimateOptions{Width: -1}},
		{[]float64{0.1, 0.2}, EstimateOptions{Width: 1e-9}},
		{[]float64{0.1, 0.2}, EstimateOptions{Smooth: math.NaN()}},
	} {
		if _, err := EstimateNZ(c.z, c.opt); err == nil {
			t.Errorf("EstimateNZ(%v, %+v): no error", c.z, c.opt)
		}
	}
}

// The shells tile the survey volume: Σ V_bin equals cosmo's ComovingVolume
// over the whole range (cosmo is checked against astropy 5.2.1), and a thin
// shell's volume matches dV_C/dz dΩ Δz Ω (Hogg 1999, eq. 28) to O(Δz²).
func TestNBarVolumes(t *testing.T) {
	m := planck(t)
	h3 := math.Pow(m.LittleH(), 3)
	z := make([]float64, 5000)
	rng := rand.New(rand.NewPCG(2, 2))
	for i := range z {
		z[i] = 0.02 + 0.6*rng.Float64()
	}
	nz, err := EstimateNZ(z, EstimateOptions{ZMin: 0.02, ZMax: 0.62, Width: 0.001})
	if err != nil {
		t.Fatal(err)
	}
	const sr = 1.2
	nb, err := NewNBar(nz, m, sr)
	if err != nil {
		t.Fatal(err)
	}
	want := m.ComovingVolume(0.02, 0.62, sr) * h3
	if got := nb.TotalVolume(); math.Abs(got-want) > 1e-12*want {
		t.Errorf("Σ V_bin = %v, ComovingVolume %v", got, want)
	}
	for i := 0; i < len(nb.Volume); i += 97 {
		zc := (nb.Edges[i] + nb.Edges[i+1]) / 2
		dv := m.DifferentialComovingVolume(zc) * (nb.Edges[i+1] - nb.Edges[i]) * sr * h3
		// Midpoint rule: relative error ≈ Δz² f''/(24 f), with f ∝ z² at
		// low z, so Δz²/(12 z²); allow twice that.
		dz := nb.Edges[i+1] - nb.Edges[i]
		if math.Abs(dv-nb.Volume[i]) > dz*dz/(6*zc*zc)*dv {
			t.Errorf("bin %d: volume %v, dV/dz Δz %v", i, nb.Volume[i], dv)
		}
		if d := m.ComovingDistance(nb.Edges[i]) * m.LittleH(); math.Abs(d-nb.DistEdges[i]) > 1e-9*d {
			t.Errorf("edge %d: distance %v, want %v", i, nb.DistEdges[i], d)
		}
	}
	var sum float64
	for i := range nb.Density {
		sum += nb.Density[i] * nb.Volume[i]
	}
	if math.Abs(sum-5000) > 1e-9 {
		t.Errorf("Σ n̄ V = %v, want N = 5000", sum)
	}
	if _, err := NewNBar(nz, m, 13); err == nil {
		t.Error("solid angle > 4π: no error")
	}
}

// sampleSurvey draws galaxies uniform in comoving volume at density n0
// ((h/Mpc)³) between z1 and z2 over two sky zones of solid angles omega[k]
// and completeness comp[k], keeping each with probability comp: r from
// the inverse of the cumulative volume V ∝ r³ (flat model), z from cosmo's
// inverse distance. It is invented test data.
func sampleSurvey(t testing.TB, m *cosmo.Model, n0, z1, z2 float64, omega, comp [2]float64, seed uint64) (z, c []float64) {
	r1 := m.ComovingDistance(z1) * m.LittleH()
	r2 := m.ComovingDistance(z2) * m.LittleH()
	om := omega[0] + omega[1]
	vol := om / 3 * (r2*r2*r2 - r1*r1*r1)
	rng := rand.New(rand.NewPCG(seed, 7))
	ntrue := int(n0 * vol)
	var r []float64
	for i := 0; i < ntrue; i++ {
		k := 0
		if rng.Float64()*om > omega[0] {
			k = 1
		}
		u := rng.Float64()
		if rng.Float64() >= comp[k] {
			continue
		}
		r = append(r, math.Cbrt(r1*r1*r1+u*(r2*r2*r2-r1*r1*r1)))
		c = append(c, comp[k])
	}
	z = make([]float64, len(r))
	if err := m.RedshiftsAtComovingDistancesMpch(z, r); err != nil {
		t.Fatal(err)
	}
	for i := range z { // rounding at the ends of the range
		z[i] = math.Max(z1, math.Min(z2, z[i]))
	}
	return z, c
}

// The normalisation claim of Weights on a synthetic uniform-in-volume
// sample: Σ w = V(geometric footprint) within 5 standard deviations of the
// mean of 1/c, and exactly Σ c w = Σ V_bin over the effective solid angle.
func TestWeightsNormalisation(t *testing.T) {
	m := planck(t)
	h3 := math.Pow(m.LittleH(), 3)
	omega, comp := [2]float64{0.3, 0.2}, [2]float64{0.9, 0.5}
	const n0, z1, z2 = 2e-3, 0.05, 0.3
	z, c := sampleSurvey(t, m, n0, z1, z2, omega, comp, 11)
	effSr := omega[0]*comp[0] + omega[1]*comp[1]
	geoVol := m.ComovingVolume(z1, z2, omega[0]+omega[1]) * h3
	// Standard deviation of Σ w from the scatter of 1/c.
	var s1, s2 float64
	for _, ci := range c {
		s1 += 1 / ci
		s2 += 1 / (ci * ci)
	}
	nf := float64(len(c))
	relSD := math.Sqrt(s2/nf-(s1/nf)*(s1/nf)) / (s1 / nf) / math.Sqrt(nf)
	for _, sm := range []float64{-1, 0} {
		nz, err := EstimateNZ(z, EstimateOptions{ZMin: z1, ZMax: z2, Smooth: sm})
		if err != nil {
			t.Fatal(err)
		}
		nb, err := NewNBar(nz, m, effSr)
		if err != nil {
			t.Fatal(err)
		}
		w := make([]float64, len(z))
		if err := Weights(w, z, c, nil, nb); err != nil {
			t.Fatal(err)
		}
		var sw, scw float64
		for i := range w {
			sw += w[i]
			scw += c[i] * w[i]
		}
		rel := sw/geoVol - 1
		t.Logf("N = %d, smoothing %v: Σw / V_geo − 1 = %.2e (σ %.1e); Σcw / V_eff − 1 = %.2e",
			len(z), nz.Binning.Smooth, rel, relSD, scw/nb.TotalVolume()-1)
		tol := 5 * relSD
		if sm == 0 {
			tol += 2e-3 // smoothing moves counts between bins of different volume
		}
		if math.Abs(rel) > tol {
			t.Errorf("smoothing %v: Σ w = %v, geometric volume %v (rel %v)", sm, sw, geoVol, rel)
		}
		if sm < 0 {
			if math.Abs(scw/nb.TotalVolume()-1) > 1e-12 {
				t.Errorf("Σ c w = %v, Σ V_bin = %v", scw, nb.TotalVolume())
			}
			// n̄ recovers the true density in each bin within 5 Poisson σ.
			for i, d := range nb.Density {
				if sd := math.Sqrt(nb.Count[i]) / nb.Volume[i]; math.Abs(d-n0) > 5*sd {
					t.Errorf("bin %d: n̄ = %v, true %v ± %v", i, d, n0, sd)
				}
			}
		}
	}
}

func TestWeightsErrorsAndThreads(t *testing.T) {
	m := planck(t)
	z, c := sampleSurvey(t, m, 1e-3, 0.05, 0.2, [2]float64{0.5, 0.5}, [2]float64{1, 0.7}, 3)
	nz, _ := EstimateNZ(z, EstimateOptions{})
	nb, err := NewNBar(nz, m, 0.85)
	if err != nil {
		t.Fatal(err)
	}
	u := make([]float64, len(z))
	for i := range u {
		u[i] = 1 + float64(i%3)
	}
	w1, w2 := make([]float64, len(z)), make([]float64, len(z))
	old := runtime.GOMAXPROCS(1)
	err1 := Weights(w1, z, c, u, nb)
	runtime.GOMAXPROCS(4)
	err2 := Weights(w2, z, c, u, nb)
	runtime.GOMAXPROCS(old)
	if err1 != nil || err2 != nil {
		t.Fatal(err1, err2)
	}
	for i := range w1 {
		if w1[i] != w2[i] || w1[i] != u[i]/(c[i]*nb.At(z[i])) {
			t.Fatalf("galaxy %d: %v vs %v", i, w1[i], w2[i])
		}
	}
	bad := append([]float64(nil), z...)
	bad[5], bad[40000] = 9, math.NaN()
	err = Weights(w1, bad, nil, nil, nb)
	var we *WeightError
	if !errors.As(err, &we) || we.Index != 5 || !math.IsNaN(w1[5]) || !math.IsNaN(w1[40000]) || math.IsNaN(w1[6]) {
		t.Errorf("bad redshift: %v", err)
	}
	cc := append([]float64(nil), c...)
	cc[7] = 0
	if err := Weights(w1, z, cc, nil, nb); !errors.As(err, &we) || we.Index != 7 || we.Quantity != "completeness" {
		t.Errorf("bad completeness: %v", err)
	}
	u[9] = -1
	if err := Weights(w1, z, nil, u, nb); !errors.As(err, &we) || we.Index != 9 || we.Quantity != "user weight" {
		t.Errorf("bad user weight: %v", err)
	}
}

func floatCol(name string, v ...float64) *survey.Column {
	c := survey.NewColumn(name, survey.Float64, len(v))
	c.F = append(c.F, v...)
	return c
}

func TestNBarFromTable(t *testing.T) {
	m := planck(t)
	tab := &survey.Table{Cols: []*survey.Column{floatCol("z", 0.1, 0.2, 0.3, 0.5), floatCol("n", 100, 300, 500, 200)}}
	nb, err := NBarFromTable("nz.csv", tab, "z", "n", CountsPerBin, m, 0.5)
	if err != nil {
		t.Fatal(err)
	}
	wantEdges := []float64{0.05, 0.15, 0.25, 0.4, 0.6}
	for i, e := range wantEdges {
		if math.Abs(nb.Edges[i]-e) > 1e-15 {
			t.Errorf("edges %v, want %v", nb.Edges, wantEdges)
			break
		}
	}
	h3 := math.Pow(m.LittleH(), 3)
	if v := m.ComovingVolume(0.25, 0.4, 0.5) * h3; math.Abs(nb.Density[2]-500/v) > 1e-12*nb.Density[2] {
		t.Errorf("density %v, want %v", nb.Density[2], 500/v)
	}
	nd, err := NBarFromTable("nz.csv", tab, "z", "n", DensityMpch3, m, 0.5)
	if err != nil || nd.Density[1] != 300 || nd.At(0.22) != 300 || nd.At(0.7) != 0 ||
		nd.AtDistance(m.ComovingDistance(0.22)*m.LittleH()) != 300 || nd.AtDistance(nd.DistEdges[4]) != 200 || nd.AtDistance(1e5) != 0 {
		t.Errorf("density table: %v %v", nd, err)
	}
	for _, c := range []struct {
		tab      *survey.Table
		zc, nc   string
		row      int64
		col, msg string
	}{
		{tab, "redshift", "n", 0, "redshift", "no such column"},
		{&survey.Table{Cols: []*survey.Column{floatCol("z", 0.1, 0.3, 0.2), floatCol("n", 1, 2, 3)}}, "z", "n", 3, "z", "increase"},
		{&survey.Table{Cols: []*survey.Column{floatCol("z", 0.1, 0.3, 0.4), floatCol("n", 1, -2, 3)}}, "z", "n", 2, "n", "≥ 0"},
		{&survey.Table{Cols: []*survey.Column{floatCol("z", 0.1, math.NaN()), floatCol("n", 1, 2)}}, "z", "n", 2, "z", "redshift"},
		{&survey.Table{Cols: []*survey.Column{floatCol("z", 0.1), floatCol("n", 1)}}, "z", "n", 0, "", "at least 2 rows"},
	} {
		_, err := NBarFromTable("nz.csv", c.tab, c.zc, c.nc, CountsPerBin, m, 0.5)
		var ie *survey.InputError
		if !errors.As(err, &ie) || ie.File != "nz.csv" || ie.Row != c.row || ie.Column != c.col || !strings.Contains(ie.Msg, c.msg) {
			t.Errorf("got %v, want row %d column %q %q", err, c.row, c.col, c.msg)
		}
	}
}

func BenchmarkWeights10M(b *testing.B) {
	m := planck(b)
	n := 10_000_000
	z, c := make([]float64, n), make([]float64, n)
	rng := rand.New(rand.NewPCG(4, 4))
	for i := range z {
		z[i] = 0.02 + 0.5*rng.Float64()
		c[i] = 0.5 + 0.5*rng.Float64()
	}
	nz, err := EstimateNZ(z, EstimateOptions{})
	if err != nil {
		b.Fatal(err)
	}
	nb, err := NewNBar(nz, m, 1)
	if err != nil {
		b.Fatal(err)
	}
	w := make([]float64, n)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if err := Weights(w, z, c, nil, nb); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkEstimateNZ10M(b *testing.B) {
	n := 10_000_000
	z := make([]float64, n)
	rng := rand.New(rand.NewPCG(5, 5))
	for i := range z {
		z[i] = 0.02 + 0.5*rng.Float64()
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := EstimateNZ(z, EstimateOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
