package kinematics

import "math"

// percentileLevels are the 16th, 50th and 84th percentiles: the median and
// the ±1 sigma points of a normal (common practice).
var percentileLevels = [3]float64{0.16, 0.50, 0.84}

// percentiles returns the 16th, 50th and 84th percentiles of a (reordered in
// place) by Hyndman & Fan 1996 (Am. Stat. 50, 361) definition 7: position
// h = (n-1) p, interpolated linearly between the order statistics floor(h)
// and floor(h)+1. Selection instead of sorting keeps it O(n).
func percentiles(a []float64) [3]float64 {
	n := len(a)
	if n == 0 {
		return [3]float64{math.NaN(), math.NaN(), math.NaN()}
	}
	var k [3]int
	var frac [3]float64
	for q, p := range percentileLevels {
		h := float64(n-1) * p
		k[q] = int(h)
		frac[q] = h - float64(k[q])
	}
	// The median first over everything, then the 84th in the upper part
	// and the 16th in the lower part. next[q] is order statistic k[q]+1.
	var v, next [3]float64
	selectK(a, 0, n, k[1])
	v[1] = a[k[1]]
	if k[2] > k[1] {
		selectK(a, k[1]+1, n, k[2])
		v[2] = a[k[2]]
		next[1] = minOf(a[k[1]+1 : k[2]+1])
		if k[2]+1 < n {
			next[2] = minOf(a[k[2]+1:])
		}
	} else {
		if k[1]+1 < n {
			next[1] = minOf(a[k[1]+1:])
		}
		v[2], next[2] = v[1], next[1]
	}
	if k[0] < k[1] {
		selectK(a, 0, k[1], k[0])
		v[0] = a[k[0]]
		next[0] = a[k[1]]
		if k[0]+1 < k[1] {
			next[0] = minOf(a[k[0]+1 : k[1]])
		}
	} else {
		v[0], next[0] = v[1], next[1]
	}
	var out [3]float64
	for q := range 3 {
		out[q] = v[q]
		if frac[q] > 0 && k[q]+1 < n {
			out[q] += frac[q] * (next[q] - v[q])
		}
	}
	return out
}

func minOf(a []float64) float64 {
	m := a[0]
	for _, x := range a[1:] {
		if x < m {
			m = x
		}
	}
	return m
}

// selectK reorders a[lo:hi] so that a[k] is the element that would be there
// after sorting, smaller ones before it and larger ones after (Hoare's
// FIND, Hoare 1961, CACM 4, 321, with median-of-three pivots).
func selectK(a []float64, lo, hi, k int) {
	hi-- // inclusive
	for hi > lo {
		if hi-lo < 12 {
			for i := lo + 1; i <= hi; i++ {
				for j := i; j > lo && a[j] < a[j-1]; j-- {
					a[j], a[j-1] = a[j-1], a[j]
				}
			}
			return
		}
		mid := lo + (hi-lo)/2
		if a[mid] < a[lo] {
			a[mid], a[lo] = a[lo], a[mid]
		}
		if a[hi] < a[lo] {
			a[hi], a[lo] = a[lo], a[hi]
		}
		if a[hi] < a[mid] {
			a[hi], a[mid] = a[mid], a[hi]
		}
		pivot := a[mid]
		i, j := lo, hi
		for i <= j {
			for a[i] < pivot {
				i++
			}
			for a[j] > pivot {
				j--
			}
			if i <= j {
				a[i], a[j] = a[j], a[i]
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
			return
		}
	}
}
