// Package mock makes synthetic galaxy surveys with known truth, for testing
// and calibrating every other step of filigree.
//
// A Gaussian random field with the Eisenstein & Hu (1998) linear power
// spectrum is drawn on an N³ grid in a periodic box; particles start on the
// grid's cell centres and are displaced by first-order (Zel'dovich 1970) or
// second-order Lagrangian perturbation theory (Bouchet et al. 1995;
// Scoccimarro 1998), with velocities from the growth rates. Galaxies are
// particles chosen with a local Lagrangian bias, then either kept in the
// box (simulation-style tests) or seen by an observer on a light cone:
// right ascension, declination and observed redshift including the
// line-of-sight peculiar velocity, thinned by a footprint's completeness
// and a radial selection n̄(z).
//
// Every random number is a counter-based hash of the seed, a stream number
// and the cell or particle index, so a realisation depends on the seed only,
// never on the number of threads or the order of work.
package mock
