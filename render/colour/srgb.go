// Package colour is Patina's one colour-conversion module: the sRGB transfer
// functions of IEC 61966-2-1:1999, linear sRGB (Rec. 709 primaries, D65) to
// CIE XYZ, and CIELAB (CIE 15, ISO/CIE 11664-4). All light transport and
// fitting in Patina work on linear RGB; these functions move between that and
// the encoded values of photos and display images.
package colour

import "math"

// sRGB transfer function constants, IEC 61966-2-1:1999.
const (
	srgbDecodeKnee = 0.04045   // encoded value below which the curve is linear
	srgbEncodeKnee = 0.0031308 // linear value below which the curve is linear
	srgbSlope      = 12.92
	srgbGamma      = 2.4
	srgbOffset     = 0.055
)

// SRGBToLinear decodes one sRGB-encoded value in [0,1] to linear light.
// Values outside [0,1] are extended symmetrically (sign preserved).
func SRGBToLinear(v float64) float64 {
	if v < 0 {
		return -SRGBToLinear(-v)
	}
	if v <= srgbDecodeKnee {
		return v / srgbSlope
	}
	return math.Pow((v+srgbOffset)/(1+srgbOffset), srgbGamma)
}

// LinearToSRGB encodes one linear value to the sRGB curve. Values outside
// [0,1] are extended symmetrically; callers clamp for display.
func LinearToSRGB(l float64) float64 {
	if l < 0 {
		return -LinearToSRGB(-l)
	}
	if l <= srgbEncodeKnee {
		return l * srgbSlope
	}
	return (1+srgbOffset)*math.Pow(l, 1/srgbGamma) - srgbOffset
}

// decodeLUT8 maps every 8-bit sRGB code value to linear light.
var decodeLUT8 = func() (t [256]float32) {
	for i := range t {
		t[i] = float32(SRGBToLinear(float64(i) / 255))
	}
	return
}()

// SRGB8ToLinear decodes an 8-bit sRGB code value through a table.
func SRGB8ToLinear(c uint8) float32 { return decodeLUT8[c] }

// Luminance returns relative luminance Y of linear sRGB (the middle row of
// the RGB to XYZ matrix).
func Luminance(r, g, b float64) float64 {
	return rgbToXYZ[1][0]*r + rgbToXYZ[1][1]*g + rgbToXYZ[1][2]*b
}
