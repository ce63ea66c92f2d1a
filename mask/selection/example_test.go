package selection_test

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/mask/selection"
)

func Example() {
	p, _ := cosmo.Preset("planck2018")
	m, _ := cosmo.New(p)
	// A toy survey: redshifts and the completeness at each galaxy.
	z := []float64{0.11, 0.12, 0.14, 0.15, 0.15, 0.17, 0.18, 0.2}
	c := []float64{1, 0.8, 1, 1, 0.5, 1, 0.9, 1}
	nz, _ := selection.EstimateNZ(z, selection.EstimateOptions{Width: 0.03, Smooth: -1})
	nbar, _ := selection.NewNBar(nz, m, 0.01) // effective solid angle in sr
	w := make([]float64, len(z))
	if err := selection.Weights(w, z, c, nil, nbar); err != nil {
		fmt.Println(err)
		return
	}
	var cw float64
	for i := range w {
		cw += c[i] * w[i]
	}
	fmt.Printf("%d bins of width %.3f\n", len(nz.Counts), nz.Binning.Width)
	fmt.Printf("Σ c·w / volume = %.6f\n", cw/nbar.TotalVolume())

	// p agrees with scipy 1.10.1: kstest([0.1, 0.4, 0.45, 0.8], "uniform", method="exact") gives 0.7708.
	d, pv, _ := selection.KSOneSample([]float64{0.1, 0.4, 0.45, 0.8}, func(x float64) float64 { return math.Min(1, math.Max(0, x)) })
	fmt.Printf("D = %.2f, p = %.3f\n", d, pv)
	// Output:
	// 3 bins of width 0.030
	// Σ c·w / volume = 1.000000
	// D = 0.30, p = 0.771
}
