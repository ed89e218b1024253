package metrics

import (
	"math"
	"math/bits"
	"slices"
)

// percentile returns the q-th percentile (0 <= q <= 100) of v with linear
// interpolation between the closest ranks: rank q/100 * (n - 1), numpy's
// default method ("linear", Hyndman and Fan's definition 7). It reorders v.
func percentile(v []float32, q float64) float64 {
	n := len(v)
	if n == 0 {
		return math.NaN()
	}
	pos := q / 100 * float64(n-1)
	k := int(math.Floor(pos))
	if k >= n-1 {
		k = n - 1
	}
	frac := pos - float64(k)
	lo := float64(selectK(v, k))
	if frac == 0 || k == n-1 {
		return lo
	}
	// After selection everything right of k is >= v[k]: the next order
	// statistic is their minimum.
	hi := slices.Min(v[k+1:])
	return lo + frac*(float64(hi)-lo)
}

// medianAndP95 returns the 50th and 95th percentiles of v as percentile
// does, selecting the 95th first so that the median is selected among the
// values below it only. It reorders v.
func medianAndP95(v []float32) (median, p95 float64) {
	n := len(v)
	if n == 0 {
		return math.NaN(), math.NaN()
	}
	p95 = percentile(v, 95)
	k95 := min(int(math.Floor(0.95*float64(n-1))), n-1)
	pos := 0.5 * float64(n-1)
	k := int(math.Floor(pos))
	frac := pos - float64(k)
	if k >= k95 { // tiny sets: no room below the 95th
		return percentile(v, 50), p95
	}
	// v[:k95] holds the k95 smallest values, v[k95] the next.
	lo := float64(selectK(v[:k95], k))
	if frac == 0 {
		return lo, p95
	}
	hi := float64(v[k95])
	if k+1 < k95 {
		hi = math.Min(hi, float64(slices.Min(v[k+1:k95])))
	}
	return lo + frac*(hi-lo), p95
}

// selectK reorders v so that v[k] is the k-th smallest value (0-based), all
// before it no larger and all after it no smaller, and returns it. It is
// Hoare's quickselect with a median-of-three pivot; after too many rounds
// for the size (an adversarial order) it sorts the rest, so the worst case
// is n log n.
func selectK(v []float32, k int) float32 {
	lo, hi := 0, len(v)-1
	budget := 2 * bits.Len(uint(len(v)))
	for hi-lo > 16 {
		if budget--; budget < 0 {
			slices.Sort(v[lo : hi+1])
			return v[k]
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
			return v[k] // j < k < i: v[k] == p
		}
	}
	slices.Sort(v[lo : hi+1])
	return v[k]
}
