package render

import "math"

// Vec3 is a world-space vector or point in metres (right-handed frame; the
// capture declares which axis is up). It is a small value type: pass and
// return it by value.
type Vec3 struct{ X, Y, Z float64 }

// V3 builds a Vec3.
func V3(x, y, z float64) Vec3 { return Vec3{x, y, z} }

func (a Vec3) Add(b Vec3) Vec3    { return Vec3{a.X + b.X, a.Y + b.Y, a.Z + b.Z} }
func (a Vec3) Sub(b Vec3) Vec3    { return Vec3{a.X - b.X, a.Y - b.Y, a.Z - b.Z} }
func (a Vec3) Mul(s float64) Vec3 { return Vec3{a.X * s, a.Y * s, a.Z * s} }
func (a Vec3) MulV(b Vec3) Vec3   { return Vec3{a.X * b.X, a.Y * b.Y, a.Z * b.Z} }
func (a Vec3) Neg() Vec3          { return Vec3{-a.X, -a.Y, -a.Z} }
func (a Vec3) Dot(b Vec3) float64 { return a.X*b.X + a.Y*b.Y + a.Z*b.Z }
func (a Vec3) Len() float64       { return math.Sqrt(a.Dot(a)) }
func (a Vec3) Len2() float64      { return a.Dot(a) }
func (a Vec3) AddScaled(b Vec3, s float64) Vec3 {
	return Vec3{a.X + b.X*s, a.Y + b.Y*s, a.Z + b.Z*s}
}

// Cross is the right-handed cross product a x b.
func (a Vec3) Cross(b Vec3) Vec3 {
	return Vec3{a.Y*b.Z - a.Z*b.Y, a.Z*b.X - a.X*b.Z, a.X*b.Y - a.Y*b.X}
}

// Norm returns a unit vector along a (a itself when its length is zero).
func (a Vec3) Norm() Vec3 {
	l := a.Len()
	if l == 0 {
		return a
	}
	return a.Mul(1 / l)
}

// Index returns component i (0 = X, 1 = Y, 2 = Z).
func (a Vec3) Index(i int) float64 {
	switch i {
	case 0:
		return a.X
	case 1:
		return a.Y
	}
	return a.Z
}

// Ray is a half-line O + t D; D is a unit vector in world space.
type Ray struct {
	O, D Vec3
}

// At returns the point at parameter t.
func (r Ray) At(t float64) Vec3 { return r.O.AddScaled(r.D, t) }
