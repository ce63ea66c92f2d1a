package web

import (
	"testing"

	"github.com/filigree-survey/filigree/reconstruct/grid"
	"gonum.org/v1/gonum/mat"
)

// BenchmarkTidal256 times the whole grid pipeline on 256³ cells: Gaussian
// smoothing, the tidal tensor by FFT, its eigenvalues in every cell and the
// classification. Besides wall time it reports the process CPU time per
// operation (cpu-s/op), less sensitive to other load on a shared machine.
// Run with
//
//	go test -run '^$' -bench Tidal256 -benchtime 1x -count 5 ./reconstruct/web/
func BenchmarkTidal256(b *testing.B) {
	g := grid.Geometry{N: 256, L: 512}
	delta := gaussianField(b, g, -2, 0.5, 11)
	cpu0 := cpuSeconds()
	for b.Loop() {
		f, err := Tidal(delta, g, 4)
		if err != nil {
			b.Fatal(err)
		}
		_ = f.Classify(DefaultThreshold)
	}
	b.ReportMetric((cpuSeconds()-cpu0)/float64(b.N), "cpu-s/op")
}

// BenchmarkEigen3 times one eigenvalue solve (the per-cell cost of Tidal
// beyond the FFTs).
func BenchmarkEigen3(b *testing.B) {
	var s float64
	a := [6]float64{0.3, -0.2, 0.5, 0.11, -0.07, 0.05}
	for i := 0; b.Loop(); i++ {
		d := float64(i&1023) * 1e-4
		l1, l2, l3 := Eigen3(a[0]+d, a[1], a[2]-d, a[3], a[4]+d, a[5])
		s += l1 + l2 + l3
	}
	if s == 1 {
		b.Log(s)
	}
}

// BenchmarkEigenSymGonum times gonum's general symmetric eigensolver on the
// same matrices as BenchmarkEigen3, for a side-by-side ratio.
func BenchmarkEigenSymGonum(b *testing.B) {
	var s float64
	a := [6]float64{0.3, -0.2, 0.5, 0.11, -0.07, 0.05}
	m := mat.NewSymDense(3, nil)
	var es mat.EigenSym
	vals := make([]float64, 3)
	for i := 0; b.Loop(); i++ {
		d := float64(i&1023) * 1e-4
		m.SetSym(0, 0, a[0]+d)
		m.SetSym(1, 1, a[1])
		m.SetSym(2, 2, a[2]-d)
		m.SetSym(0, 1, a[3])
		m.SetSym(0, 2, a[4]+d)
		m.SetSym(1, 2, a[5])
		if !es.Factorize(m, false) {
			b.Fatal("EigenSym failed")
		}
		es.Values(vals)
		s += vals[0] + vals[1] + vals[2]
	}
	if s == 1 {
		b.Log(s)
	}
}
