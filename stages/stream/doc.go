// Package stream holds what the data stages need to work through a block
// one time step at a time: one-pass, mergeable statistics — Moments
// (weighted count, mean, variance, minimum, maximum) and Digest (a
// fixed-memory quantile sketch) — and Steps, a read-compute-write loop that
// keeps netCDF calls on one goroutine while others compute.
//
// Conventions. Accumulators skip NaN, so callers turn fill values into NaN
// before adding and missing data never leaks into a statistic. Weights are
// optional (cell areas for area-weighted statistics); a nil weight slice
// means unit weights. Partial accumulators are merged in a fixed order
// (time step, then file) so that results are byte-for-byte reproducible.
//
// Accuracy. Moments summarises each batch (one time slice) with the
// corrected two-pass algorithm and merges batches with the pairwise update
// of Chan, Golub & LeVeque; on the NIST StRD univariate sets it reproduces
// the certified mean and standard deviation to at least 13 digits whenever
// the data are exactly representable (the decimal NumAcc3/NumAcc4 values
// are not exact binary doubles, which alone limits any float64 method to
// about 9 and 8 digits of s; see Moments.Affine for the exact route through
// packed integers). Digest is a merging t-digest (Dunning & Ertl 2019):
// tail quantiles are accurate to a small fraction of a percent in rank.
//
// Costs. Moments is seven numbers. A Digest with compression delta holds at
// most about delta centroids plus 8*delta buffered values (16 bytes each):
// 200 -> about 30 kB, whatever the stream length. Adding n values costs
// O(n log(8 delta)) for the buffer sorts.
//
// Nothing here touches files. Accumulators are not locked: use one per
// goroutine and merge afterwards. Steps calls read and write only on the
// caller's goroutine, so they may call libnetcdf.
package stream
