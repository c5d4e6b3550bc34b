package loadkit

import (
	"math"
	"math/bits"
)

// Hist counts non-negative integer values (nanoseconds, here) in
// log-linear buckets, so that a receiver can take percentiles of millions
// of latencies in fixed memory and without allocating per datagram.
//
// Method: the layout of an HDR histogram (G. Tene, HdrHistogram, "sub-bucket"
// scheme) with 64 linear sub-buckets per power of two. Values below 128 have
// buckets of width 1 (exact); a value v ≥ 128 with e = bits.Len64(v) − 7
// falls in the bucket of width 2^e that starts at (v >> e) << e. The width is
// at most v/64, so the midpoint that Quantile returns is within v/128 of any
// value in its bucket (relative error ≤ 1/128 ≈ 0.8 %).
//
// Negative values are clamped to 0 and counted in Negative.
type Hist struct {
	counts   [histBuckets]uint64
	n        uint64
	sum      float64
	min, max int64
	Negative uint64
}

const (
	histSubBits = 7
	histHalf    = 1 << (histSubBits - 1) // 64 sub-buckets per power of two
	histBuckets = (64-histSubBits+1)*histHalf + histHalf
)

// histIndex is the bucket of v ≥ 0.
func histIndex(v int64) int {
	u := uint64(v)
	e := bits.Len64(u) - histSubBits
	if e <= 0 {
		return int(u)
	}
	return e*histHalf + int(u>>e)
}

// histBounds is the lowest value of bucket i and the bucket's width.
func histBounds(i int) (lo int64, width int64) {
	if i < 2*histHalf {
		return int64(i), 1
	}
	e := i/histHalf - 1
	m := int64(i%histHalf + histHalf)
	return m << e, 1 << e
}

// Add counts one value.
func (h *Hist) Add(v int64) {
	if v < 0 {
		h.Negative++
		v = 0
	}
	if h.n == 0 || v < h.min {
		h.min = v
	}
	if h.n == 0 || v > h.max {
		h.max = v
	}
	h.n++
	h.sum += float64(v)
	h.counts[histIndex(v)]++
}

// Count is the number of values added.
func (h *Hist) Count() uint64 { return h.n }

// Min and Max are exact; both are 0 for an empty histogram.
func (h *Hist) Min() int64 { return h.min }

// Max is the largest value added.
func (h *Hist) Max() int64 { return h.max }

// Mean is the exact mean of the (clamped) values; NaN when empty.
func (h *Hist) Mean() float64 {
	if h.n == 0 {
		return math.NaN()
	}
	return h.sum / float64(h.n)
}

// Quantile is the p-quantile (0 < p ≤ 1) by the nearest-rank rule of
// QuantileSorted, resolved to the midpoint of the bucket that holds the
// value of that rank and clamped to [Min, Max]; NaN when empty.
func (h *Hist) Quantile(p float64) float64 {
	if h.n == 0 {
		return math.NaN()
	}
	rank := nearestRank(p, int(h.n))
	var cum uint64
	for i, c := range h.counts {
		cum += c
		if cum >= uint64(rank) {
			lo, w := histBounds(i)
			mid := float64(lo) + float64(w-1)/2
			return math.Min(math.Max(mid, float64(h.min)), float64(h.max))
		}
	}
	return float64(h.max)
}
