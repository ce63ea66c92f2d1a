// Package mask will hold the survey geometry of filigree: footprints
// (HEALPix maps, IVOA MOC files and simple sky regions), completeness, the
// radial selection n(z), per-galaxy mass weights, random catalogues, fill
// particles for holes and the buffer around the survey, and each galaxy's
// distance to the nearest edge. It builds on cosmo and on survey's readers.
package mask
