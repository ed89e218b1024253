package colour

// The sRGB primaries and white point of IEC 61966-2-1 (chromaticities
// R 0.64 0.33, G 0.30 0.60, B 0.15 0.06, D65 0.3127 0.3290). The matrix is
// derived from them at start-up rather than typed in, so that it carries full
// precision; the standard prints it to four decimals.
var (
	primaries = [3][2]float64{{0.64, 0.33}, {0.30, 0.60}, {0.15, 0.06}}
	whiteD65  = [2]float64{0.3127, 0.3290}
	rgbToXYZ  = deriveRGBToXYZ()
	xyzToRGB  = invert3(rgbToXYZ)
	// D65 is the XYZ of the sRGB white, normalised to Y = 1.
	D65 = [3]float64{whiteD65[0] / whiteD65[1], 1, (1 - whiteD65[0] - whiteD65[1]) / whiteD65[1]}
)

func deriveRGBToXYZ() [3][3]float64 {
	var p [3][3]float64 // columns: XYZ of each primary with Y = 1
	for i, c := range primaries {
		p[0][i] = c[0] / c[1]
		p[1][i] = 1
		p[2][i] = (1 - c[0] - c[1]) / c[1]
	}
	w := [3]float64{whiteD65[0] / whiteD65[1], 1, (1 - whiteD65[0] - whiteD65[1]) / whiteD65[1]}
	inv := invert3(p)
	var s [3]float64
	for i := 0; i < 3; i++ {
		s[i] = inv[i][0]*w[0] + inv[i][1]*w[1] + inv[i][2]*w[2]
	}
	var m [3][3]float64
	for r := 0; r < 3; r++ {
		for c := 0; c < 3; c++ {
			m[r][c] = p[r][c] * s[c]
		}
	}
	return m
}

func invert3(m [3][3]float64) [3][3]float64 {
	a, b, c := m[0][0], m[0][1], m[0][2]
	d, e, f := m[1][0], m[1][1], m[1][2]
	g, h, i := m[2][0], m[2][1], m[2][2]
	det := a*(e*i-f*h) - b*(d*i-f*g) + c*(d*h-e*g)
	return [3][3]float64{
		{(e*i - f*h) / det, (c*h - b*i) / det, (b*f - c*e) / det},
		{(f*g - d*i) / det, (a*i - c*g) / det, (c*d - a*f) / det},
		{(d*h - e*g) / det, (b*g - a*h) / det, (a*e - b*d) / det},
	}
}

// RGBToXYZMatrix returns the linear sRGB to CIE XYZ matrix (D65, Y of white = 1).
func RGBToXYZMatrix() [3][3]float64 { return rgbToXYZ }

// LinearRGBToXYZ converts linear sRGB to CIE XYZ (D65 white has Y = 1).
func LinearRGBToXYZ(r, g, b float64) (x, y, z float64) {
	m := &rgbToXYZ
	return m[0][0]*r + m[0][1]*g + m[0][2]*b,
		m[1][0]*r + m[1][1]*g + m[1][2]*b,
		m[2][0]*r + m[2][1]*g + m[2][2]*b
}

// XYZToLinearRGB converts CIE XYZ back to linear sRGB.
func XYZToLinearRGB(x, y, z float64) (r, g, b float64) {
	m := &xyzToRGB
	return m[0][0]*x + m[0][1]*y + m[0][2]*z,
		m[1][0]*x + m[1][1]*y + m[1][2]*z,
		m[2][0]*x + m[2][1]*y + m[2][2]*z
}
