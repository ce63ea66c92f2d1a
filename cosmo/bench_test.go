package cosmo

import (
	"math/rand/v2"
	"testing"
)

func benchRedshifts() []float64 {
	r := rand.New(rand.NewPCG(1, 2))
	z := make([]float64, 1_000_000)
	for i := range z {
		z[i] = 2 * r.Float64()
	}
	return z
}

// benchColdDistances builds the model of p and its table and converts 10^6
// redshifts in every iteration (cold start: what one pipeline run pays).
func benchColdDistances(b *testing.B, p Params) {
	z := benchRedshifts()
	d := make([]float64, len(z))
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		m, err := New(p)
		if err != nil {
			b.Fatal(err)
		}
		if err := m.ComovingDistancesMpch(d, z); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkComovingDistance1M converts 10^6 random redshifts in [0, 2] to
// comoving distances in Mpc/h in the default preset, from a cold start.
func BenchmarkComovingDistance1M(b *testing.B) {
	p, _ := Preset(DefaultPreset)
	benchColdDistances(b, p)
}

// BenchmarkComovingDistance1MFlat is BenchmarkComovingDistance1M for a flat
// model without radiation (H0 = 67.66, Ωm = 0.3111), the model that
// bench/cosmo-vs-astropy.sh gives astropy for a side-by-side comparison.
func BenchmarkComovingDistance1MFlat(b *testing.B) {
	benchColdDistances(b, LambdaCDM(67.66, 0.3111, 0))
}

// BenchmarkComovingDistance1MWarm is BenchmarkComovingDistance1M with the
// table already built.
func BenchmarkComovingDistance1MWarm(b *testing.B) {
	p, _ := Preset(DefaultPreset)
	m, _ := New(p)
	z := benchRedshifts()
	d := make([]float64, len(z))
	m.table()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if err := m.ComovingDistancesMpch(d, z); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkRedshiftAtComovingDistance1M inverts 10^6 distances (warm table).
func BenchmarkRedshiftAtComovingDistance1M(b *testing.B) {
	p, _ := Preset(DefaultPreset)
	m, _ := New(p)
	z := benchRedshifts()
	d := make([]float64, len(z))
	if err := m.ComovingDistancesMpch(d, z); err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if err := m.RedshiftsAtComovingDistancesMpch(z, d); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkNewAndTable measures New plus building the distance table.
func BenchmarkNewAndTable(b *testing.B) {
	p, _ := Preset(DefaultPreset)
	for i := 0; i < b.N; i++ {
		m, _ := New(p)
		m.table()
	}
}

// BenchmarkComovingDistanceDirect measures one direct integral at z = 1.
func BenchmarkComovingDistanceDirect(b *testing.B) {
	p, _ := Preset(DefaultPreset)
	m, _ := New(p)
	for i := 0; i < b.N; i++ {
		m.ComovingDistance(1)
	}
}

// BenchmarkGrowthTable measures building the growth ODE table.
func BenchmarkGrowthTable(b *testing.B) {
	p, _ := Preset(DefaultPreset)
	m, _ := New(p)
	for i := 0; i < b.N; i++ {
		m.buildGrowth()
	}
}
