package transport

import (
	"os"
	"testing"
)

// benchSolve times Solve on ng³ lattice points in a periodic box of side
// 100 (Mpc/h), displaced by a smooth Zel'dovich field (30 Fourier modes up
// to 4 fundamentals, Hessian bound 0.8, see newRandomModes): a clustered,
// 2LPT-like input without shell crossing, solved to DefaultTol. It reports
// the fine-level Newton iterations, Laguerre computations and CG iterations
// per solve.
func benchSolve(b *testing.B, ng int) {
	const L = 100.0
	q := lattice(ng, L)
	x := newRandomModes(30, 4, L, 0.8, 5).displace(q)
	wrapAll(x, L)
	opt := Options{Hi: [3]float64{L, L, L}, Periodic: true}
	var its, evals, cg int
	var maxErr float64
	runs := 0
	for b.Loop() {
		res, err := Solve(x, nil, opt)
		if err != nil {
			b.Fatal(err)
		}
		runs++
		lev := res.Stats.Levels[len(res.Stats.Levels)-1]
		evals++ // the start
		for _, it := range lev.Iterations {
			its++
			evals += it.Evals
			cg += it.CGIter
			maxErr = it.MaxErr
		}
	}
	b.ReportMetric(float64(its)/float64(runs), "newton/op")
	b.ReportMetric(float64(evals)/float64(runs), "laguerre/op")
	b.ReportMetric(float64(cg)/float64(runs), "cg/op")
	b.ReportMetric(maxErr, "maxerr")
}

// BenchmarkSolve1e5: 46³ = 97 336 points (about 10^5), periodic.
func BenchmarkSolve1e5(b *testing.B) { benchSolve(b, 46) }

// BenchmarkSolve1e6: 100³ = 10^6 points, periodic; run only with
// FILIGREE_BENCH_1M=1 (minutes per solve).
func BenchmarkSolve1e6(b *testing.B) {
	if os.Getenv("FILIGREE_BENCH_1M") != "1" {
		b.Skip("set FILIGREE_BENCH_1M=1 to run")
	}
	benchSolve(b, 100)
}
