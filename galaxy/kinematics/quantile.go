package kinematics

import "math"

// percentileLevels are the 16th, 50th and 84th percentiles: the median and
// the ±1 sigma points of a normal (common practice).
var percentileLevels = [3]float64{0.16, 0.50, 0.84}

// quantiler selects order statistics; it holds scratch space so that a
// worker selects without allocating. The zero value is ready to use.
//
// Percentiles follow Hyndman & Fan 1996 (Am. Stat. 50, 361) definition 7:
// position h = (n-1) p, interpolated linearly between the order statistics
// floor(h) and floor(h)+1.
//
// The values may be stored through a monotone non-decreasing map (a square,
// say, to spare a square root per draw): back is applied to the two order
// statistics before interpolating, which gives the percentiles of the
// unmapped values, because a monotone map keeps the order.
type quantiler struct {
	bucket []uint8   // bucket of each value
	picked []float64 // the values of the buckets that hold a wanted rank
}

// selectBuckets is the number of equal-width value buckets of the
// distribution selection (orderStatsIn); with n = 1000 draws about four
// values share a bucket.
const selectBuckets = 256

// smallSort: collections up to this length are insertion-sorted, longer
// ones go through Floyd-Rivest selection.
const smallSort = 48

// percentiles returns the 16th, 50th and 84th percentiles of a (a may be
// reordered). back, if not nil, maps stored values to reported ones
// (see quantiler). Any NaN gives NaN.
func (q *quantiler) percentiles(a []float64, back func(float64) float64) [3]float64 {
	out, _ := q.percentilesMid(a, back)
	return out
}

// middle holds the two order statistics around the median (ranks
// floor(h) and floor(h)+1, h = (n-1)/2, before back) and the interpolation
// weight: the median of any quantity monotone in this one follows from them
// (medianOfMonotone).
type middle struct {
	lo, hi, frac float64
	ok           bool
}

// percentilesMid is percentiles that also returns the middle order
// statistics.
func (q *quantiler) percentilesMid(a []float64, back func(float64) float64) ([3]float64, middle) {
	if len(a) == 0 {
		return [3]float64{math.NaN(), math.NaN(), math.NaN()}, middle{}
	}
	lo, hi := span(a)
	return q.percentilesMidIn(a, lo, hi, back)
}

// percentilesIn is percentiles for a whose span (lo, hi) is known: they
// must be what span(a) returns.
func (q *quantiler) percentilesIn(a []float64, lo, hi float64, back func(float64) float64) [3]float64 {
	out, _ := q.percentilesMidIn(a, lo, hi, back)
	return out
}

// percentilesMidIn is percentilesMid with the span of a known (as
// percentilesIn).
func (q *quantiler) percentilesMidIn(a []float64, lo, hi float64, back func(float64) float64) ([3]float64, middle) {
	n := len(a)
	out := [3]float64{math.NaN(), math.NaN(), math.NaN()}
	if n == 0 {
		return out, middle{}
	}
	var ranks [6]int
	var frac [3]float64
	for i, p := range percentileLevels {
		h := float64(n-1) * p
		k := int(h)
		frac[i] = h - float64(k)
		ranks[2*i], ranks[2*i+1] = k, min(k+1, n-1)
	}
	var v [6]float64
	if !q.orderStatsIn(a, lo, hi, ranks[:], v[:]) {
		return out, middle{}
	}
	for i := range 3 {
		out[i] = interpolate(v[2*i], v[2*i+1], frac[i], back)
	}
	// percentileLevels[1] is 0.5.
	return out, middle{lo: v[2], hi: v[3], frac: frac[1], ok: true}
}

// medianOfMonotone returns {NaN, median, NaN} of f(x_i) over draws x_i
// whose middle order statistics are m, for f monotone over the draws
// (non-decreasing when increasing, else non-increasing), without
// selecting: a monotone f keeps the order statistics, and a non-increasing
// one mirrors rank k to n-1-k, which at the median maps the two middle
// ranks onto each other (or the single middle rank onto itself when n is
// odd, where frac is 0).
func medianOfMonotone(f func(float64) float64, m middle, increasing bool, back func(float64) float64) [3]float64 {
	out := [3]float64{math.NaN(), math.NaN(), math.NaN()}
	if !m.ok {
		return out
	}
	lo, hi := f(m.lo), f(m.hi)
	if !increasing {
		lo, hi = hi, lo
		if m.frac == 0 {
			lo = hi // n odd: the middle rank maps onto itself
		}
	}
	out[1] = interpolate(lo, hi, m.frac, back)
	return out
}

// median returns {NaN, median, NaN} of a with the same definition as
// percentiles, for the quantities whose spread nobody reads.
func (q *quantiler) median(a []float64, back func(float64) float64) [3]float64 {
	if len(a) == 0 {
		return [3]float64{math.NaN(), math.NaN(), math.NaN()}
	}
	lo, hi := span(a)
	return q.medianIn(a, lo, hi, back)
}

// medianIn is median for a whose span (lo, hi) is known (as percentilesIn).
func (q *quantiler) medianIn(a []float64, lo, hi float64, back func(float64) float64) [3]float64 {
	n := len(a)
	out := [3]float64{math.NaN(), math.NaN(), math.NaN()}
	if n == 0 {
		return out
	}
	h := float64(n-1) * 0.5
	k := int(h)
	ranks := [2]int{k, min(k+1, n-1)}
	var v [2]float64
	if !q.orderStatsIn(a, lo, hi, ranks[:], v[:]) {
		return out
	}
	out[1] = interpolate(v[0], v[1], h-float64(k), back)
	return out
}

func interpolate(lo, hi, frac float64, back func(float64) float64) float64 {
	if back != nil {
		lo, hi = back(lo), back(hi)
	}
	if frac > 0 {
		return lo + frac*(hi-lo)
	}
	return lo
}

// percentiles and median without a reusable quantiler (tests).
func percentiles(a []float64) [3]float64 { return new(quantiler).percentiles(a, nil) }
func median(a []float64) [3]float64      { return new(quantiler).median(a, nil) }

// orderStatsIn stores in v[i] the order statistic of rank ranks[i] (0-based:
// the value at that index after sorting a; at most 8 ranks, ascending);
// (lo, hi) must be span(a), which callers often know already. It returns
// false when a holds a NaN, which has no place in the order. a may be
// reordered.
//
// Distribution selection (e.g. Knuth, TAOCP vol. 3, 2nd ed., sec. 5.2.5,
// distribution sorting, here stopped after one pass): the values are
// spread over equal-width buckets between their minimum and maximum, the
// bucket counts locate the bucket of every wanted rank, and only the
// values in those buckets are collected and ordered. Three linear passes
// over a with few unpredictable branches; partition-based selection
// spends most of its time on mispredicted comparisons. It stays whole: the
// passes share the bucket counts and offsets in arrays on the stack.
func (q *quantiler) orderStatsIn(a []float64, lo, hi float64, ranks []int, v []float64) bool {
	n := len(a)
	if lo != lo || hi != hi {
		return false
	}
	if lo == hi {
		for i := range ranks {
			v[i] = lo
		}
		return true
	}
	// Slightly under selectBuckets per range, so that hi maps below
	// selectBuckets after rounding.
	scale := selectBuckets * (1 - 0x1p-40) / (hi - lo)
	if math.IsInf(scale, 0) || math.IsInf(hi-lo, 0) {
		// A range too small or too large for the bucket arithmetic.
		q.selectEach(a, ranks, v)
		return true
	}
	q.bucket = resizeUint8(q.bucket, n)
	bucket := q.bucket[:n]
	var count [selectBuckets]int32
	for i, x := range a {
		// x - lo and the product are monotone in x, so buckets keep the
		// order: a value in a lower bucket is never larger. The mask
		// changes nothing (the product is below selectBuckets) but spares
		// the bounds check.
		b := int((x-lo)*scale) & (selectBuckets - 1)
		bucket[i] = uint8(b)
		count[b]++
	}
	// first[b]: rank of the smallest value in bucket b.
	// The running sum stays in a register: reading back first[b] just
	// stored would wait on the store at every bucket.
	var first [selectBuckets + 1]int32
	sum := int32(0)
	for b, c := range count {
		first[b] = sum
		sum += c
	}
	first[selectBuckets] = sum
	var wanted [selectBuckets]bool
	var where [8]int // bucket of each rank
	for i, k := range ranks {
		b := bucketOfRank(&first, k)
		where[i] = b
		wanted[b] = true
	}
	// The wanted buckets' values, grouped by bucket in increasing order
	// (a counting-sort placement): bucket b's values start at offset[b].
	var offset, fill [selectBuckets]int32
	total := int32(0)
	for b := where[0]; b <= where[len(ranks)-1]; b++ { // ranks ascend
		if wanted[b] {
			offset[b] = total
			total += count[b]
		}
	}
	q.picked = resize(q.picked, int(total))
	for i, x := range a {
		if b := bucket[i]; wanted[b] {
			q.picked[offset[b]+fill[b]] = x
			fill[b]++
		}
	}
	// Order within a bucket: sort it when small, else select (a narrow
	// peak with far outliers puts many values in a few buckets).
	var sorted [selectBuckets]bool
	for i, k := range ranks {
		b := where[i]
		seg := q.picked[offset[b] : offset[b]+count[b]]
		j := k - int(first[b])
		if !sorted[b] && len(seg) <= smallSort {
			insertionSort(seg)
			sorted[b] = true
		}
		if !sorted[b] {
			floydRivest(seg, 0, len(seg)-1, j)
		}
		v[i] = seg[j]
	}
	return true
}

// span returns the minimum and maximum of a, NaN if a holds a NaN (the
// built-in min and max propagate it). Four running pairs: one pair is a
// chain of dependent comparisons that runs at a quarter of the speed.
func span(a []float64) (lo, hi float64) {
	l0, l1, l2, l3 := a[0], a[0], a[0], a[0]
	h0, h1, h2, h3 := a[0], a[0], a[0], a[0]
	i := 0
	for ; i+4 <= len(a); i += 4 {
		x := a[i : i+4 : i+4]
		l0, h0 = min(l0, x[0]), max(h0, x[0])
		l1, h1 = min(l1, x[1]), max(h1, x[1])
		l2, h2 = min(l2, x[2]), max(h2, x[2])
		l3, h3 = min(l3, x[3]), max(h3, x[3])
	}
	for ; i < len(a); i++ {
		l0, h0 = min(l0, a[i]), max(h0, a[i])
	}
	return min(l0, l1, l2, l3), max(h0, h1, h2, h3)
}

// bucketOfRank returns the bucket b with first[b] <= k < first[b+1].
func bucketOfRank(first *[selectBuckets + 1]int32, k int) int {
	lo, hi := 0, selectBuckets // first[lo] <= k < first[hi]
	for hi-lo > 1 {
		mid := (lo + hi) / 2
		if int(first[mid]) <= k {
			lo = mid
		} else {
			hi = mid
		}
	}
	return lo
}

// selectEach is orderStatsIn by Floyd-Rivest selection, one rank at a time
// (each selection is correct from any arrangement of a); it reorders a.
func (q *quantiler) selectEach(a []float64, ranks []int, v []float64) {
	for i, k := range ranks {
		floydRivest(a, 0, len(a)-1, k)
		v[i] = a[k]
	}
}

func insertionSort(a []float64) {
	for i := 1; i < len(a); i++ {
		x := a[i]
		j := i
		for ; j > 0 && a[j-1] > x; j-- {
			a[j] = a[j-1]
		}
		a[j] = x
	}
}

func resizeUint8(b []uint8, n int) []uint8 {
	if cap(b) >= n {
		return b[:n]
	}
	return make([]uint8, n)
}

// floydRivest reorders a[left:right+1] so that a[k] is the element that
// would be there after sorting, smaller or equal ones before it and larger
// or equal ones after. Floyd & Rivest 1975 (CACM 18, 173, algorithm
// SELECT): a recursive call on a small sample places a pivot close to rank
// k; the constants 600, 0.5 and 2/3 are the published ones (as given, e.g.,
// by Kiwiel 2005, Comput. Optim. Appl. 32, 183; from memory).
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
