package world

import "math"

// rng is a small splitmix64 generator. It is ours rather than math/rand so
// that the byte stream behind every planted storm is fixed by this file
// alone, whatever the Go release.
type rng struct{ s uint64 }

// newRNG derives an independent stream from the campaign seed and a path of
// names (scenario, year, "cyclone", index...). Deriving by name keeps
// events independent: adding a storm to a year does not move the others.
func newRNG(seed uint64, parts ...string) *rng {
	h := uint64(14695981039346656037) // FNV-1a offset basis
	for _, p := range parts {
		for i := 0; i < len(p); i++ {
			h ^= uint64(p[i])
			h *= 1099511628211 // FNV-1a prime
		}
		h ^= 0xff // separator, so ("ab","c") differs from ("a","bc")
		h *= 1099511628211
	}
	r := &rng{s: seed ^ h}
	r.next()
	return r
}

func (r *rng) next() uint64 {
	r.s += 0x9e3779b97f4a7c15
	z := r.s
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// float returns a uniform number in [0, 1).
func (r *rng) float() float64 { return float64(r.next()>>11) / (1 << 53) }

// uniform returns a uniform number in [a, b).
func (r *rng) uniform(a, b float64) float64 { return a + (b-a)*r.float() }

// normal returns a standard normal number (Box-Muller).
func (r *rng) normal() float64 {
	u := 1 - r.float() // (0, 1]
	v := r.float()
	return math.Sqrt(-2*math.Log(u)) * math.Cos(2*math.Pi*v)
}
