package main

import (
	"errors"
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/healpix"
	"github.com/filigree-survey/filigree/mask/selection"
	"github.com/filigree-survey/filigree/survey"
)

type nbarT = selection.NBar

// footprintFromData returns a footprint of the HEALPix pixels that hold
// galaxies, at the finest Nside (from 512 down to 16) at which the
// occupied pixels hold at least 10 galaxies on average, so that few pixels
// inside the survey are empty by chance (a Poisson pixel with mean 10 is
// empty with probability e^-10).
func footprintFromData(ra, dec []float64) (footprint.Footprint, int, error) {
	if len(ra) == 0 {
		return nil, 0, errors.New("no galaxies to make a footprint from")
	}
	theta := make([]float64, len(ra))
	phi := make([]float64, len(ra))
	for i := range ra {
		theta[i] = (90 - dec[i]) * math.Pi / 180
		phi[i] = ra[i] * math.Pi / 180
	}
	pix := make([]int64, len(ra))
	for nside := 512; nside >= 16; nside /= 2 {
		healpix.Ang2PixNestMany(pix, nside, theta, phi)
		occ := map[int64]bool{}
		for _, p := range pix {
			occ[p] = true
		}
		if float64(len(ra))/float64(len(occ)) >= 10 || nside == 16 {
			vals := make([]float32, healpix.NPix(nside))
			for p := range occ {
				vals[p] = 1
			}
			m, err := footprint.NewMap(fmt.Sprintf("occupied pixels at Nside %d", nside), nside, vals)
			return m, nside, err
		}
	}
	panic("unreachable")
}

// estimateNBar estimates n(z) from the galaxies inside the footprint and
// says so.
func estimateNBar(a *app, pos *survey.Positions, fp footprint.Footprint, m *cosmo.Model, sr float64, nzf *nzFlags, prov *survey.Provenance) (*selection.NBar, error) {
	comp := make([]float64, pos.Len())
	footprint.CompletenessMany(fp, comp, pos.RA, pos.Dec)
	var zin []float64
	for i, c := range comp {
		if c > 0 {
			zin = append(zin, pos.Z[i])
		}
	}
	nz, err := selection.EstimateNZ(zin, selection.EstimateOptions{Width: nzf.width, Smooth: nzf.smooth})
	if err != nil {
		return nil, fmt.Errorf("n(z) of the galaxies inside the footprint: %w", err)
	}
	for _, kv := range nz.Binning.KeyValues() {
		prov.Params = append(prov.Params, survey.KeyValue{Key: kv[0], Value: kv[1]})
	}
	a.note("no --nz: n(z) estimated from the %d galaxies inside the footprint: %d bins of width %.4g, smoothing σ = %.4g (%s)", len(zin), len(nz.Counts), nz.Binning.Width, nz.Binning.Smooth, nz.Binning.WidthRule)
	return selection.NewNBar(nz, m, sr)
}
