package pipeline

import (
	"math"
	"math/rand/v2"
	"runtime"
	"time"

	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// agreement repeats the density estimate and the reconstruction on
// opt.Recon.Resamples bootstrap resamples of the galaxies in use and sets
// res.Recon.WebAgree: per galaxy, the fraction of the resamples that drew
// it in which its Lagrangian web code equals the main one (NaN when no
// resample drew it).
//
// Resampling: each galaxy gets a Poisson(1) multiplicity m (the large-N
// limit of drawing N galaxies with replacement, Efron 1979), and enters
// the resample with mass m times its own; galaxies with m = 0 are left
// out (about e⁻¹ of them). The fill particles stay as they are. Every
// resample is tessellated, put on the grid and reconstructed exactly as
// the main run, so the cost is about K times that of those steps.
// Resample k draws from its own stream seeded by opt.Seed and k, so the
// result does not depend on the number of threads.
func agreement(st *stepper, res *Result, use []int, mass []float64, fillXYZ []float64, fillMass float64,
	g grid.Geometry, periodic bool, boxL float64, z []float64, opt Options) error {
	k := opt.Recon.Resamples
	rr := res.Recon
	if k <= 0 || rr == nil {
		return nil
	}
	st.start("resampled reconstructions")
	t0 := time.Now()
	n := len(res.Flags)
	agree := make([]int32, n)
	drawn := make([]int32, n)
	quiet := opt
	quiet.Progress = nil
	sub := &stepper{o: &quiet, secs: map[string]float64{}}
	for s := 0; s < k; s++ {
		// the previous resample's grids are garbage: collect them now, so
		// the heap does not grow to twice the main run's live grids
		runtime.GC()
		rng := rand.New(rand.NewPCG(opt.Seed^0x5eed_ba65, uint64(s)+1))
		var useK []int
		var massK []float64
		xyz := make([]float64, 0, 3*len(use)+len(fillXYZ))
		for j, i := range use {
			c := poisson1(rng)
			if c == 0 {
				continue
			}
			useK = append(useK, i)
			massK = append(massK, float64(c)*mass[j])
			xyz = append(xyz, res.Cart[3*i:3*i+3]...)
		}
		if len(useK) < 5 {
			continue
		}
		if periodic {
			// mean density 1, as in RunBox
			tot := 0.0
			for _, v := range massK {
				tot += v
			}
			for j := range massK {
				massK[j] *= boxL * boxL * boxL / tot
			}
		}
		all := append(append([]float64(nil), massK...), make([]float64, len(fillXYZ)/3)...)
		for j := len(massK); j < len(all); j++ {
			all[j] = fillMass
		}
		xyz = append(xyz, fillXYZ...)
		f, _, err := densityField(sub, xyz, all, quiet, periodic, boxL)
		if err != nil {
			return err
		}
		rho := make([]float64, g.Len())
		gridDensity(sub, f, rho, g, quiet)
		f = nil
		tmp := &Result{Flags: make([]uint32, n), Cart: res.Cart, R: res.R, MeanSeparation: res.MeanSeparation}
		if err := reconstruct(sub, tmp, useK, massK, fillXYZ, fillMass, rho, g, periodic, boxL, nil, z, quiet.Recon); err != nil {
			return err
		}
		for _, i := range useK {
			drawn[i]++
			if tmp.Recon.WebLagr[i] == rr.WebLagr[i] {
				agree[i]++
			}
		}
	}
	rr.WebAgree = nanSlice(n)
	for _, i := range use {
		if drawn[i] > 0 {
			rr.WebAgree[i] = float64(agree[i]) / float64(drawn[i])
		}
	}
	rr.Resamples = k
	rr.ResampleSeconds = time.Since(t0).Seconds()
	return nil
}

// poisson1 draws from the Poisson distribution of mean 1 (inversion).
func poisson1(rng *rand.Rand) int {
	u := rng.Float64()
	p := math.Exp(-1)
	c := p
	k := 0
	for u > c && k < 20 {
		k++
		p /= float64(k)
		c += p
	}
	return k
}
