package healpix

// Offsets in face coordinates (x towards the north-east edge of a face, y
// towards the north-west) of the eight neighbours in the order SW, W, NW, N,
// NE, E, SE, S.
var (
	nbX = [8]int64{-1, -1, 0, 1, 1, 1, 0, -1}
	nbY = [8]int64{0, 1, 1, 1, 0, -1, -1, -1}
)

// nbFace[k][f] is the base face reached from face f when stepping off it in
// direction k = 4 + dx + 3·dy (dx, dy in {-1, 0, 1}), or -1 where the step
// leads to a corner shared by only three faces (Górski et al. 2005, Fig. 4).
var nbFace = [9][12]int64{
	{8, 9, 10, 11, -1, -1, -1, -1, 10, 11, 8, 9}, // dx=-1, dy=-1
	{5, 6, 7, 4, 8, 9, 10, 11, 9, 10, 11, 8},     // dx= 0, dy=-1
	{-1, -1, -1, -1, 5, 6, 7, 4, -1, -1, -1, -1}, // dx=+1, dy=-1
	{4, 5, 6, 7, 11, 8, 9, 10, 11, 8, 9, 10},     // dx=-1, dy= 0
	{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11},       // same face
	{1, 2, 3, 0, 0, 1, 2, 3, 5, 6, 7, 4},         // dx=+1, dy= 0
	{-1, -1, -1, -1, 7, 4, 5, 6, -1, -1, -1, -1}, // dx=-1, dy=+1
	{3, 0, 1, 2, 3, 0, 1, 2, 4, 5, 6, 7},         // dx= 0, dy=+1
	{2, 3, 0, 1, -1, -1, -1, -1, 0, 1, 2, 3},     // dx=+1, dy=+1
}

// nbSwap[k][r] says how the coordinates transform when stepping off a face
// of row r (0 north, 1 equatorial, 2 south) in direction k: bit 1 mirrors x,
// bit 2 mirrors y, bit 4 swaps x and y. Faces around a pole meet rotated by
// multiples of 90°.
var nbSwap = [9][3]int{
	{0, 0, 3},
	{0, 0, 6},
	{0, 0, 0},
	{0, 0, 5},
	{0, 0, 0},
	{5, 0, 0},
	{0, 0, 0},
	{6, 0, 0},
	{3, 0, 0},
}

// Neighbours returns the eight pixels adjacent to pix at nside, in the order
// south-west, west, north-west, north, north-east, east, south-east, south
// (the order of healpy's get_all_neighbours). Where a pixel has only seven
// neighbours (the pixels at the corners where three base faces meet: the
// poles' neighbourhoods and the eight corners on the z = ±2/3 circles) the
// missing one is -1. Pixel numbers are in the NESTED ordering if nest is
// true and in the RING ordering otherwise. All eight are -1 if pix is
// outside [0, NPix(nside)). It panics if nside is not a valid Nside.
func Neighbours(nside int, pix int64, nest bool) [8]int64 {
	o := Order(nside)
	var res [8]int64
	n := int64(nside)
	if pix < 0 || pix >= 12*n*n {
		for i := range res {
			res[i] = -1
		}
		return res
	}
	var ix, iy, face int64
	if nest {
		ix, iy, face = nest2xyf(o, pix)
	} else {
		ix, iy, face = ring2xyf(o, pix)
	}
	for i := 0; i < 8; i++ {
		x, y := ix+nbX[i], iy+nbY[i]
		k := 4
		switch {
		case x < 0:
			x += n
			k--
		case x >= n:
			x -= n
			k++
		}
		switch {
		case y < 0:
			y += n
			k -= 3
		case y >= n:
			y -= n
			k += 3
		}
		f := nbFace[k][face]
		if f < 0 {
			res[i] = -1
			continue
		}
		b := nbSwap[k][face>>2]
		if b&1 != 0 {
			x = n - x - 1
		}
		if b&2 != 0 {
			y = n - y - 1
		}
		if b&4 != 0 {
			x, y = y, x
		}
		if nest {
			res[i] = xyf2nest(o, x, y, f)
		} else {
			res[i] = xyf2ring(o, x, y, f)
		}
	}
	return res
}
