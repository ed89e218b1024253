package metrics

import (
	"math"

	"patina/render/colour"
)

// The sRGB encoding of every channel and every luminance value of both
// images is the costliest step after CIEDE2000, so it goes through a table
// of colour.LinearToSRGB (the IEC 61966-2-1 curve stays defined in one
// place) with linear interpolation: 4096 intervals per octave of the linear
// value from 2^-9 (below the curve's knee at 0.0031308) to 1. The
// interpolation error is at most (dv)^2/8 |f”| <= 2e-9 in the encoded value
// (tests check it against colour.LinearToSRGB).
const (
	encodeOctaves  = 9
	encodeStepBits = 12
	encodeSteps    = 1 << encodeStepBits
	encodeShift    = 52 - encodeStepBits // mantissa bits below the table index
)

var (
	encodeBase = math.Float64bits(0x1p-9) >> encodeShift
	// encodeKneeEnd is the first table breakpoint above the knee; the
	// interval below it straddles the kink of the curve, so values there
	// are encoded directly.
	encodeKneeEnd = math.Float64frombits((math.Float64bits(0.0031308)>>encodeShift + 1) << encodeShift)
	encodeTable   = func() []float64 {
		t := make([]float64, encodeOctaves*encodeSteps+1)
		for i := range t {
			e := i / encodeSteps
			m := float64(i%encodeSteps) / encodeSteps
			t[i] = colour.LinearToSRGB(math.Ldexp(1+m, e-9))
		}
		return t
	}()
)

// encode is the sRGB encoding of a linear value clipped to [0, 1].
func encode(v float64) float64 {
	switch {
	case !(v > 0): // also NaN, which valid pixels never carry
		return 0
	case v >= 1:
		return 1
	case v < encodeKneeEnd:
		return colour.LinearToSRGB(v)
	}
	b := math.Float64bits(v)
	i := int(b>>encodeShift - encodeBase)
	f := float64(b&(1<<encodeShift-1)) * (1.0 / (1 << encodeShift))
	t := encodeTable[i : i+2 : i+2]
	return t[0] + f*(t[1]-t[0])
}
