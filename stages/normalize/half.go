package normalize

import "math"

// Float16Bits converts f to the nearest IEEE 754 binary16 value (round to
// nearest, ties to even, as the standard's default rounding and numpy's
// float16 do) and returns its bit pattern. Magnitudes of 65520 and above
// become infinity; NaN becomes the quiet NaN 0x7e00 with f's sign.
func Float16Bits(f float32) uint16 { return Float16BitsOf64(float64(f)) }

// Float16BitsOf64 is Float16Bits for a float64, rounded once: going
// through float32 first would round twice and differ from a direct
// conversion on rare ties.
func Float16BitsOf64(f float64) uint16 {
	b := math.Float64bits(f)
	sign := uint16(b>>48) & 0x8000
	exp := int(b>>52) & 0x7ff
	mant := b & (1<<52 - 1)
	if exp == 0x7ff {
		if mant != 0 {
			return sign | 0x7e00
		}
		return sign | 0x7c00
	}
	e := exp - 1023 + 15 // biased half exponent
	if e >= 0x1f {
		return sign | 0x7c00
	}
	if e <= 0 {
		// Subnormal half (or zero): value = m * 2^-24 with m < 1024.
		if e < -10 {
			return sign // below half the smallest subnormal
		}
		m := mant | 1<<52
		s := uint(43 - e)
		h := m >> s
		rem := m & (1<<s - 1)
		half := uint64(1) << (s - 1)
		if rem > half || (rem == half && h&1 == 1) {
			h++ // may carry into the smallest normal, which is correct
		}
		return sign | uint16(h)
	}
	h := uint64(e)<<10 | mant>>42
	rem := mant & (1<<42 - 1)
	if rem > 1<<41 || (rem == 1<<41 && h&1 == 1) {
		h++ // a carry into the exponent is correct, up to infinity
	}
	return sign | uint16(h)
}

// Float16Value returns the float32 value of a binary16 bit pattern (exact:
// every half value is a float32).
func Float16Value(h uint16) float32 {
	sign := uint32(h&0x8000) << 16
	exp := uint32(h>>10) & 0x1f
	mant := uint32(h & 0x3ff)
	switch {
	case exp == 0x1f:
		return math.Float32frombits(sign | 0x7f800000 | mant<<13)
	case exp == 0:
		if mant == 0 {
			return math.Float32frombits(sign)
		}
		v := float32(mant) * (1.0 / (1 << 24))
		if sign != 0 {
			v = -v
		}
		return v
	}
	return math.Float32frombits(sign | (exp+127-15)<<23 | mant<<13)
}
