package vectors

import "math"

// halfToFloat32 converts an IEEE 754 binary16 value to the binary32 value
// equal to it. Every binary16 value, subnormals included, is exactly a
// binary32 value; infinities stay infinite and a NaN keeps its sign and
// payload (shifted into the high bits of the wider significand), as
// NumPy's astype(float32) does.
func halfToFloat32(h uint16) float32 {
	sign := uint32(h&0x8000) << 16
	exp := uint32(h>>10) & 0x1f
	frac := uint32(h) & 0x3ff
	switch exp {
	case 0:
		// Zero or subnormal: frac × 2⁻²⁴, exact in float32 (frac < 2¹⁰ and
		// the product is a power-of-two scaling).
		v := float32(frac) * (1.0 / (1 << 24))
		return math.Float32frombits(math.Float32bits(v) | sign)
	case 0x1f:
		return math.Float32frombits(sign | 0x7f800000 | frac<<13)
	default:
		// Rebias the exponent from 15 to 127.
		return math.Float32frombits(sign | (exp+127-15)<<23 | frac<<13)
	}
}
