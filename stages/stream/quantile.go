package stream

import (
	"cmp"
	"math"
	"slices"
)

// Digest is a fixed-memory, mergeable sketch of a weighted distribution
// from which quantiles are read: the merging t-digest of Dunning & Ertl
// (2019), "Computing extremely accurate quantiles using t-digests",
// arXiv:1902.04023, with their scale function k1
//
//	k(q) = delta / (2 pi) * asin(2q - 1)
//
// which keeps centroids small near q = 0 and q = 1, so tail quantiles (the
// 0.1% and 99.9% that robust scaling uses) are the most accurate. A centroid
// may grow only while k(right edge) - k(left edge) <= 1, which bounds the
// number of centroids by about delta whatever the stream length.
//
// Memory: at most ceil(delta)+1 centroids plus a buffer of bufferFactor*delta
// pending values, and for AddFloat32s scratch space of 40 bytes per value of
// the largest batch. Cost: values are buffered and the buffer is sorted before
// each merge pass, O(n log(buffer)) overall. A Digest is deterministic: the
// same values added in the same order give the same quantiles.
type Digest struct {
	delta   float64
	cents   []centroid // merged, sorted by mean
	buf     []centroid // pending, unsorted
	scratch []centroid
	batch   []centroid
	keys    []uint64 // radix-sort buffers for AddFloat32s
	keys2   []uint64
	total   float64 // weight in cents
	min     float64
	max     float64
	n       int64
}

type centroid struct {
	mean, w float64
}

const bufferFactor = 8

// NewDigest returns an empty digest with compression delta (>= 10; 200
// gives rank errors of about 1e-3 at the median and far less in the tails).
func NewDigest(delta float64) *Digest {
	if !(delta >= 10) {
		panic("stream: digest compression below 10")
	}
	return &Digest{delta: delta, min: math.Inf(1), max: math.Inf(-1)}
}

// Count is the number of values added.
func (d *Digest) Count() int64 { return d.n }

// Add includes x with weight w; NaN values and weights <= 0 are skipped.
func (d *Digest) Add(x, w float64) {
	if math.IsNaN(x) || !(w > 0) {
		return
	}
	d.buf = append(d.buf, centroid{x, w})
	d.n++
	if x < d.min {
		d.min = x
	}
	if x > d.max {
		d.max = x
	}
	if len(d.buf) >= int(bufferFactor*d.delta) {
		d.compress()
	}
}

// AddFloat32s adds a batch (ws nil means unit weights). The batch is
// radix-sorted on the float32 bit patterns and merged with the centroids in
// one linear pass, about 20 times faster than adding values one by one.
func (d *Digest) AddFloat32s(xs []float32, ws []float64) {
	if ws != nil && len(ws) != len(xs) {
		panic("stream: weights and values differ in length")
	}
	keys := d.keys[:0]
	for i, v := range xs {
		if v != v || (ws != nil && !(ws[i] > 0)) {
			continue
		}
		keys = append(keys, uint64(sortable32(math.Float32bits(v)))<<32|uint64(i))
	}
	if len(keys) == 0 {
		d.keys = keys
		return
	}
	keys, d.keys2 = radixSortHigh32(keys, d.keys2)
	d.compress()
	batch := d.batch[:0]
	for _, k := range keys {
		i := uint32(k)
		w := 1.0
		if ws != nil {
			w = ws[i]
		}
		batch = append(batch, centroid{float64(xs[i]), w})
	}
	d.n += int64(len(batch))
	d.min = math.Min(d.min, batch[0].mean)
	d.max = math.Max(d.max, batch[len(batch)-1].mean)
	// Merge two sorted runs, then one compression pass.
	all := d.scratch[:0]
	a, b := d.cents, batch
	for len(a) > 0 && len(b) > 0 {
		if b[0].mean < a[0].mean {
			all = append(all, b[0])
			b = b[1:]
		} else {
			all = append(all, a[0])
			a = a[1:]
		}
	}
	all = append(all, a...)
	all = append(all, b...)
	d.keys, d.batch = keys, batch
	d.mergeSorted(all)
}

// sortable32 maps float32 bits to unsigned integers in the same order.
func sortable32(u uint32) uint32 {
	if u&0x80000000 != 0 {
		return ^u
	}
	return u | 0x80000000
}

// radixSortHigh32 sorts keys by their upper 32 bits (LSD radix in three
// passes of 11, 11 and 10 bits, stable, so equal values stay in index
// order). The counts live on the stack (16 kB), not in a 512 kB table that
// would grow every worker goroutine's stack. It returns the sorted slice
// and the spare buffer.
func radixSortHigh32(keys, tmp []uint64) ([]uint64, []uint64) {
	if cap(tmp) < len(keys) {
		tmp = make([]uint64, len(keys))
	}
	tmp = tmp[:len(keys)]
	var count [1 << 11]int
	for _, shift := range []uint{32, 43, 54} {
		clear(count[:])
		for _, k := range keys {
			count[(k>>shift)&0x7ff]++
		}
		sum := 0
		for i, c := range count {
			count[i] = sum
			sum += c
		}
		for _, k := range keys {
			j := (k >> shift) & 0x7ff
			tmp[count[j]] = k
			count[j]++
		}
		keys, tmp = tmp, keys
	}
	return keys, tmp
}

// AddFloat64s adds a batch (ws nil means unit weights).
func (d *Digest) AddFloat64s(xs, ws []float64) {
	for i, x := range xs {
		w := 1.0
		if ws != nil {
			w = ws[i]
		}
		d.Add(x, w)
	}
}

// Merge folds the centroids of o into d. The result depends on the order
// of merges only within the digest's error bound; merge in a fixed order
// for byte-identical output.
func (d *Digest) Merge(o *Digest) {
	o.compress()
	if o.n == 0 {
		return
	}
	d.buf = append(d.buf, o.cents...)
	d.n += o.n
	d.min = math.Min(d.min, o.min)
	d.max = math.Max(d.max, o.max)
	d.compress()
}

func (d *Digest) k(q float64) float64 { return d.delta / (2 * math.Pi) * math.Asin(2*q-1) }

func (d *Digest) kInv(k float64) float64 {
	if k >= d.delta/4 {
		return 1
	}
	return (math.Sin(k*2*math.Pi/d.delta) + 1) / 2
}

// compress merges the buffer into the centroids in one sorted pass.
func (d *Digest) compress() {
	if len(d.buf) == 0 {
		return
	}
	all := append(d.scratch[:0], d.cents...)
	all = append(all, d.buf...)
	// Stable sort on the mean alone keeps equal values in insertion order,
	// so the pass is deterministic.
	slices.SortStableFunc(all, func(a, b centroid) int { return cmp.Compare(a.mean, b.mean) })
	d.buf = d.buf[:0]
	d.mergeSorted(all)
}

// mergeSorted replaces the centroids by the compression of all, which is
// sorted by mean and must not share memory with d.cents.
func (d *Digest) mergeSorted(all []centroid) {
	total := 0.0
	for _, c := range all {
		total += c.w
	}
	out := d.cents[:0]
	cur := all[0]
	q0 := 0.0
	limit := d.kInv(d.k(q0) + 1)
	for _, c := range all[1:] {
		if q0+(cur.w+c.w)/total <= limit {
			// Weighted mean update of the current centroid.
			cur.w += c.w
			cur.mean += (c.mean - cur.mean) * c.w / cur.w
			continue
		}
		out = append(out, cur)
		q0 += cur.w / total
		limit = d.kInv(d.k(q0) + 1)
		cur = c
	}
	out = append(out, cur)
	d.scratch = all[:0]
	d.cents = out
	d.total = total
}

// Centroids is the number of centroids after compression (for tests and
// memory reports).
func (d *Digest) Centroids() int {
	d.compress()
	return len(d.cents)
}

// Quantile returns the value below which a fraction q of the weight lies,
// interpolating linearly between centroid centres (each centroid's weight
// is taken to sit half left and half right of its mean) and towards the
// exact minimum and maximum at the ends. It returns NaN when empty.
func (d *Digest) Quantile(q float64) float64 {
	d.compress()
	if d.n == 0 || math.IsNaN(q) {
		return math.NaN()
	}
	if q <= 0 {
		return d.min
	}
	if q >= 1 {
		return d.max
	}
	cs := d.cents
	t := q * d.total
	if len(cs) == 1 {
		// Interpolate across [min, max] by rank.
		return d.min + (d.max-d.min)*q
	}
	first, last := cs[0], cs[len(cs)-1]
	if t < first.w/2 {
		return d.min + (first.mean-d.min)*t/(first.w/2)
	}
	if t > d.total-last.w/2 {
		r := (t - (d.total - last.w/2)) / (last.w / 2)
		return last.mean + (d.max-last.mean)*r
	}
	cum := first.w / 2 // centre of centroid 0
	for i := 0; i < len(cs)-1; i++ {
		step := (cs[i].w + cs[i+1].w) / 2
		if t <= cum+step {
			f := (t - cum) / step
			return cs[i].mean + (cs[i+1].mean-cs[i].mean)*f
		}
		cum += step
	}
	return last.mean
}

// Min and Max are the exact extremes seen.
func (d *Digest) Min() float64 { return d.min }

// Max is the exact maximum seen.
func (d *Digest) Max() float64 { return d.max }
