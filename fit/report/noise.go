package report

import (
	"math"
	"math/bits"
	"slices"
)

// madToSigma is 1 / Phi^-1(3/4): the median absolute value of a zero-mean
// Gaussian is 0.6745 sigma (standard statistics).
const madToSigma = 1 / 0.6744897501960817

// PhotoNoise estimates the standard deviation of the noise of a linear RGB
// image (3*w*h values, row-major) over the pixels marked valid (nil: all)
// with the operator of J. Immerkaer, "Fast noise variance estimation",
// Computer Vision and Image Understanding 64(2), 1996 (from memory):
// the 3x3 kernel
//
//	 1 -2  1
//	-2  4 -2
//	 1 -2  1
//
// is the difference of two Laplacians, so it is blind to locally constant
// and linear shading, and on white noise of deviation sigma its response has
// deviation sigma sqrt(1+4+1+4+16+4+1+4+1) = 6 sigma. Immerkaer averages the
// absolute response; this takes the median instead (divided by 0.6745, the
// median absolute value of a unit Gaussian), which ignores the minority of
// pixels on edges and texture. Only pixels whose whole 3x3 neighbourhood is
// valid take part, and all three channels are pooled. It returns 0 when no
// pixel qualifies.
func PhotoNoise(pix []float32, w, h int, valid []bool) float64 {
	if w < 3 || h < 3 || len(pix) < 3*w*h {
		return 0
	}
	ok := func(x, y int) bool { return valid == nil || valid[y*w+x] }
	var r []float64
	for y := 1; y < h-1; y++ {
		for x := 1; x < w-1; x++ {
			all := true
			for dy := -1; dy <= 1 && all; dy++ {
				for dx := -1; dx <= 1; dx++ {
					if !ok(x+dx, y+dy) {
						all = false
						break
					}
				}
			}
			if !all {
				continue
			}
			for ch := 0; ch < 3; ch++ {
				at := func(dx, dy int) float64 { return float64(pix[3*((y+dy)*w+x+dx)+ch]) }
				v := at(-1, -1) + at(1, -1) + at(-1, 1) + at(1, 1) -
					2*(at(0, -1)+at(-1, 0)+at(1, 0)+at(0, 1)) + 4*at(0, 0)
				if !math.IsNaN(v) && !math.IsInf(v, 0) {
					r = append(r, math.Abs(v))
				}
			}
		}
	}
	if len(r) == 0 {
		return 0
	}
	return median(r) * madToSigma / 6
}

// median returns the median of v (the mean of the two middle values when
// their number is even), reordering v: quickselect (Hoare's, median-of-three
// pivot) in linear expected time, falling back to a sort after too many
// rounds for the size, so the worst case is n log n.
func median(v []float64) float64 {
	n := len(v)
	m := selectK(v, n/2)
	if n%2 == 1 {
		return m
	}
	// v[:n/2] holds the n/2 smallest: the other middle value is their
	// largest.
	return (slices.Max(v[:n/2]) + m) / 2
}

// selectK reorders v so that v[k] is its k-th smallest value (0-based),
// none before it larger and none after it smaller, and returns it.
func selectK(v []float64, k int) float64 {
	lo, hi := 0, len(v)-1
	budget := 2 * bits.Len(uint(len(v)))
	for hi-lo > 16 {
		if budget--; budget < 0 {
			break
		}
		mid := lo + (hi-lo)/2
		if v[mid] < v[lo] {
			v[mid], v[lo] = v[lo], v[mid]
		}
		if v[hi] < v[lo] {
			v[hi], v[lo] = v[lo], v[hi]
		}
		if v[hi] < v[mid] {
			v[hi], v[mid] = v[mid], v[hi]
		}
		p := v[mid]
		i, j := lo, hi
		for i <= j {
			for v[i] < p {
				i++
			}
			for v[j] > p {
				j--
			}
			if i <= j {
				v[i], v[j] = v[j], v[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return v[k] // j < k < i: v[k] equals the pivot
		}
	}
	slices.Sort(v[lo : hi+1])
	return v[k]
}
