package brdf

import "math"

// Vec is a direction in the local shading frame: z is the surface normal,
// x and y span the tangent plane. The package never sees world space; the
// renderer converts through its shading frame, so a world vector cannot reach
// the reflectance model by mistake.
//
// Functions of this package expect unit vectors and do not renormalise them.
type Vec struct{ X, Y, Z float64 }

// Dot returns the dot product of a and b.
//
// The products are rounded before they are summed (no fused multiply-add),
// so a.Dot(b) == b.Dot(a) exactly on every architecture.
func (a Vec) Dot(b Vec) float64 { return float64(a.X*b.X) + float64(a.Y*b.Y) + float64(a.Z*b.Z) }

// Add returns a + b.
func (a Vec) Add(b Vec) Vec { return Vec{a.X + b.X, a.Y + b.Y, a.Z + b.Z} }

// Sub returns a - b.
func (a Vec) Sub(b Vec) Vec { return Vec{a.X - b.X, a.Y - b.Y, a.Z - b.Z} }

// Scale returns s * a.
func (a Vec) Scale(s float64) Vec { return Vec{s * a.X, s * a.Y, s * a.Z} }

// Cross returns the cross product a x b.
func (a Vec) Cross(b Vec) Vec {
	return Vec{a.Y*b.Z - a.Z*b.Y, a.Z*b.X - a.X*b.Z, a.X*b.Y - a.Y*b.X}
}

// Len returns the Euclidean length of a.
func (a Vec) Len() float64 { return math.Sqrt(a.Dot(a)) }

// Normalize returns a scaled to unit length; the zero vector stays zero.
func (a Vec) Normalize() Vec {
	l := a.Len()
	if l == 0 {
		return a
	}
	return a.Scale(1 / l)
}

// Reflect returns the mirror image of a about the unit vector n:
// 2 (a.n) n - a. Both point away from the surface.
func (a Vec) Reflect(n Vec) Vec { return n.Scale(2 * a.Dot(n)).Sub(a) }

// CosTheta returns the cosine of the angle between a and the normal (a.Z).
func (a Vec) CosTheta() float64 { return a.Z }

// Spherical returns the unit direction with polar angle theta from the
// normal and azimuth phi from the x axis, both in radians.
func Spherical(theta, phi float64) Vec {
	st, ct := math.Sincos(theta)
	sp, cp := math.Sincos(phi)
	return Vec{st * cp, st * sp, ct}
}
