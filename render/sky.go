package render

import (
	"fmt"
	"math"

	"patina/render/colour"
)

// Sky is a clear daylight sky with a sun from the analytic model of
// Preetham, Shirley and Smits, "A practical analytic model for daylight",
// SIGGRAPH 1999 (the Perez distribution with their turbidity fits, eq. 3-5
// and appendix A.2), generated as an equirectangular map in the
// Environment mapping (azimuths from the map's A axis towards B).
//
// Units: radiance is in units of (100/pi) kcd/m^2, so a white Lambertian
// surface lit by 100 klx has radiance 1; at a 45 degree sun a horizontal
// white card renders close to 1 at exposure 0. Ratios between sun, sky and
// ground are physical; the absolute scale is a convenience.
//
// The zero value gives a 1024 x 512 map with turbidity 3, a sun at
// elevation 0 (set ElevationDeg) and ground albedo 0.2.
type Sky struct {
	ElevationDeg float64 // sun elevation above the horizon, degrees, 0..90
	AzimuthDeg   float64 // sun azimuth from the map's A axis towards B, degrees
	Turbidity    float64 // atmospheric turbidity, 1.7..10; 0 means 3 (a clear day)
	Width        int     // map width in texels; 0 means 1024
	Height       int     // map height; 0 means Width/2
	GroundAlbedo float64 // reflectance of the ground filling the lower hemisphere; 0 means 0.2 (common practice), negative means a black ground
}

// skyUnit converts kcd/m^2 to the map's radiance unit.
const skyUnit = math.Pi / 100

// sunAngularRadius is the sun's apparent angular radius, 0.2665 degrees
// (from memory: the solar disc subtends about 0.533 degrees).
const sunAngularRadius = 0.2665 * math.Pi / 180

// Map generates the sky: width, height and linear RGB radiance, row 0 at
// the zenith.
func (s Sky) Map() (w, h int, pix []float32, err error) {
	w, h = s.Width, s.Height
	if w == 0 {
		w = 1024
	}
	if h == 0 {
		h = w / 2
	}
	if w < 8 || h < 4 || w > MaxEnvironmentSide || h > MaxEnvironmentSide || w*h > MaxEnvironmentTexels {
		return 0, 0, nil, fmt.Errorf("render: sky map %dx%d: expected sides 8..%d (height >= 4)", w, h, MaxEnvironmentSide)
	}
	T := s.Turbidity
	if T == 0 {
		T = 3
	}
	if !(T >= 1.7 && T <= 10) {
		return 0, 0, nil, fmt.Errorf("render: sky turbidity %v: expected 1.7..10 (the range of Preetham et al.'s fit)", s.Turbidity)
	}
	if !(s.ElevationDeg >= 0 && s.ElevationDeg <= 90) || math.IsNaN(s.AzimuthDeg) || math.IsInf(s.AzimuthDeg, 0) {
		return 0, 0, nil, fmt.Errorf("render: sun elevation %v, azimuth %v: expected elevation 0..90 degrees and a finite azimuth", s.ElevationDeg, s.AzimuthDeg)
	}
	albedo := s.GroundAlbedo
	if albedo == 0 {
		albedo = 0.2
	}
	if albedo < 0 {
		albedo = 0
	}
	if albedo > 1 {
		return 0, 0, nil, fmt.Errorf("render: ground albedo %v: expected at most 1", s.GroundAlbedo)
	}

	thetaS := (90 - s.ElevationDeg) * math.Pi / 180
	phiS := s.AzimuthDeg * math.Pi / 180
	sunDir := [3]float64{math.Sin(thetaS) * math.Cos(phiS), math.Sin(thetaS) * math.Sin(phiS), math.Cos(thetaS)}
	m := newPreetham(T, thetaS)

	pix = make([]float32, 3*w*h)
	dphi := 2 * math.Pi / float64(w)
	var eh [3]float64 // horizontal irradiance, map units
	for j := 0; j < h; j++ {
		t0 := math.Pi * float64(j) / float64(h)
		t1 := math.Pi * float64(j+1) / float64(h)
		theta := 0.5 * (t0 + t1)
		if theta >= math.Pi/2 {
			continue
		}
		// Solid angle of a texel of this row times cos(theta), for the
		// horizontal irradiance (exact per row: integral of cos sin dtheta).
		projOmega := dphi * 0.5 * (math.Sin(t1)*math.Sin(t1) - math.Sin(t0)*math.Sin(t0))
		st, ct := math.Sin(theta), math.Cos(theta)
		for i := 0; i < w; i++ {
			phi := (float64(i) + 0.5) * dphi
			d := [3]float64{st * math.Cos(phi), st * math.Sin(phi), ct}
			cg := clampF64(d[0]*sunDir[0]+d[1]*sunDir[1]+d[2]*sunDir[2], -1, 1)
			r, g, b := m.radiance(theta, math.Acos(cg))
			k := 3 * (j*w + i)
			pix[k], pix[k+1], pix[k+2] = float32(r), float32(g), float32(b)
			eh[0] += r * projOmega
			eh[1] += g * projOmega
			eh[2] += b * projOmega
		}
	}
	sun := sunIrradiance(T, thetaS)
	sunOnMap := rasteriseSun(pix, w, h, sunDir, sun)
	for c := 0; c < 3; c++ {
		eh[c] += sunOnMap[c] * math.Cos(thetaS)
	}
	// Ground: a Lambertian plane of the given albedo lit by the sky and the
	// sun, seen from just above it.
	for j := 0; j < h; j++ {
		theta := math.Pi * (float64(j) + 0.5) / float64(h)
		if theta < math.Pi/2 {
			continue
		}
		for i := 0; i < w; i++ {
			k := 3 * (j*w + i)
			for c := 0; c < 3; c++ {
				pix[k+c] = float32(albedo * eh[c] / math.Pi)
			}
		}
	}
	return w, h, pix, nil
}

// preetham holds the Perez coefficients and zenith values of one sky.
type preetham struct {
	coef   [3][5]float64 // Y, x, y: A..E
	zenith [3]float64    // Yz (kcd/m^2), xz, yz
	norm   [3]float64    // 1 / F(0, thetaS)
}

func newPreetham(T, thetaS float64) *preetham {
	p := &preetham{}
	// Preetham et al. 1999, appendix A.2: distribution coefficients for
	// luminance Y and chromaticities x, y, linear in turbidity T.
	p.coef[0] = [5]float64{0.1787*T - 1.4630, -0.3554*T + 0.4275, -0.0227*T + 5.3251, 0.1206*T - 2.5771, -0.0670*T + 0.3703}
	p.coef[1] = [5]float64{-0.0193*T - 0.2592, -0.0665*T + 0.0008, -0.0004*T + 0.2125, -0.0641*T - 0.8989, -0.0033*T + 0.0452}
	p.coef[2] = [5]float64{-0.0167*T - 0.2608, -0.0950*T + 0.0092, -0.0079*T + 0.2102, -0.0441*T - 1.6537, -0.0109*T + 0.0529}
	// Zenith luminance (kcd/m^2) and chromaticity, same appendix.
	chi := (4.0/9.0 - T/120) * (math.Pi - 2*thetaS)
	p.zenith[0] = math.Max(0.01, (4.0453*T-4.9710)*math.Tan(chi)-0.2155*T+2.4192)
	t1, t2, t3 := thetaS, thetaS*thetaS, thetaS*thetaS*thetaS
	TT := T * T
	p.zenith[1] = TT*(0.00166*t3-0.00375*t2+0.00209*t1) +
		T*(-0.02903*t3+0.06377*t2-0.03202*t1+0.00394) +
		(0.11693*t3 - 0.21196*t2 + 0.06052*t1 + 0.25886)
	p.zenith[2] = TT*(0.00275*t3-0.00610*t2+0.00317*t1) +
		T*(-0.04214*t3+0.08970*t2-0.04153*t1+0.00516) +
		(0.15346*t3 - 0.26756*t2 + 0.06670*t1 + 0.26688)
	for c := 0; c < 3; c++ {
		p.norm[c] = 1 / perez(&p.coef[c], 0, thetaS)
	}
	return p
}

// perez is the Perez et al. sky distribution F(theta, gamma) (Preetham et
// al. 1999, eq. 3): theta from the zenith, gamma from the sun.
func perez(c *[5]float64, theta, gamma float64) float64 {
	ct := math.Max(math.Cos(theta), 1e-3)
	cg := math.Cos(gamma)
	return (1 + c[0]*math.Exp(c[1]/ct)) * (1 + c[2]*math.Exp(c[3]*gamma) + c[4]*cg*cg)
}

// radiance returns the sky's linear sRGB radiance in map units at zenith
// angle theta and angle gamma from the sun.
func (p *preetham) radiance(theta, gamma float64) (r, g, b float64) {
	Y := p.zenith[0] * perez(&p.coef[0], theta, gamma) * p.norm[0]
	x := p.zenith[1] * perez(&p.coef[1], theta, gamma) * p.norm[1]
	y := p.zenith[2] * perez(&p.coef[2], theta, gamma) * p.norm[2]
	if !(Y > 0) || !(y > 0) {
		return 0, 0, 0
	}
	X := x * Y / y
	Z := (1 - x - y) * Y / y
	r, g, b = colour.XYZToLinearRGB(X, Y, Z)
	return math.Max(0, r) * skyUnit, math.Max(0, g) * skyUnit, math.Max(0, b) * skyUnit
}

// sunIrradiance is the sun's irradiance on a surface facing it, per
// channel in map units: the extraterrestrial illuminance attenuated by
// Rayleigh scattering and aerosols along the air mass of the sun's zenith
// angle. Values from memory: extraterrestrial illuminance about 128 klx;
// Rayleigh optical depth 0.008735 lambda^-4.08 (lambda in micrometres,
// Leckner 1978); aerosols with Angstrom exponent 1.3 and beta = 0.04608 T -
// 0.04586 (Preetham et al. 1999, appendix A.3); air mass of Kasten and
// Young 1989. The channels are represented by 610, 550 and 465 nm.
func sunIrradiance(T, thetaS float64) [3]float64 {
	zDeg := thetaS * 180 / math.Pi
	mass := 1 / (math.Cos(thetaS) + 0.50572*math.Pow(math.Max(96.07995-zDeg, 1e-3), -1.6364))
	beta := 0.04608*T - 0.04586
	lambda := [3]float64{0.610, 0.550, 0.465}
	var e [3]float64
	for c, l := range lambda {
		tau := 0.008735*math.Pow(l, -4.08) + beta*math.Pow(l, -1.3)
		e[c] = 128 * math.Exp(-mass*tau) * skyUnit // klx = kcd sr/m^2
	}
	return e
}

// rasteriseSun adds a disc of angular radius sunAngularRadius around the
// sun direction to the map, with coverage found by supersampling each
// texel, and scales it so that its integral over the sphere is exactly the
// irradiance e. It returns what was added, integrated (equal to e unless
// the disc falls below the horizon).
func rasteriseSun(pix []float32, w, h int, sun [3]float64, e [3]float64) [3]float64 {
	const n = 8 // subsamples per texel side
	cosR := math.Cos(sunAngularRadius)
	thetaS := math.Acos(clampF64(sun[2], -1, 1))
	phiS := math.Atan2(sun[1], sun[0])
	dphi := 2 * math.Pi / float64(w)
	// Rows and columns that can touch the disc (with a texel of margin).
	j0 := int((thetaS-2*sunAngularRadius)/math.Pi*float64(h)) - 1
	j1 := int((thetaS+2*sunAngularRadius)/math.Pi*float64(h)) + 1
	type cover struct {
		k    int
		frac float64
		sa   float64
	}
	var cells []cover
	total := 0.0
	for j := max(j0, 0); j <= min(j1, h-1); j++ {
		t0 := math.Pi * float64(j) / float64(h)
		t1 := math.Pi * float64(j+1) / float64(h)
		if t0 >= math.Pi/2 {
			break
		}
		sa := dphi * (math.Cos(t0) - math.Cos(t1))
		span := 2*sunAngularRadius/math.Max(math.Sin(thetaS), 1e-6) + 2*dphi
		if span > math.Pi {
			span = math.Pi
		}
		i0 := int(math.Floor((phiS-span)/dphi)) - 1
		i1 := int(math.Ceil((phiS+span)/dphi)) + 1
		if i1-i0 >= w {
			i0, i1 = 0, w-1
		}
		for ii := i0; ii <= i1; ii++ {
			i := ((ii % w) + w) % w
			in := 0
			for a := 0; a < n; a++ {
				th := t0 + (t1-t0)*(float64(a)+0.5)/n
				st, ct := math.Sin(th), math.Cos(th)
				for b := 0; b < n; b++ {
					ph := (float64(i) + (float64(b)+0.5)/n) * dphi
					if st*math.Cos(ph)*sun[0]+st*math.Sin(ph)*sun[1]+ct*sun[2] >= cosR {
						in++
					}
				}
			}
			if in > 0 {
				f := float64(in) / (n * n)
				cells = append(cells, cover{3 * (j*w + i), f, sa})
				total += f * sa
			}
		}
	}
	var added [3]float64
	if total == 0 {
		// A map so coarse that no subsample hit the disc: the whole sun
		// goes into the texel holding its centre.
		j := min(int(thetaS/math.Pi*float64(h)), h-1)
		if math.Pi*float64(j)/float64(h) >= math.Pi/2 {
			return added
		}
		p := phiS
		if p < 0 {
			p += 2 * math.Pi
		}
		i := min(int(p/dphi), w-1)
		t0, t1 := math.Pi*float64(j)/float64(h), math.Pi*float64(j+1)/float64(h)
		cells = append(cells, cover{3 * (j*w + i), 1, dphi * (math.Cos(t0) - math.Cos(t1))})
		total = cells[0].sa
	}
	for _, c := range cells {
		for ch := 0; ch < 3; ch++ {
			L := e[ch] / total * c.frac
			pix[c.k+ch] += float32(L)
			added[ch] += L * c.sa
		}
	}
	return added
}
