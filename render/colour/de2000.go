package colour

import "math"

// Constants of CIEDE2000 precomputed for DeltaE2000.
var (
	pow25to7 = math.Pow(25, 7)
	cos30    = math.Cos(30 * math.Pi / 180)
	sin30    = math.Sin(30 * math.Pi / 180)
	cos6     = math.Cos(6 * math.Pi / 180)
	sin6     = math.Sin(6 * math.Pi / 180)
	cos63    = math.Cos(63 * math.Pi / 180)
	sin63    = math.Sin(63 * math.Pi / 180)
	// cosRotationCut is the cosine of 275 - 25 sqrt(40) degrees, the mean
	// hue below which the CIEDE2000 rotation term vanishes in float64.
	cosRotationCut = math.Cos((275 - 25*math.Sqrt(40)) * math.Pi / 180)
)

const (
	rad2deg = 180 / math.Pi
	deg2rad = math.Pi / 180
)

// DeltaE2000 returns the CIEDE2000 colour difference between two CIELAB
// colours with the parametric factors kL = kC = kH = 1 (CIE 142-2001;
// ISO/CIE 11664-6). It follows the equations and the hue conventions of
// Sharma, Wu and Dalal, "The CIEDE2000 color-difference formula:
// implementation notes, supplementary test data, and mathematical
// observations", Color Res. Appl. 30(1), 2005: a hue is 0 where the chroma
// is 0, and where the two hues are exactly 180 degrees apart the mean hue is
// their arithmetic mean. The result is symmetric in its arguments.
//
// Because error maps evaluate it for every pixel, the hue terms are computed
// from the (a', b) vectors rather than from hue angles: the hue difference
// term 2 sqrt(C'1 C'2) sin(dh'/2) from their cross and dot products, and the
// mean hue as the direction of the bisector of the two hue vectors (which is
// what the case analysis of eq. 14 selects). That leaves at most one atan2
// and one exp per call, none for mean hues below 117 degrees where the
// rotation term vanishes; the tests hold it to the literal equations.
func DeltaE2000(l1, l2 Lab) float64 {
	// Eq. 2-6: chroma-dependent compression of a*.
	c1 := math.Sqrt(l1.A*l1.A + l1.B*l1.B)
	c2 := math.Sqrt(l2.A*l2.A + l2.B*l2.B)
	cm7 := pow7((c1 + c2) / 2)
	g1 := 1 + 0.5*(1-math.Sqrt(cm7/(cm7+pow25to7)))
	a1 := g1 * l1.A
	a2 := g1 * l2.A
	b1, b2 := l1.B, l2.B
	cp1 := math.Sqrt(a1*a1 + b1*b1)
	cp2 := math.Sqrt(a2*a2 + b2*b2)
	cc := cp1 * cp2

	// Eq. 10 and 14: the hue difference dH' and the cosine and sine of the
	// mean hue h'.
	var dH, ch, sh float64
	switch {
	case cc == 0:
		// dh' = 0; the mean hue is the hue of the chromatic colour, or 0.
		switch {
		case cp1 != 0:
			ch, sh = a1/cp1, b1/cp1
		case cp2 != 0:
			ch, sh = a2/cp2, b2/cp2
		default:
			ch = 1
		}
	default:
		dot := a1*a2 + b1*b2
		// a'1 b2 - a'2 b1; the common factor g1 comes out, and cross
		// forms the products without rounding error, so that exactly
		// opposite hues give exactly zero.
		cr := g1 * cross(l1.A, b1, l2.A, b2)
		if cr == 0 && dot < 0 {
			// Hues exactly 180 degrees apart (pairs 10 and 14 of
			// Sharma et al. Table 1): dh' = h2 - h1 = +-180 and the
			// mean hue is (h1 + h2) / 2, 90 degrees past the smaller
			// hue. Only here are the angles themselves needed.
			h1, h2 := hueDeg(b1, a1), hueDeg(b2, a2)
			dH = math.Copysign(2*math.Sqrt(cc), h2-h1)
			lo := math.Min(h1, h2)
			sh, ch = math.Sincos((lo + 90) * deg2rad)
			break
		}
		// 2 sqrt(cc) sin(dh'/2) with sin(dh') = cr/cc, cos(dh') = dot/cc,
		// through the half-angle form that does not cancel in each range.
		if dot >= 0 {
			dH = math.Sqrt2 * cr / math.Sqrt(cc+dot)
		} else {
			dH = math.Copysign(math.Sqrt(2*(cc-dot)), cr)
		}
		i1, i2 := 1/cp1, 1/cp2
		u1a, u1b := a1*i1, b1*i1
		u2a, u2b := a2*i2, b2*i2
		var wa, wb float64
		if dot >= 0 {
			wa, wb = u1a+u2a, u1b+u2b
		} else {
			// Near-opposite hues: the sum of the unit vectors cancels;
			// their difference turned by 90 degrees towards the shorter
			// arc does not.
			da, db := u2a-u1a, u2b-u1b
			if cr > 0 {
				wa, wb = db, -da
			} else {
				wa, wb = -db, da
			}
		}
		n := 1 / math.Sqrt(wa*wa+wb*wb)
		ch, sh = wa*n, wb*n
	}

	// Eq. 12-13: mean lightness and chroma.
	lm := (l1.L + l2.L) / 2
	cpm := (cp1 + cp2) / 2

	// Eq. 15: T from the cosine and sine of the mean hue through the
	// multiple-angle identities, instead of four cosines.
	c, s := ch, sh
	cos2 := 2*c*c - 1
	sin2 := 2 * s * c
	cos3 := c * (4*c*c - 3)
	sin3 := s * (3 - 4*s*s)
	cos4 := 2*cos2*cos2 - 1
	sin4 := 2 * sin2 * cos2
	t := 1 - 0.17*(c*cos30+s*sin30) + // cos(h - 30)
		0.24*cos2 +
		0.32*(cos3*cos6-sin3*sin6) - // cos(3h + 6)
		0.20*(cos4*cos63+sin4*sin63) // cos(4h - 63)

	// Eq. 17-18: the rotation angle 30 exp(-((h - 275) / 25)^2) degrees,
	// with h the mean hue in degrees in [0, 360). Beyond (h - 275)^2 / 625
	// = 40 the rotation term is below 1e-16 of its peak and is left out:
	// that is every hue from 0 to 275 - 25 sqrt(40) = 116.9 degrees (the
	// reds, oranges, yellows and browns of most objects), recognised from
	// the direction (ch, sh) without an arctangent.
	var sin2Theta float64
	if !(sh >= 0 && ch > cosRotationCut) {
		hm := math.Atan2(sh, ch) * rad2deg
		if hm < 0 {
			hm += 360
		}
		x := (hm - 275) * (1.0 / 25)
		if x2 := x * x; x2 < 40 {
			sin2Theta = sinSmall(60 * deg2rad * math.Exp(-x2)) // sin(2 * 30 exp(-x^2) degrees)
		}
	}
	// Eq. 16-22: weights and the rotation term.
	cpm7 := pow7(cpm)
	rc := 2 * math.Sqrt(cpm7/(cpm7+pow25to7))
	lm50 := (lm - 50) * (lm - 50)
	sl := 1 + 0.015*lm50/math.Sqrt(20+lm50)
	sc := 1 + 0.045*cpm
	shw := 1 + 0.015*cpm*t
	rt := -sin2Theta * rc

	tl := (l2.L - l1.L) / sl
	tc := (cp2 - cp1) / sc
	th := dH / shw
	return math.Sqrt(tl*tl + tc*tc + th*th + rt*tc*th)
}

// cross returns a1 b2 - a2 b1 with the rounding error of the products
// compensated (Kahan's determinant with fused multiply-add), so that it is
// zero exactly when the two vectors are parallel in floating point.
func cross(a1, b1, a2, b2 float64) float64 {
	p := a2 * b1
	e := math.FMA(a2, b1, -p)
	return math.FMA(a1, b2, -p) - e
}

// sinSmall is sin(x) for 0 <= x <= pi/3 (twice the largest rotation angle
// of 30 degrees) from its Taylor series to x^17, whose remainder there is
// below x^19/19! < 3e-17.
// The factors are multiplied as reciprocals: the compiler keeps x / 6 a
// division, which would cost more than the rest of the series.
func sinSmall(x float64) float64 {
	const (
		r6   = 1.0 / 6
		r20  = 1.0 / 20
		r42  = 1.0 / 42
		r72  = 1.0 / 72
		r110 = 1.0 / 110
		r156 = 1.0 / 156
		r210 = 1.0 / 210
		r272 = 1.0 / 272
	)
	x2 := x * x
	return x * (1 - x2*r6*(1-x2*r20*(1-x2*r42*(1-x2*r72*(1-x2*r110*(1-x2*r156*(1-x2*r210*(1-x2*r272))))))))
}

func pow7(x float64) float64 {
	x2 := x * x
	return x2 * x2 * x2 * x
}

// hueDeg is the hue angle h' in degrees in [0, 360), 0 where a' = b = 0.
func hueDeg(b, a float64) float64 {
	if a == 0 && b == 0 {
		return 0
	}
	h := math.Atan2(b, a) * rad2deg
	if h < 0 {
		h += 360
		if h >= 360 { // a tiny negative angle rounds to 360
			h = 0
		}
	}
	return h
}
