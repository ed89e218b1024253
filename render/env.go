package render

import (
	"fmt"
	"math"

	"patina/brdf"
	"patina/render/colour"
)

// Limits on environment maps, checked before anything is allocated.
const (
	// MaxEnvironmentSide is the largest accepted width or height in texels.
	MaxEnvironmentSide = 32768
	// MaxEnvironmentTexels is the largest accepted width*height (a 16k x 8k
	// map is 2^27 texels; its sampling tables take about 1 GiB).
	MaxEnvironmentTexels = 1 << 27
)

// EnvironmentOrientation places an environment relative to the world. The
// zero value means: up is +Z, no rotation, scale 1.
type EnvironmentOrientation struct {
	// Up is the world direction of the map's zenith (its top row): the
	// capture's up axis. Zero means +Z. It need not be unit length.
	Up Vec3
	// RotateDeg turns the map about Up by this many degrees,
	// counter-clockwise seen from above (from the A axis towards the B axis,
	// see Environment): a feature at map azimuth phi appears at world
	// azimuth phi + RotateDeg.
	RotateDeg float64
	// Scale multiplies every radiance value; 0 means 1.
	Scale float64
}

// Environment is radiance arriving from infinitely far away: either an
// equirectangular (latitude-longitude) HDR map or a constant colour.
//
// The direction <-> (u, v) mapping, written once here and used for lookup,
// sampling and the pdf:
//
//   - U is the unit up axis (EnvironmentOrientation.Up, the capture's up
//     axis, default +Z). The horizontal reference axes are A, the world +X
//     axis projected onto the plane perpendicular to U (world +Y when U is
//     parallel to X), and B = U x A, so (A, B, U) is right-handed. With U =
//     +Z: A = +X, B = +Y. With U = +Y: A = +X, B = -Z.
//   - For a unit direction d, theta = acos(d.U) in [0, pi] is the angle from
//     the zenith and phi = atan2(d.B, d.A) - rotation, wrapped into
//     [0, 2 pi), is the azimuth measured from A towards B.
//   - u = phi / (2 pi), v = theta / pi. Texel column i = floor(u * width),
//     row j = floor(v * height): row 0 (the first row of the image, the top
//     row of a Radiance .hdr file) touches the zenith, the last row the
//     nadir, and column 0 starts at azimuth 0 (direction A when the
//     rotation is 0), increasing towards B; the centre column looks along
//     -A.
//
// Lookup is nearest-texel (the map is treated as piecewise constant, which
// is exactly the density importance sampling draws from).
type Environment struct {
	width, height int
	pix           []float32 // linear RGB radiance, row 0 at the zenith; nil for a constant
	constant      brdf.RGB
	scale         float64
	up, a, b      Vec3
	cosR, sinR    float64
	rot           float64
	dist          *Distribution2D
}

// NewEnvironmentMap builds an environment from an equirectangular map of
// width x height texels, pix holding linear RGB radiance row by row from the
// top (3*width*height values). Negative, NaN and infinite values count as 0.
// It builds the importance-sampling tables: a piecewise-constant density
// proportional to luminance x sin(theta) per texel (Physically Based
// Rendering, 3rd ed., section 14.2.4).
func NewEnvironmentMap(width, height int, pix []float32, o EnvironmentOrientation) (*Environment, error) {
	if width <= 0 || height <= 0 || width > MaxEnvironmentSide || height > MaxEnvironmentSide {
		return nil, fmt.Errorf("render: environment map is %dx%d texels; each side must be 1..%d", width, height, MaxEnvironmentSide)
	}
	if width*height > MaxEnvironmentTexels {
		return nil, fmt.Errorf("render: environment map is %dx%d = %d texels; at most %d are accepted", width, height, width*height, MaxEnvironmentTexels)
	}
	if len(pix) != 3*width*height {
		return nil, fmt.Errorf("render: environment map %dx%d needs %d values, got %d", width, height, 3*width*height, len(pix))
	}
	e, err := newEnvironment(o)
	if err != nil {
		return nil, err
	}
	e.width, e.height = width, height
	e.pix = make([]float32, len(pix))
	for i, v := range pix {
		if v > 0 && !math.IsInf(float64(v), 1) {
			e.pix[i] = v
		}
	}
	w := make([]float64, width*height)
	for j := 0; j < height; j++ {
		s := math.Sin(math.Pi * (float64(j) + 0.5) / float64(height))
		for i := 0; i < width; i++ {
			k := 3 * (j*width + i)
			w[j*width+i] = colour.Luminance(float64(e.pix[k]), float64(e.pix[k+1]), float64(e.pix[k+2])) * s
		}
	}
	e.dist = NewDistribution2D(w, width, height)
	return e, nil
}

// NewConstantEnvironment builds an environment of the same radiance c in
// every direction (scaled by o.Scale). Its light-sampling strategy draws
// directions uniformly over the sphere.
func NewConstantEnvironment(c brdf.RGB, o EnvironmentOrientation) (*Environment, error) {
	for i, v := range c {
		if !(v >= 0) || math.IsInf(v, 1) {
			return nil, fmt.Errorf("render: constant environment radiance channel %d is %v; expected a finite value >= 0", i, v)
		}
	}
	e, err := newEnvironment(o)
	if err != nil {
		return nil, err
	}
	e.constant = c
	return e, nil
}

func newEnvironment(o EnvironmentOrientation) (*Environment, error) {
	up := o.Up
	if up == (Vec3{}) {
		up = Vec3{0, 0, 1}
	}
	if l := up.Len(); !(l > 0) || math.IsInf(l, 0) {
		return nil, fmt.Errorf("render: environment up axis %v is not a usable direction", o.Up)
	}
	if !(o.Scale >= 0) || math.IsInf(o.Scale, 0) || math.IsNaN(o.RotateDeg) || math.IsInf(o.RotateDeg, 0) {
		return nil, fmt.Errorf("render: environment scale %v or rotation %v is not a finite value (scale must be >= 0)", o.Scale, o.RotateDeg)
	}
	e := &Environment{scale: o.Scale}
	if e.scale == 0 {
		e.scale = 1
	}
	e.up = up.Norm()
	x := Vec3{1, 0, 0}
	if math.Abs(e.up.X) > 0.999999 {
		x = Vec3{0, 1, 0}
	}
	e.a = x.AddScaled(e.up, -x.Dot(e.up)).Norm()
	e.b = e.up.Cross(e.a)
	e.rot = o.RotateDeg * math.Pi / 180
	e.cosR, e.sinR = math.Cos(e.rot), math.Sin(e.rot)
	return e, nil
}

// IsConstant reports whether the environment is a constant colour.
func (e *Environment) IsConstant() bool { return e.pix == nil }

// Size returns the map's width and height in texels (0, 0 for a constant).
func (e *Environment) Size() (w, h int) { return e.width, e.height }

// UV maps a unit world direction to map coordinates in [0,1)^2 (see the
// mapping in the Environment documentation) and returns sin(theta).
func (e *Environment) UV(d Vec3) (u, v, sinTheta float64) {
	cu := clampF64(d.Dot(e.up), -1, 1)
	theta := math.Acos(cu)
	da, db := d.Dot(e.a), d.Dot(e.b)
	// Rotate back by the map rotation: azimuth phi - rot.
	ra := da*e.cosR + db*e.sinR
	rb := db*e.cosR - da*e.sinR
	phi := math.Atan2(rb, ra)
	if phi < 0 {
		phi += 2 * math.Pi
	}
	u = phi / (2 * math.Pi)
	if u >= 1 {
		u = 0
	}
	v = theta / math.Pi
	if v >= 1 {
		v = 0.9999999999999999
	}
	return u, v, math.Sqrt(math.Max(0, 1-cu*cu))
}

// Direction is the inverse of UV: the unit world direction of map
// coordinates (u, v).
func (e *Environment) Direction(u, v float64) Vec3 {
	theta := v * math.Pi
	phi := u*2*math.Pi + e.rot
	st, ct := math.Sin(theta), math.Cos(theta)
	return e.a.Mul(st * math.Cos(phi)).Add(e.b.Mul(st * math.Sin(phi))).Add(e.up.Mul(ct))
}

// Radiance is the radiance arriving along -d, that is seen when looking in
// the unit direction d.
func (e *Environment) Radiance(d Vec3) brdf.RGB {
	if e.pix == nil {
		return brdf.RGB{e.constant[0] * e.scale, e.constant[1] * e.scale, e.constant[2] * e.scale}
	}
	u, v, _ := e.UV(d)
	return e.texel(u, v)
}

func (e *Environment) texel(u, v float64) brdf.RGB {
	i := int(u * float64(e.width))
	j := int(v * float64(e.height))
	if i >= e.width {
		i = e.width - 1
	}
	if j >= e.height {
		j = e.height - 1
	}
	k := 3 * (j*e.width + i)
	return brdf.RGB{float64(e.pix[k]) * e.scale, float64(e.pix[k+1]) * e.scale, float64(e.pix[k+2]) * e.scale}
}

// Sample draws a direction from the environment's light-sampling density
// with two uniform numbers in [0,1): proportional to luminance x sin(theta)
// per texel for a map, uniform over the sphere for a constant. It returns
// the direction, the radiance from it and its density per unit solid angle
// (0 when the sample is unusable, e.g. at a pole).
func (e *Environment) Sample(u0, u1 float64) (d Vec3, L brdf.RGB, pdf float64) {
	if e.pix == nil {
		z := 1 - 2*u0
		r := math.Sqrt(math.Max(0, 1-z*z))
		phi := 2 * math.Pi * u1
		d = e.a.Mul(r * math.Cos(phi)).Add(e.b.Mul(r * math.Sin(phi))).Add(e.up.Mul(z))
		return d, e.Radiance(d), 1 / (4 * math.Pi)
	}
	u, v, puv := e.dist.Sample(u0, u1)
	if puv == 0 {
		return Vec3{}, brdf.RGB{}, 0
	}
	st := math.Sin(v * math.Pi)
	if st <= 0 {
		return Vec3{}, brdf.RGB{}, 0
	}
	d = e.Direction(u, v)
	// Physically Based Rendering, 3rd ed., eq. 14.15 (section 14.2.4):
	// p(omega) = p(u, v) / (2 pi^2 sin theta).
	return d, e.texel(u, v), puv / (2 * math.Pi * math.Pi * st)
}

// PDF is the density per unit solid angle with which Sample returns the
// unit direction d.
func (e *Environment) PDF(d Vec3) float64 {
	if e.pix == nil {
		return 1 / (4 * math.Pi)
	}
	u, v, st := e.UV(d)
	if st <= 0 {
		return 0
	}
	return e.dist.PDF(u, v) / (2 * math.Pi * math.Pi * st)
}

// Power is a figure for the environment's brightness: the integral of
// luminance over the sphere (W/m^2 in luminance units). Light selection and
// diagnostics use it.
func (e *Environment) Power() float64 {
	if e.pix == nil {
		return 4 * math.Pi * colour.Luminance(e.constant[0], e.constant[1], e.constant[2]) * e.scale
	}
	// The distribution's integral is the mean over the unit square of
	// luminance x sin(theta); d omega = 2 pi^2 sin(theta) du dv.
	return e.dist.Integral() * 2 * math.Pi * math.Pi * e.scale
}

func clampF64(x, lo, hi float64) float64 {
	if x < lo {
		return lo
	}
	if x > hi {
		return hi
	}
	return x
}
