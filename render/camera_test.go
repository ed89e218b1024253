package render

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"patina/render/refcheck"
)

// testLenses are calibrations of the kind a capture holds: a typical lens,
// strong barrel, pincushion with tangential terms, and an ideal lens.
var testLenses = []Pinhole{
	{Width: 1600, Height: 1200, Fx: 1210.5, Fy: 1195.25, Cx: 801.3, Cy: 597.8, Dist: [5]float64{-0.12, 0.05, 0.001, -0.0005, -0.01}},
	{Width: 1600, Height: 1200, Fx: 1100, Fy: 1100, Cx: 799.5, Cy: 599.5, Dist: [5]float64{-0.3, 0.12, 0, 0, -0.02}},
	{Width: 4000, Height: 3000, Fx: 3100, Fy: 3080, Cx: 2010, Cy: 1490, Dist: [5]float64{0.08, -0.02, 0.002, 0.0015, 0.003}},
	{Width: 640, Height: 480, Fx: 500, Fy: 500, Cx: 319.5, Cy: 239.5},
}

// withPose gives the lens a pose looking at the origin from p.
func withPose(c Pinhole, p Vec3) Pinhole {
	fwd := p.Neg().Norm()
	right := fwd.Cross(Vec3{0, 0, 1}).Norm()
	down := fwd.Cross(right)
	c.Position = p
	c.Rotation = [3][3]float64{{right.X, down.X, fwd.X}, {right.Y, down.Y, fwd.Y}, {right.Z, down.Z, fwd.Z}}
	return c
}

type cvCase struct {
	K      [3][3]float64 `json:"K"`
	Dist   [5]float64    `json:"dist"`
	R      [3][3]float64 `json:"R"` // world-to-camera
	T      [3]float64    `json:"t"`
	Points [][3]float64  `json:"points"`
	Pixels [][2]float64  `json:"pixels"`
}

// openCVScript projects world points with cv2.projectPoints and undistorts
// pixels with cv2.undistortPointsIter (OpenCV's iterative undistortion, with
// its termination criteria set tight: 1000 iterations or a step below 1e-15).
const openCVScript = `
import json, sys
import numpy as np, cv2
cases = json.load(open(sys.argv[1]))
out = []
for c in cases:
    K = np.array(c["K"], dtype=np.float64)
    d = np.array(c["dist"], dtype=np.float64)
    rvec, _ = cv2.Rodrigues(np.array(c["R"], dtype=np.float64))
    t = np.array(c["t"], dtype=np.float64)
    P = np.array(c["points"], dtype=np.float64).reshape(-1, 1, 3)
    proj, _ = cv2.projectPoints(P, rvec, t, K, d)
    px = np.array(c["pixels"], dtype=np.float64).reshape(-1, 1, 2)
    crit = (cv2.TERM_CRITERIA_COUNT | cv2.TERM_CRITERIA_EPS, 1000, 1e-15)
    und = cv2.undistortPointsIter(px, K, d, None, None, crit)
    out.append({"proj": proj.reshape(-1, 2).tolist(), "undist": und.reshape(-1, 2).tolist()})
json.dump(out, sys.stdout)
`

// TestPinholeAgainstOpenCV checks Project against cv2.projectPoints to 1e-6
// pixels and the undistortion inside Ray against cv2.undistortPointsIter,
// for several lenses and points across the image (OpenCV calib3d, the
// reference implementation of the model the capture format declares).
func TestPinholeAgainstOpenCV(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"cv2": "python3-opencv", "numpy": "python3-numpy"})
	rng := rand.New(rand.NewPCG(21, 22))
	var cases []cvCase
	var cams []Pinhole
	for i, lens := range testLenses {
		c := withPose(lens, Vec3{3 * math.Cos(float64(i)), 3 * math.Sin(float64(i)), 0.7 + 0.2*float64(i)})
		cams = append(cams, c)
		var cc cvCase
		cc.K = [3][3]float64{{c.Fx, 0, c.Cx}, {0, c.Fy, c.Cy}, {0, 0, 1}}
		cc.Dist = c.Dist
		for r := 0; r < 3; r++ {
			for k := 0; k < 3; k++ {
				cc.R[r][k] = c.Rotation[k][r]
			}
		}
		tv := c.toCamera(c.Position).Neg()
		cc.T = [3]float64{tv.X, tv.Y, tv.Z}
		for k := 0; k < 40; k++ {
			// Points at normalised radius up to 0.6 in front of the camera.
			x, y, z := 1.2*(rng.Float64()-0.5), 0.9*(rng.Float64()-0.5), 0.5+3*rng.Float64()
			p := c.Position.Add(c.toWorld(Vec3{x * z, y * z, z}))
			cc.Points = append(cc.Points, [3]float64{p.X, p.Y, p.Z})
			cc.Pixels = append(cc.Pixels, [2]float64{rng.Float64() * float64(c.Width-1), rng.Float64() * float64(c.Height-1)})
		}
		cc.Pixels = append(cc.Pixels, [2]float64{0, 0}, [2]float64{float64(c.Width - 1), float64(c.Height - 1)}, [2]float64{c.Cx, c.Cy})
		cases = append(cases, cc)
	}
	in, _ := json.Marshal(cases)
	path := filepath.Join(t.TempDir(), "cases.json")
	if err := os.WriteFile(path, in, 0o644); err != nil {
		t.Fatal(err)
	}
	var out []struct {
		Proj   [][2]float64 `json:"proj"`
		Undist [][2]float64 `json:"undist"`
	}
	if err := json.Unmarshal(refcheck.RunPython(t, openCVScript, path), &out); err != nil {
		t.Fatal(err)
	}
	for i, c := range cams {
		for k, p := range cases[i].Points {
			u, v, ok := c.Project(Vec3{p[0], p[1], p[2]})
			want := out[i].Proj[k]
			if !ok || math.Abs(u-want[0]) > 1e-6 || math.Abs(v-want[1]) > 1e-6 {
				t.Errorf("lens %d point %d: Project (%v, %v, %v), cv2.projectPoints %v", i, k, u, v, ok, want)
			}
		}
		for k, px := range cases[i].Pixels {
			x, y, ok := c.Undistort(px[0], px[1])
			want := out[i].Undist[k]
			// Compared in pixels: normalised difference times the focal length.
			if !ok || math.Abs(x-want[0])*c.Fx > 1e-6 || math.Abs(y-want[1])*c.Fy > 1e-6 {
				t.Errorf("lens %d pixel %v: Undistort (%v, %v, %v), cv2.undistortPointsIter %v", i, px, x, y, ok, want)
			}
			// Ray is the direction of (x', y', 1) rotated to world.
			r, ok := c.Ray(px[0], px[1])
			d := c.toCamera(r.D)
			if !ok || r.O != c.Position || math.Abs(d.X/d.Z-want[0])*c.Fx > 1e-6 || math.Abs(d.Y/d.Z-want[1])*c.Fy > 1e-6 {
				t.Errorf("lens %d pixel %v: Ray %+v", i, px, r)
			}
		}
	}
}

// TestRayProjectRoundTrip: Ray inverts Project to the documented 1e-9
// pixels over the whole image of each lens.
func TestRayProjectRoundTrip(t *testing.T) {
	for i, lens := range testLenses {
		c := withPose(lens, Vec3{2, -1, 0.5})
		worst := 0.0
		for py := 0.0; py < float64(c.Height); py += float64(c.Height-1) / 30 {
			for px := 0.0; px < float64(c.Width); px += float64(c.Width-1) / 40 {
				r, ok := c.Ray(px, py)
				if !ok {
					t.Fatalf("lens %d: no ray at (%v, %v)", i, px, py)
				}
				if math.Abs(r.D.Len()-1) > 1e-12 {
					t.Fatalf("lens %d: direction not unit", i)
				}
				u, v, ok := c.Project(r.At(2.5))
				if !ok {
					t.Fatalf("lens %d: ray point does not project", i)
				}
				worst = max(worst, math.Abs(u-px), math.Abs(v-py))
			}
		}
		if worst > 1e-9 {
			t.Errorf("lens %d: round trip error %g px", i, worst)
		}
	}
}

// TestValidImageCircle: with strong barrel distortion the model folds back
// beyond its turning radius; Project refuses points beyond it and Ray
// refuses pixels beyond its image (a clean failure, not a wrong ray).
func TestValidImageCircle(t *testing.T) {
	// k1 = -0.5: r (1 - 0.5 r^2) turns at r = sqrt(2/3), where the distorted
	// radius is sqrt(2/3) * 2/3 = 0.5443 (the maximum).
	c := withPose(Pinhole{Width: 1000, Height: 1000, Fx: 1000, Fy: 1000, Cx: 499.5, Cy: 499.5, Dist: [5]float64{-0.5, 0, 0, 0, 0}}, Vec3{0, -3, 0})
	rTurn := math.Sqrt(2.0 / 3)
	rMaxPx := rTurn * 2 / 3 * 1000
	for _, rp := range []float64{0.5 * rMaxPx, 0.99 * rMaxPx} {
		if _, ok := c.Ray(c.Cx+rp, c.Cy); !ok {
			t.Errorf("no ray at %v px from the centre (inside the valid circle)", rp)
		}
	}
	for _, rp := range []float64{1.01 * rMaxPx, 3 * rMaxPx} {
		if _, ok := c.Ray(c.Cx+rp, c.Cy); ok {
			t.Errorf("a ray at %v px from the centre, beyond the valid circle %v px", rp, rMaxPx)
		}
	}
	in := c.Position.Add(c.toWorld(Vec3{0.95 * rTurn, 0, 1}))
	out := c.Position.Add(c.toWorld(Vec3{1.05 * rTurn, 0, 1}))
	behind := c.Position.Add(c.toWorld(Vec3{0, 0, -1}))
	if _, _, ok := c.Project(in); !ok {
		t.Error("point inside the turning radius not projected")
	}
	if _, _, ok := c.Project(out); ok {
		t.Error("point beyond the turning radius projected")
	}
	if _, _, ok := c.Project(behind); ok {
		t.Error("point behind the camera projected")
	}
	if _, ok := c.Ray(math.NaN(), 0); ok {
		t.Error("ray for a NaN pixel")
	}
}

// TestPinholeConvention pins the worked example of CAMERA.md.
func TestPinholeConvention(t *testing.T) {
	// Camera at (0, -2, 0.5) looking along +Y with Z up: camera x = world +X,
	// camera y (down) = world -Z, camera z (forward) = world +Y.
	c := Pinhole{
		Width: 640, Height: 480, Fx: 500, Fy: 500, Cx: 319.5, Cy: 239.5,
		Position: Vec3{0, -2, 0.5},
		Rotation: [3][3]float64{{1, 0, 0}, {0, 0, 1}, {0, -1, 0}},
	}
	// The world point (0.2, 0, 0.4): camera coordinates (0.2, 0.1, 2), so
	// u = 500 * 0.1 + 319.5 = 369.5, v = 500 * 0.05 + 239.5 = 264.5.
	u, v, ok := c.Project(Vec3{0.2, 0, 0.4})
	if !ok || math.Abs(u-369.5) > 1e-12 || math.Abs(v-264.5) > 1e-12 {
		t.Fatalf("Project = %v %v %v, want 369.5 264.5", u, v, ok)
	}
	// With k1 = -0.1: r^2 = 0.0125, factor 1 - 0.00125, u = 369.4375, v = 264.46875.
	c.Dist[0] = -0.1
	u, v, _ = c.Project(Vec3{0.2, 0, 0.4})
	if math.Abs(u-369.4375) > 1e-12 || math.Abs(v-264.46875) > 1e-12 {
		t.Fatalf("distorted Project = %v %v", u, v)
	}
	// The top-left pixel centre (0, 0) looks left of and above the axis.
	r, _ := c.Ray(0, 0)
	if !(r.D.X < 0 && r.D.Z > 0 && r.D.Y > 0) {
		t.Fatalf("Ray(0,0) = %+v", r.D)
	}
}

func TestOrbitCamera(t *testing.T) {
	o := Orbit{Target: Vec3{1, 2, 3}, Azimuth: 90, Elevation: 30, Distance: 4, VFOV: 40, Width: 320, Height: 240}
	p := o.Pinhole()
	// Azimuth 90 about +Z is the +Y side; elevation 30 raises it.
	want := Vec3{1, 2 + 4*math.Cos(math.Pi/6), 3 + 4*math.Sin(math.Pi/6)}
	if p.Position.Sub(want).Len() > 1e-12 {
		t.Fatalf("position %v, want %v", p.Position, want)
	}
	// The target images to the principal point; the top edge's centre is
	// VFOV/2 above the axis.
	u, v, ok := o.Project(o.Target)
	if !ok || math.Abs(u-159.5) > 1e-9 || math.Abs(v-119.5) > 1e-9 {
		t.Fatalf("target at %v %v", u, v)
	}
	r, _ := o.Ray(159.5, -0.5)
	axis := o.Target.Sub(p.Position).Norm()
	if ang := math.Acos(r.D.Dot(axis)) * 180 / math.Pi; math.Abs(ang-20) > 1e-9 {
		t.Fatalf("half field of view %v degrees", ang)
	}
	// Up in the world is up in the image: a point above the target has a smaller v.
	_, v2, _ := o.Project(o.Target.Add(Vec3{0, 0, 0.1}))
	if !(v2 < v) {
		t.Fatal("world up is not image up")
	}
	// Rotation is orthonormal and right-handed.
	R := p.Rotation
	cx := Vec3{R[0][0], R[1][0], R[2][0]}
	cy := Vec3{R[0][1], R[1][1], R[2][1]}
	cz := Vec3{R[0][2], R[1][2], R[2][2]}
	if cx.Cross(cy).Sub(cz).Len() > 1e-12 || math.Abs(cx.Dot(cy)) > 1e-12 {
		t.Fatal("rotation not right-handed orthonormal")
	}
	// Looking straight down still gives a valid frame.
	top := Orbit{Target: Vec3{}, Elevation: 90, Distance: 2, VFOV: 30, Width: 10, Height: 10}.Pinhole()
	if r, ok := top.Ray(4.5, 4.5); !ok || r.D.Sub(Vec3{0, 0, -1}).Len() > 1e-9 {
		t.Fatalf("top view ray %+v", r)
	}
}
