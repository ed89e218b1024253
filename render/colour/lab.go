package colour

import "math"

// Lab is a colour in CIELAB (CIE 15:2004; ISO/CIE 11664-4:2019) relative to
// the D65 white of the 2 degree observer, the white of sRGB. L is lightness
// (0 for black, 100 for the reference white); A and B are the red-green and
// yellow-blue opponent coordinates.
type Lab struct{ L, A, B float64 }

// CIELAB constants as exact rationals (CIE 15:2004, ISO/CIE 11664-4): the
// older decimal forms 0.008856 and 903.3 make the two branches of f miss each
// other; these meet exactly at t = (6/29)^3.
const (
	LabEpsilon = 216.0 / 24389 // (6/29)^3: below this f(t) is linear
	LabKappa   = 24389.0 / 27  // (29/3)^3: slope of L* against Y/Yn near black
	labDelta   = 6.0 / 29      // f(LabEpsilon), the join in the f domain
)

// labF is the CIELAB companding function f(t): the cube root above
// LabEpsilon and the straight line (kappa t + 16) / 116 = (841/108) t + 4/29
// below it.
func labF(t float64) float64 {
	if t > LabEpsilon {
		return cbrt(t)
	}
	return (LabKappa*t + 16) * (1.0 / 116)
}

// Reciprocals of the white's X and Z, so that a conversion multiplies
// instead of divides.
var invXn, invZn = 1 / D65[0], 1 / D65[2]

// labFInv inverts labF.
func labFInv(f float64) float64 {
	if f > labDelta {
		return f * f * f
	}
	return (116*f - 16) / LabKappa
}

// XYZToLab converts CIE XYZ (scaled so that the D65 white has Y = 1) to
// CIELAB with the D65 reference white. Values outside the gamut of real
// colours (negative XYZ, Y above 1) follow the same equations.
func XYZToLab(x, y, z float64) Lab {
	fx := labF(x * invXn)
	fy := labF(y)
	fz := labF(z * invZn)
	return Lab{L: 116*fy - 16, A: 500 * (fx - fy), B: 200 * (fy - fz)}
}

// LabToXYZ converts CIELAB (D65 white) back to CIE XYZ with Y of white = 1.
func LabToXYZ(c Lab) (x, y, z float64) {
	fy := (c.L + 16) / 116
	fx := fy + c.A/500
	fz := fy - c.B/200
	return D65[0] * labFInv(fx), labFInv(fy), D65[2] * labFInv(fz)
}

// LinearRGBToLab converts linear sRGB (Rec. 709 primaries; (1, 1, 1) is the
// D65 white) to CIELAB.
func LinearRGBToLab(r, g, b float64) Lab { return XYZToLab(LinearRGBToXYZ(r, g, b)) }

// LabToLinearRGB converts CIELAB back to linear sRGB; colours outside the
// sRGB gamut give components below 0 or above 1, which the caller clips.
func LabToLinearRGB(c Lab) (r, g, b float64) { return XYZToLinearRGB(LabToXYZ(c)) }

// cbrt returns the cube root of x to within a few units in the last place,
// faster than math.Cbrt, because the CIELAB conversion of a full image
// takes millions of them. It starts from the exponent divided by three
// (the bit trick of fdlibm's cbrt, which is good to about 3 percent) and
// takes two Halley steps (cubic convergence: 3e-2, 3e-5, 1e-14). Zero,
// subnormals, infinities and NaN go to math.Cbrt.
func cbrt(x float64) float64 {
	ax := math.Abs(x)
	if !(ax >= 0x1p-1022) || ax > math.MaxFloat64 {
		return math.Cbrt(x)
	}
	// 0x2A9F7893782DA1CE is about (1023 - 1023/3) << 52 less a bias that
	// centres the error of the first guess (the constant is from memory of
	// Kahan's cube-root notes; the tests check the result against math.Cbrt).
	y := math.Float64frombits(math.Float64bits(ax)/3 + 0x2A9F7893782DA1CE)
	// The ratio is formed first: y * (y3 + 2 ax) would underflow near the
	// bottom of the exponent range.
	y3 := y * y * y
	y *= (y3 + 2*ax) / (2*y3 + ax)
	y3 = y * y * y
	y *= (y3 + 2*ax) / (2*y3 + ax)
	if x < 0 {
		return -y
	}
	return y
}
