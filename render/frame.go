package render

import (
	"math"

	"patina/brdf"
)

// Frame is an orthonormal shading frame: T and B span the tangent plane and
// N is the unit normal, with T x B = N (right-handed). It converts world
// directions to brdf's local frame (z = normal) and back.
type Frame struct{ T, B, N Vec3 }

// NewFrame builds a frame around the unit normal n with the branchless
// construction of Duff, Burgess, Christensen, Hery, Kensler, Liani,
// Villemin, "Building an orthonormal basis, revisited", JCGT 6(1), 2017,
// listing 3: continuous except across n.z = 0's sign flip, and accurate
// for every unit n (no catastrophic cancellation near n = -z).
func NewFrame(n Vec3) Frame {
	sign := math.Copysign(1, n.Z)
	a := -1 / (sign + n.Z)
	b := n.X * n.Y * a
	return Frame{
		T: Vec3{1 + sign*n.X*n.X*a, sign * b, -sign * n.X},
		B: Vec3{b, sign + n.Y*n.Y*a, -n.Y},
		N: n,
	}
}

// ToLocal expresses the world direction v in the frame.
func (f Frame) ToLocal(v Vec3) brdf.Vec {
	return brdf.Vec{X: v.Dot(f.T), Y: v.Dot(f.B), Z: v.Dot(f.N)}
}

// ToWorld expresses the local direction v in world coordinates.
func (f Frame) ToWorld(v brdf.Vec) Vec3 {
	return Vec3{
		f.T.X*v.X + f.B.X*v.Y + f.N.X*v.Z,
		f.T.Y*v.X + f.B.Y*v.Y + f.N.Y*v.Z,
		f.T.Z*v.X + f.B.Z*v.Y + f.N.Z*v.Z,
	}
}
