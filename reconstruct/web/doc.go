// Package web classifies the cosmic web on a periodic grid by the tidal
// tensor T_ij = ∂_i∂_j φ of the smoothed density contrast, ∇²φ = δ_R
// (Hahn, Porciani, Carollo & Dekel 2007, MNRAS 375, 489; Forero-Romero et
// al. 2009, MNRAS 396, 1815): a cell is a void, sheet, filament or knot
// when 0, 1, 2 or 3 eigenvalues of T exceed a threshold λ_th, the number of
// axes along which matter is collapsing. Tidal builds the fields, Classify
// and Sample give the codes on the grid and at galaxy positions, Fractions
// the volume and mass fractions of each code.
package web
