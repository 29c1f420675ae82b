package shard

import (
	"cmp"
	"slices"
)

// BalanceShards assigns shards (given by their sizes in bytes) to n
// data-parallel ranks: every shard to exactly one rank, balanced in bytes
// by the longest-processing-time rule (largest shard first, each to the
// rank with the fewest bytes so far, lowest rank on ties), whose largest
// load is within 4/3 of the best possible (Graham 1969, SIAM J. Appl.
// Math. 17). It returns the shard indices of each rank in ascending order.
// Deterministic: equal sizes are taken in index order.
func BalanceShards(bytes []int64, n int) [][]int {
	out := make([][]int, n)
	if n <= 0 {
		return out
	}
	order := make([]int, len(bytes))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(bytes[b], bytes[a]) })
	load := make([]int64, n)
	for _, s := range order {
		best := 0
		for r := 1; r < n; r++ {
			if load[r] < load[best] {
				best = r
			}
		}
		out[best] = append(out[best], s)
		load[best] += bytes[s]
	}
	for r := range out {
		slices.Sort(out[r])
	}
	return out
}
