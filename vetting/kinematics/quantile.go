package kinematics

import "math"

// percentileLevels are the 16th, 50th and 84th percentiles: the median and
// the ±1 sigma points of a normal (common practice).
var percentileLevels = [3]float64{0.16, 0.50, 0.84}

// median returns {NaN, median, NaN} of a (reordered in place), with the
// same definition as percentiles: for the quantities whose spread nobody
// reads it halves the selection work.
func median(a []float64) [3]float64 {
	n := len(a)
	out := [3]float64{math.NaN(), math.NaN(), math.NaN()}
	if n == 0 {
		return out
	}
	for _, x := range a {
		if x != x {
			return out
		}
	}
	h := float64(n-1) * 0.5
	k := int(h)
	selectK(a, 0, n, k)
	out[1] = a[k]
	if frac := h - float64(k); frac > 0 && k+1 < n {
		out[1] += frac * (minOf(a[k+1:]) - a[k])
	}
	return out
}

// percentiles returns the 16th, 50th and 84th percentiles of a (reordered in
// place) by Hyndman & Fan 1996 (Am. Stat. 50, 361) definition 7: position
// h = (n-1) p, interpolated linearly between the order statistics floor(h)
// and floor(h)+1. Selection instead of sorting keeps it O(n).
func percentiles(a []float64) [3]float64 {
	n := len(a)
	if n == 0 {
		return [3]float64{math.NaN(), math.NaN(), math.NaN()}
	}
	for _, x := range a {
		if x != x { // NaN: no order; selection needs a total order
			return [3]float64{math.NaN(), math.NaN(), math.NaN()}
		}
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
// after sorting, smaller or equal ones before it and larger or equal ones
// after. Floyd & Rivest 1975 (CACM 18, 173, algorithm SELECT): a recursive
// call on a small sample places a pivot close to rank k, so one partition
// pass over the range is nearly all the work (about n + min(k, n-k)
// comparisons against some 3n for Hoare's FIND).
func selectK(a []float64, lo, hi, k int) {
	floydRivest(a, lo, hi-1, k)
}

// floydRivest works on the inclusive range [left, right]; the constants 600,
// 0.5 and 2/3 are the published ones (as given, e.g., by Kiwiel 2005, Comput.
// Optim. Appl. 32, 183; from memory).
func floydRivest(a []float64, left, right, k int) {
	for right > left {
		if right-left > 600 {
			n := float64(right - left + 1)
			i := float64(k - left + 1)
			z := math.Log(n)
			s := 0.5 * math.Exp(2*z/3)
			sd := 0.5 * math.Sqrt(z*s*(n-s)/n)
			if i < n/2 {
				sd = -sd
			}
			newLeft := max(left, int(float64(k)-i*s/n+sd))
			newRight := min(right, int(float64(k)+(n-i)*s/n+sd))
			floydRivest(a, newLeft, newRight, k)
		}
		t := a[k]
		i, j := left, right
		a[left], a[k] = a[k], a[left]
		if a[right] > t {
			a[right], a[left] = a[left], a[right]
		}
		for i < j {
			a[i], a[j] = a[j], a[i]
			i++
			j--
			for a[i] < t {
				i++
			}
			for a[j] > t {
				j--
			}
		}
		if a[left] == t {
			a[left], a[j] = a[j], a[left]
		} else {
			j++
			a[j], a[right] = a[right], a[j]
		}
		if j <= k {
			left = j + 1
		}
		if k <= j {
			right = j - 1
		}
	}
}
