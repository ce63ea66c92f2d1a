// Package transport solves the semi-discrete optimal transport problem at the
// heart of filigree's reconstruction (inverse least action; Frisch et al.
// 2002, Brenier et al. 2003, Lévy, Mohayaee & von Hausegger 2021): carry a
// uniform density on a Lagrangian box onto weighted points (galaxies and fill
// particles) with the quadratic cost, and give each point its Lagrangian
// position and displacement.
//
// # Problem
//
// For points y_i with masses m_i (scaled to sum to the box volume) the
// optimal map sends the Laguerre (power) cell
//
//	L_i(ψ) = {x in box : |x−y_i|² − ψ_i ≤ |x−y_j|² − ψ_j for all j}
//
// onto y_i, where the weights ψ are chosen so that vol L_i(ψ) = m_i for every
// i (Aurenhammer, Hoffmann & Aronov 1998; Mérigot 2011). The map is the
// gradient of a convex function, hence the unique optimal one (Brenier 1991),
// and the Lagrangian position of point i is the centroid of L_i. The weights
// use the convention of package laguerre (power distance |x−y_i|² − ψ_i, in
// squared coordinate units) and are defined up to an additive constant.
//
// # Method
//
// The weights maximise the concave Kantorovich dual, whose gradient is
// G_i = m_i − vol L_i(ψ) and whose Hessian is minus the weighted graph
// Laplacian of the Laguerre cells: moving ψ_j by δ moves the facet between
// cells i and j by δ/(2|y_i−y_j|) (the factor 2 comes from the cost |x−y|²
// rather than |x−y|²/2), so
//
//	∂vol_i/∂ψ_j = −A_ij / (2|y_i−y_j|) (j ≠ i),   ∂vol_i/∂ψ_i = Σ_j A_ij / (2|y_i−y_j|),
//
// with A_ij the area of the shared facet. Solve uses the damped Newton method
// of Kitagawa, Mérigot & Thibert 2019 (J. Eur. Math. Soc. 21, 2603,
// Algorithm 1): the Newton direction d solves L d = G by conjugate gradients
// with a Jacobi preconditioner (Saad 2003, §9.2) on the complement of the
// constant vector, and the step ψ + α d takes α = 1, 1/2, 1/4, … until every
// cell has volume at least ε = ½ min(min_i vol_i(ψ⁰), min_i m_i) and
// |G(ψ+αd)| ≤ (1 − α/2)|G(ψ)| (KMT's two conditions). Iteration stops when
// max_i |vol_i − m_i|/m_i ≤ Options.Tol.
//
// The default start is ψ = 0, the Voronoi diagram of the points, which has
// no empty cell when the points are distinct (KMT's method needs a start
// with non-empty cells). For the inputs of filigree (a survey's galaxies and
// fill particles, or a lattice displaced by a smooth field) the Voronoi
// volumes already follow the inverse density, and Newton converges in two to
// four steps (see the benchmarks).
//
// Options.Multilevel selects instead the multilevel start of Mérigot 2011
// (Computer Graphics Forum 30, 1583): a random eighth of the points, carrying
// the masses of the points nearest to them, is solved first (recursively,
// down to a few thousand points solved from ψ = 0, with tolerance
// max(Tol, 1e-2)), and each fine point takes the weight of its nearest
// coarse point o extended to first order,
//
//	ψ_i = ψ_o + 2 (y_o − c_o)·(y_i − y_o),
//
// because the weight, seen as a function of the Eulerian position, has
// gradient 2(y − x(y)), twice the displacement (ψ(y) = |y|² − u*(y) with u*
// the Legendre transform of the Brenier potential and ∇u*(y)/2 = x(y)); c_o
// is the centroid of the coarse cell of o. If this start leaves a cell empty
// the interpolated weights are halved (up to three times) and finally
// replaced by ψ = 0. The coarse weights carry the shot noise of the random
// subsample at the coarse spacing, which the fine problem does not have, so
// this start was measured to be worse than the Voronoi start on smooth and
// on uniform random inputs (it has not been tuned on strongly clustered
// ones).
//
// # Outputs
//
// The Lagrangian position of a point is the centroid of its cell, the
// displacement is the Eulerian minus the Lagrangian position (minimum image
// in periodic mode), and the cost Σ_i ∫_{L_i} |x − y_i|² dx is integrated
// exactly over each cell rebuilt from package laguerre's facet list.
package transport
