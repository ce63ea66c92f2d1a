// Package laguerre computes the Laguerre (power) cells of weighted points in
// a 3D box, clipped to the box or on a 3-torus, as needed by semi-discrete
// optimal transport (Lévy 2015; Kitagawa, Mérigot & Thibert 2019): for every
// point the cell volume and centroid, and every neighbour with the area of
// the shared facet.
//
// The cell of point i with weight ψ_i is
//
//	{x in box : |x−p_i|² − ψ_i ≤ |x−p_j|² − ψ_j for all j},
//
// bounded by the power bisectors 2(p_j−p_i)·x ≤ |p_j|²−|p_i|² − ψ_j + ψ_i
// (Aurenhammer 1987). With equal weights the cells are the Voronoi cells.
//
// # Method
//
// Cells are built one at a time by clipping (the approach of Voro++,
// Rycroft 2009): start from the box (in periodic mode from the cube of side
// Hi−Lo centred on the point, whose walls are the bisectors with the
// point's own images), and cut it by the bisectors of the other points,
// visiting grid cells in order of a lower bound on their distance and, within
// a ring of equal bound, cutting by planes in order of increasing distance.
// A point at distance d lies on a bisector at distance (d² + ψ_i − ψ_j)/(2d)
// from p_i; with ψ_j bounded above this is at least lowerPlane(d), so the
// search stops once that bound reaches the largest vertex distance of the
// current cell. Cells are independent, so they are computed in parallel and
// the result does not depend on the number of threads.
//
// Transport weights are far from equal: they grow like 2Ψ·p across the
// box (Ψ the displacement), and a cell lies about |Ψ| from its point. The
// grid is therefore cut into blocks of at least blockCells grid cells per
// axis, each with a frame a fitted to its weights (ψ ≈ c + 2a·p); a cell is
// computed in the frame of its point (the block's, or with a previous
// result the point's previous displacement), where it lies near its point,
// since the cells of ψ − 2a·p are those of ψ translated by −a. Weight
// bounds are kept per grid cell and per block in their own frames. A cell
// is cut first by the points of the 3×3×3 blocks around its block; then,
// per octant of a block, a test on the bounding balls of the cells rules
// out the farther blocks, and a cell that a farther grid cell may still
// reach is computed again with it (blocks.go has the bounds).
//
// The first attempt at a cell starts from the smaller cube of half-side
// 2.5 s about the point (clipped to the box); if a face of that cube
// survives, or the cell comes out empty, the cell is computed again from
// the whole box. While every cut is generic the cell is a vertex-edge graph
// with three edges per vertex (gcell), and a cut touches only the removed
// vertices; from the first plane passing within the tolerance of a vertex
// next to the removed part, the cell is carried on as face lists (poly),
// which handle vertices shared by more than three faces.
//
// # Repeated calls
//
// A transport solver computes the cells of the same points many times with
// new weights. The grid (Index) is built once, and a Cells passed again to
// Index.Compute keeps its arrays and per-thread buffers, so a repeated call
// allocates nothing of size n. With Options.WarmStart a cell is first cut
// by the bisectors of its neighbours in the previous result (nearest plane
// first); the search then goes on exactly as in a cold call, skipping those
// planes, so the cells stay exact: a cell is complete only when the
// security test above shows that no further point can cut it. The warm
// start saves the cuts that a cold search makes and later undoes and most
// of the ordering of candidates, but changes the order of the cuts and
// hence the rounding, which is why it is optional.
//
// # Tolerance
//
// A vertex within epsRel·s = 1e-11·s of a cutting plane, s = (box volume /
// n)^(1/3) the mean spacing, counts as lying on the plane: it is kept and
// not moved, and a plane that only touches the cell creates no facet. This
// makes exactly degenerate inputs (a cubic lattice, where eight cells meet at
// every vertex) give clean cells. Facets with area below 1e-9·s² are not
// reported. Volume and centroid come from tetrahedra between the vertex
// mean and a fan of each face, so they do not depend on face orientation.
//
// # Empty cells
//
// A point can have an empty cell (its weight is too small compared with its
// neighbours'); it gets volume 0, no neighbours, and is counted in
// Cells.Empty. Such a point need not lie in its cell even when the cell is
// not empty.
package laguerre
