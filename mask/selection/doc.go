// Package selection is the radial selection of a redshift survey: the
// redshift distribution n(z) estimated from the galaxies or read from a
// table, its conversion to a mean comoving number density n̄ in (h/Mpc)³,
// the per-galaxy mass weights w = u/(c n̄) that undo the angular
// completeness c and the radial selection, and Kolmogorov–Smirnov tests
// for comparing distributions (e.g. a random catalogue's redshifts with
// the data's).
//
// A typical use:
//
//	nz, _ := selection.EstimateNZ(z, selection.EstimateOptions{})
//	nbar, _ := selection.NewNBar(nz, model, effectiveAreaSr)
//	err := selection.Weights(w, z, completeness, nil, nbar)
//
// nz.Binning records the bin width, the rule that chose it and the
// smoothing, for provenance. n̄ is constant within each redshift bin and
// uses the exact comoving volume of the bin's shell, so Σ n̄ V = N; the
// weights then sum to the survey's comoving volume (see Weights).
package selection
