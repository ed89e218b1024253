package render

import "math"

// Camera maps pixels to rays and world points to pixels. Pixel coordinates
// are continuous with (0, 0) at the centre of the top-left pixel, x to the
// right and y down, so the pixel (i, j) covers [i-0.5, i+0.5] x [j-0.5, j+0.5].
type Camera interface {
	// Ray returns the world-space ray through pixel (px, py); false when the
	// pixel has no ray (outside the valid region of the lens model).
	Ray(px, py float64) (Ray, bool)
	// Project returns the pixel a world point images to; false when the
	// point is behind the camera or outside the lens model's valid region.
	// The pixel may lie outside the image.
	Project(p Vec3) (px, py float64, ok bool)
	// Size returns the image size in pixels.
	Size() (w, h int)
}

// Pinhole is the calibrated camera of a capture: the pinhole model with
// Brown-Conrady distortion with the equations and coefficient order of
// OpenCV's calib3d documentation (camera x right, y down, z forward):
//
//	x' = X/Z, y' = Y/Z, r^2 = x'^2 + y'^2
//	x'' = x' (1 + k1 r^2 + k2 r^4 + k3 r^6) + 2 p1 x' y' + p2 (r^2 + 2 x'^2)
//	y'' = y' (1 + k1 r^2 + k2 r^4 + k3 r^6) + p1 (r^2 + 2 y'^2) + 2 p2 x' y'
//	u = fx x'' + cx, v = fy y'' + cy
//
// with (X, Y, Z) = Rotation^T (P - Position). OpenCV's pixel coordinates are
// the same as Patina's: integers at pixel centres. See CAMERA.md for a
// worked example.
type Pinhole struct {
	Width, Height  int     // image size, pixels
	Fx, Fy, Cx, Cy float64 // focal lengths and principal point, pixels
	// Dist holds k1, k2, p1, p2, k3 in OpenCV's order; all zero for an
	// ideal lens.
	Dist [5]float64
	// Position is the camera centre in world coordinates, metres.
	Position Vec3
	// Rotation is camera-to-world: its columns are the camera's x (right),
	// y (down) and z (forward) axes in world coordinates.
	Rotation [3][3]float64
}

// Undistortion settings: Ray solves the distortion equations by Newton's
// method to undistortTolerance pixels within undistortMaxIter steps.
const (
	undistortTolerance = 1e-9
	undistortMaxIter   = 30
)

// Size returns the image size.
func (c Pinhole) Size() (int, int) { return c.Width, c.Height }

func (c *Pinhole) toWorld(v Vec3) Vec3 {
	r := &c.Rotation
	return Vec3{
		r[0][0]*v.X + r[0][1]*v.Y + r[0][2]*v.Z,
		r[1][0]*v.X + r[1][1]*v.Y + r[1][2]*v.Z,
		r[2][0]*v.X + r[2][1]*v.Y + r[2][2]*v.Z,
	}
}

func (c *Pinhole) toCamera(v Vec3) Vec3 {
	r := &c.Rotation
	return Vec3{
		r[0][0]*v.X + r[1][0]*v.Y + r[2][0]*v.Z,
		r[0][1]*v.X + r[1][1]*v.Y + r[2][1]*v.Z,
		r[0][2]*v.X + r[1][2]*v.Y + r[2][2]*v.Z,
	}
}

// distort applies the OpenCV distortion to normalised coordinates.
func (c *Pinhole) distort(x, y float64) (float64, float64) {
	k1, k2, p1, p2, k3 := c.Dist[0], c.Dist[1], c.Dist[2], c.Dist[3], c.Dist[4]
	r2 := x*x + y*y
	radial := 1 + r2*(k1+r2*(k2+r2*k3))
	return x*radial + 2*p1*x*y + p2*(r2+2*x*x), y*radial + p1*(r2+2*y*y) + 2*p2*x*y
}

// distortJacobian returns the distorted point and the Jacobian d(x”,y”)/d(x',y').
func (c *Pinhole) distortJacobian(x, y float64) (dx, dy, jxx, jxy, jyx, jyy float64) {
	k1, k2, p1, p2, k3 := c.Dist[0], c.Dist[1], c.Dist[2], c.Dist[3], c.Dist[4]
	r2 := x*x + y*y
	radial := 1 + r2*(k1+r2*(k2+r2*k3))
	dRadial := k1 + r2*(2*k2+3*k3*r2) // d radial / d r2
	dx = x*radial + 2*p1*x*y + p2*(r2+2*x*x)
	dy = y*radial + p1*(r2+2*y*y) + 2*p2*x*y
	jxx = radial + 2*x*x*dRadial + 2*p1*y + 6*p2*x
	jxy = 2*x*y*dRadial + 2*p1*x + 2*p2*y
	jyx = 2*x*y*dRadial + 2*p1*x + 2*p2*y
	jyy = radial + 2*y*y*dRadial + 6*p1*y + 2*p2*x
	return
}

// radialMonotone reports whether the radial distortion r (1 + k1 r^2 +
// k2 r^4 + k3 r^6) is increasing on [0, sqrt(r2)]: beyond its first turning
// point the lens model folds back and a pixel has several pre-images, so
// that region is outside the model's valid image circle. The derivative is
// g(s) = 1 + 3 k1 s + 5 k2 s^2 + 7 k3 s^3 with s = r^2; it is positive on
// [0, r2] when it is positive at both ends and at its interior critical points.
func (c *Pinhole) radialMonotone(r2 float64) bool {
	k1, k2, k3 := c.Dist[0], c.Dist[1], c.Dist[4]
	g := func(s float64) float64 { return 1 + s*(3*k1+s*(5*k2+s*7*k3)) }
	if !(g(r2) > 0) {
		return false
	}
	// g'(s) = 3 k1 + 10 k2 s + 21 k3 s^2.
	a, b, cc := 21*k3, 10*k2, 3*k1
	var roots [2]float64
	nr := 0
	if a == 0 {
		if b != 0 {
			roots[0] = -cc / b
			nr = 1
		}
	} else if disc := b*b - 4*a*cc; disc >= 0 {
		sq := math.Sqrt(disc)
		roots[0], roots[1] = (-b-sq)/(2*a), (-b+sq)/(2*a)
		nr = 2
	}
	for i := 0; i < nr; i++ {
		if s := roots[i]; s > 0 && s < r2 && !(g(s) > 0) {
			return false
		}
	}
	return true
}

// Project implements Camera.
func (c Pinhole) Project(p Vec3) (float64, float64, bool) {
	q := c.toCamera(p.Sub(c.Position))
	if !(q.Z > 0) {
		return 0, 0, false
	}
	x, y := q.X/q.Z, q.Y/q.Z
	if !c.radialMonotone(x*x + y*y) {
		return 0, 0, false
	}
	xd, yd := c.distort(x, y)
	return c.Fx*xd + c.Cx, c.Fy*yd + c.Cy, true
}

// Undistort returns the normalised image coordinates (x', y') = (X/Z, Y/Z)
// whose distorted projection is the pixel (px, py): Newton's method from
// the distorted point, to undistortTolerance pixels within undistortMaxIter
// iterations. It fails (false) when the iteration does not converge or the
// solution lies outside the lens model's valid image circle.
func (c *Pinhole) Undistort(px, py float64) (x, y float64, ok bool) {
	if !(c.Fx != 0 && c.Fy != 0) {
		return 0, 0, false
	}
	xd, yd := (px-c.Cx)/c.Fx, (py-c.Cy)/c.Fy
	if math.IsNaN(xd) || math.IsNaN(yd) || math.IsInf(xd, 0) || math.IsInf(yd, 0) {
		return 0, 0, false
	}
	if c.Dist == [5]float64{} {
		return xd, yd, true
	}
	x, y = xd, yd
	tol := undistortTolerance
	for it := 0; it < undistortMaxIter; it++ {
		fx, fy, jxx, jxy, jyx, jyy := c.distortJacobian(x, y)
		ex, ey := fx-xd, fy-yd
		if math.Abs(ex*c.Fx) <= tol && math.Abs(ey*c.Fy) <= tol {
			if det := jxx*jyy - jxy*jyx; det > 0 && c.radialMonotone(x*x+y*y) {
				return x, y, true
			}
			return 0, 0, false
		}
		det := jxx*jyy - jxy*jyx
		if !(det > 0) {
			return 0, 0, false
		}
		x -= (jyy*ex - jxy*ey) / det
		y -= (-jyx*ex + jxx*ey) / det
		if math.IsNaN(x) || math.IsNaN(y) || x*x+y*y > 1e6 {
			return 0, 0, false
		}
	}
	return 0, 0, false
}

// Ray implements Camera: the ray from the camera centre through pixel
// (px, py), with the distortion inverted by Undistort.
func (c Pinhole) Ray(px, py float64) (Ray, bool) {
	x, y, ok := c.Undistort(px, py)
	if !ok {
		return Ray{}, false
	}
	d := c.toWorld(Vec3{x, y, 1}).Norm()
	return Ray{O: c.Position, D: d}, true
}

// Orbit is a free-viewing camera that looks at Target from a point given by
// azimuth and elevation around the Up axis, without lens distortion.
//
// With Up = +Z, azimuth 0 places the camera on the +X side of the target and
// azimuth 90 on the +Y side; elevation 90 is straight above. In general the
// azimuth is measured from the projection of world +X onto the plane
// perpendicular to Up (world +Y when Up is near X), counter-clockwise seen
// from above (right-handed about Up).
type Orbit struct {
	Target             Vec3
	Azimuth, Elevation float64 // degrees
	Distance           float64 // metres from Target
	VFOV               float64 // vertical field of view, degrees
	Up                 Vec3    // zero means +Z
	Width, Height      int
}

// Pinhole returns the equivalent calibrated camera: square pixels, the
// principal point at the image centre ((W-1)/2, (H-1)/2), fy from VFOV.
func (o Orbit) Pinhole() Pinhole {
	up := o.Up.Norm()
	if up.Len2() == 0 {
		up = Vec3{0, 0, 1}
	}
	ref := Vec3{1, 0, 0}
	if math.Abs(up.X) > 0.9 {
		ref = Vec3{0, 1, 0}
	}
	e1 := ref.Sub(up.Mul(ref.Dot(up))).Norm()
	e2 := up.Cross(e1)
	az, el := o.Azimuth*math.Pi/180, o.Elevation*math.Pi/180
	dir := e1.Mul(math.Cos(el) * math.Cos(az)).Add(e2.Mul(math.Cos(el) * math.Sin(az))).Add(up.Mul(math.Sin(el)))
	pos := o.Target.Add(dir.Mul(o.Distance))
	fwd := dir.Neg()
	right := fwd.Cross(up)
	if right.Len2() < 1e-20 {
		// Looking along Up: take the horizontal direction of azimuth+90 as right.
		right = e1.Mul(-math.Sin(az)).Add(e2.Mul(math.Cos(az)))
		if el > 0 {
			right = right.Neg()
		}
	}
	right = right.Norm()
	down := fwd.Cross(right)
	f := float64(o.Height) / 2 / math.Tan(o.VFOV*math.Pi/360)
	return Pinhole{
		Width: o.Width, Height: o.Height,
		Fx: f, Fy: f, Cx: float64(o.Width-1) / 2, Cy: float64(o.Height-1) / 2,
		Position: pos,
		Rotation: [3][3]float64{
			{right.X, down.X, fwd.X},
			{right.Y, down.Y, fwd.Y},
			{right.Z, down.Z, fwd.Z},
		},
	}
}

// Ray implements Camera.
func (o Orbit) Ray(px, py float64) (Ray, bool) { return o.Pinhole().Ray(px, py) }

// Project implements Camera.
func (o Orbit) Project(p Vec3) (float64, float64, bool) { return o.Pinhole().Project(p) }

// Size implements Camera.
func (o Orbit) Size() (int, int) { return o.Width, o.Height }
