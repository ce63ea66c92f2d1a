// Package reconstruct will hold the cosmic-web pipeline of filigree and its
// numerical kernels in sub-packages: the Delaunay tessellation (tess), the
// DTFE density (dtfe), grids and FFTs (grid), the optimal-transport
// reconstruction (transport) and the web classification (web). It builds on
// mask, cosmo and survey and never parses flags.
package reconstruct
