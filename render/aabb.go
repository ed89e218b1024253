package render

import "math"

// AABB is an axis-aligned bounding box in world space. The empty box has
// Min = +Inf and Max = -Inf on every axis, so that extending it by any
// point gives that point's box.
type AABB struct{ Min, Max Vec3 }

// EmptyAABB returns the empty box (the identity of Union).
func EmptyAABB() AABB {
	inf := math.Inf(1)
	return AABB{Vec3{inf, inf, inf}, Vec3{-inf, -inf, -inf}}
}

// IsEmpty reports whether the box contains no point.
func (b AABB) IsEmpty() bool {
	return !(b.Min.X <= b.Max.X && b.Min.Y <= b.Max.Y && b.Min.Z <= b.Max.Z)
}

// Extend returns the smallest box containing b and p.
func (b AABB) Extend(p Vec3) AABB {
	return AABB{
		Vec3{math.Min(b.Min.X, p.X), math.Min(b.Min.Y, p.Y), math.Min(b.Min.Z, p.Z)},
		Vec3{math.Max(b.Max.X, p.X), math.Max(b.Max.Y, p.Y), math.Max(b.Max.Z, p.Z)},
	}
}

// Union returns the smallest box containing a and b.
func (b AABB) Union(o AABB) AABB {
	return AABB{
		Vec3{math.Min(b.Min.X, o.Min.X), math.Min(b.Min.Y, o.Min.Y), math.Min(b.Min.Z, o.Min.Z)},
		Vec3{math.Max(b.Max.X, o.Max.X), math.Max(b.Max.Y, o.Max.Y), math.Max(b.Max.Z, o.Max.Z)},
	}
}

// Size returns Max - Min (zero for the empty box).
func (b AABB) Size() Vec3 {
	if b.IsEmpty() {
		return Vec3{}
	}
	return b.Max.Sub(b.Min)
}

// Centre returns the midpoint of the box.
func (b AABB) Centre() Vec3 { return b.Min.Add(b.Max).Mul(0.5) }

// Diagonal returns the length of the box's diagonal (zero when empty).
func (b AABB) Diagonal() float64 { return b.Size().Len() }

// SurfaceArea returns the area of the box's surface (zero when empty).
func (b AABB) SurfaceArea() float64 {
	d := b.Size()
	return 2 * (d.X*d.Y + d.Y*d.Z + d.Z*d.X)
}

// Contains reports whether p lies inside or on the box.
func (b AABB) Contains(p Vec3) bool {
	return p.X >= b.Min.X && p.X <= b.Max.X && p.Y >= b.Min.Y && p.Y <= b.Max.Y &&
		p.Z >= b.Min.Z && p.Z <= b.Max.Z
}
