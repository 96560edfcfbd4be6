package healpix

// NeighboursNest are the nested pixels around pix at order, in the order
// SW, W, NW, N, NE, E, SE, S; -1 in the one direction where a pixel at a
// corner where only three base faces meet has no neighbour.
func NeighboursNest(order int, pix uint64) [8]int64 {
	nside := int64(1) << uint(order)
	face := int64(pix >> (2 * uint(order)))
	x, y := deinterleave(pix & (uint64(1)<<(2*uint(order)) - 1))
	ix, iy := int64(x), int64(y)
	// Steps in (x, y) face coordinates, SW, W, NW, N, NE, E, SE, S: within a
	// face x grows to the north-east and y to the north-west (Gorski et al.
	// 2005, fig. 3 and sect. 4).
	dx := [8]int64{-1, -1, 0, 1, 1, 1, 0, -1}
	dy := [8]int64{0, 1, 1, 1, 0, -1, -1, -1}
	var out [8]int64
	for d := range out {
		out[d] = neighbour(order, nside, face, ix+dx[d], iy+dy[d])
	}
	return out
}

// neighbour is the pixel at (x, y) of face, where x and y may be one step
// outside 0..nside-1. The crossings follow from the layout of the 12 base
// faces (derived from Gorski et al. 2005, fig. 3): equatorial faces border
// their neighbours edge to edge with the same orientation; across the edges
// between two faces of the same cap the frame turns by 90 degrees around the
// pole.
func neighbour(order int, nside, face, x, y int64) int64 {
	xo, yo := 0, 0
	if x < 0 {
		xo = -1
	} else if x >= nside {
		xo = 1
	}
	if y < 0 {
		yo = -1
	} else if y >= nside {
		yo = 1
	}
	if xo == 0 && yo == 0 {
		return xyf(order, x, y, face)
	}
	k := face % 4
	next, prev, opp := (k+1)%4, (k+3)%4, (k+2)%4
	n := nside
	switch face / 4 {
	case 0: // north cap: pole at (n-1, n-1)
		switch {
		case xo == 1 && yo == 0:
			return xyf(order, y, 2*n-1-x, next)
		case xo == 0 && yo == 1:
			return xyf(order, 2*n-1-y, x, prev)
		case xo == 0 && yo == -1:
			return xyf(order, x, y+n, 4+next)
		case xo == -1 && yo == 0:
			return xyf(order, x+n, y, 4+k)
		case xo == 1 && yo == 1: // across the pole
			return xyf(order, n-1, n-1, opp)
		case xo == -1 && yo == -1:
			return xyf(order, n-1, n-1, 8+k)
		}
	case 1: // equatorial zone
		switch {
		case xo == 1 && yo == 0:
			return xyf(order, x-n, y, k)
		case xo == 0 && yo == 1:
			return xyf(order, x, y-n, prev)
		case xo == 0 && yo == -1:
			return xyf(order, x, y+n, 8+k)
		case xo == -1 && yo == 0:
			return xyf(order, x+n, y, 8+prev)
		case xo == 1 && yo == -1:
			return xyf(order, x-n, y+n, 4+next)
		case xo == -1 && yo == 1:
			return xyf(order, x+n, y-n, 4+prev)
		}
	case 2: // south cap: pole at (0, 0)
		switch {
		case xo == 1 && yo == 0:
			return xyf(order, x-n, y, 4+next)
		case xo == 0 && yo == 1:
			return xyf(order, x, y-n, 4+k)
		case xo == -1 && yo == 0:
			return xyf(order, y, -1-x, 8+prev)
		case xo == 0 && yo == -1:
			return xyf(order, -1-y, x, 8+next)
		case xo == -1 && yo == -1: // across the pole
			return xyf(order, 0, 0, 8+opp)
		case xo == 1 && yo == 1:
			return xyf(order, 0, 0, k)
		}
	}
	return -1 // a corner where only three faces meet
}

func xyf(order int, x, y, face int64) int64 {
	return int64(uint64(face)<<(2*uint(order)) | interleave(uint64(x), uint64(y)))
}
