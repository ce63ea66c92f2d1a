package mock

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// BiasMeasurement is the large-scale bias of a galaxy selection measured
// in the box.
type BiasMeasurement struct {
	// Bias is P_gm/P_mm over the modes with KMin ≤ k < KMax (h/Mpc): the
	// cross power of galaxies and matter over the matter power, which shot
	// noise does not bias.
	Bias, KMin, KMax float64
	// Modes is the number of Fourier modes used; Galaxies the number of
	// galaxies in the box.
	Modes, Galaxies int
}

// MeasureBias measures the linear bias at redshift z of the galaxies that
// the selection for bias b and parent density density (h/Mpc)³ picks,
// from the real-space positions of all particles and of those galaxies
// assigned to a grid of N/2 cells per side by cloud-in-cell, over the
// modes 2k_f ≤ k < kMax (k_f = 2π/L).
func (r *Realisation) MeasureBias(z, b, density, kMax float64) (BiasMeasurement, error) {
	g := r.Geometry
	frac := density * g.Volume() / float64(g.Len())
	sel, err := r.newSelection(b, z, frac)
	if err != nil {
		return BiasMeasurement{}, err
	}
	ga := r.growthAt(z)
	cg := grid.Geometry{N: max(4, g.N/2), L: g.L}
	fft, err := grid.NewFFT(cg.N)
	if err != nil {
		return BiasMeasurement{}, err
	}
	// Matter and galaxies are assigned in chunks of particles, so that at
	// most one chunk's positions are held at a time (the whole set is
	// 24 bytes per particle: 3 GB at N = 512).
	const chunk = 1 << 22
	rhoM := make([]float64, cg.Len())
	rhoG := make([]float64, cg.Len())
	part := make([]float64, cg.Len())
	var pos, gpos []float64
	ng := 0
	for lo := 0; lo < g.Len(); lo += chunk {
		hi := min(lo+chunk, g.Len())
		pos = pos[:0]
		gpos = gpos[:0]
		for p := lo; p < hi; p++ {
			q := r.lagrangian(p)
			dx, _ := r.displace(p, ga)
			x := [3]float64{q[0] + dx[0], q[1] + dx[1], q[2] + dx[2]}
			pos = append(pos, x[:]...)
			if uniform(r.Seed, streamParent, uint64(p)) < sel.prob(r.Nu[p]) {
				gpos = append(gpos, x[:]...)
			}
		}
		ng += len(gpos) / 3
		grid.AssignCIC(part, cg, pos, nil)
		parallel.For(len(part), 1<<16, func(a, b int) {
			for i := a; i < b; i++ {
				rhoM[i] += part[i]
			}
		})
		grid.AssignCIC(part, cg, gpos, nil)
		parallel.For(len(part), 1<<16, func(a, b int) {
			for i := a; i < b; i++ {
				rhoG[i] += part[i]
			}
		})
	}
	if ng == 0 {
		return BiasMeasurement{}, fmt.Errorf("mock: no galaxies selected for the bias measurement")
	}
	spec := func(rho []float64, count int) []complex128 {
		mean := float64(count) / float64(cg.Len())
		for i := range rho {
			rho[i] = rho[i]/mean - 1
		}
		dk := make([]complex128, cg.HalfLen())
		fft.Forward(dk, rho)
		return dk
	}
	dm := spec(rhoM, g.Len())
	dg := spec(rhoG, ng)
	kMin := 2 * 2 * math.Pi / g.L
	if kMax <= kMin {
		return BiasMeasurement{}, fmt.Errorf("mock: the box of %g Mpc/h has no modes between %.4g and %.4g h/Mpc for the bias", g.L, kMin, kMax)
	}
	edges := []float64{kMin, kMax}
	cross := grid.CrossSpectrum(dg, dm, cg, edges)
	auto := grid.PowerSpectrum(dm, cg, edges)
	return BiasMeasurement{Bias: cross[0].P / auto[0].P, KMin: kMin, KMax: kMax, Modes: auto[0].Modes, Galaxies: ng}, nil
}
