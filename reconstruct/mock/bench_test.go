package mock

import (
	"testing"
)

type allSky struct{}

func (allSky) Completeness(ra, dec float64) float64 { return 1 }

// BenchmarkMock256 is the target: on a 256³ grid, the Gaussian
// field, 2LPT displacements and a survey of about 10⁶ galaxies (all sky to
// z = 0.1 at n̄ = 0.0092 (h/Mpc)³ in a 600 Mpc/h box) in at most 30 s.
func BenchmarkMock256(b *testing.B) {
	m, lp := planck(b)
	for b.Loop() {
		r, err := Generate(Config{Model: m, Power: lp, N: 256, L: 600, Seed: 1, Order: 2})
		if err != nil {
			b.Fatal(err)
		}
		s, err := r.Survey(SurveyOptions{Footprint: allSky{}, NBar: func(float64) float64 { return 0.0092 },
			ZMin: 0.001, ZMax: 0.1, Bias: 1.3, ZRef: 0.05, Observer: [3]float64{300, 300, 300}})
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(s.Len()), "galaxies")
	}
}
