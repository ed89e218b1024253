package render

import (
	"context"
	"errors"
	"image"
	"math"
	"reflect"
	"testing"
)

func castScene(t testing.TB) (*Scene, Pinhole) {
	s, err := NewScene(displacedSphere(40), 0)
	if err != nil {
		t.Fatal(err)
	}
	c := withPose(testLenses[0], Vec3{0.3, -3.2, 0.5})
	c.Width, c.Height = 160, 120
	c.Fx, c.Fy, c.Cx, c.Cy = 150, 150, 79.5, 59.5
	return s, c
}

// TestCastMatchesIntersect: each pixel holds the closest hit of the ray
// through its centre, whatever the thread count and region.
func TestCastMatchesIntersect(t *testing.T) {
	s, c := castScene(t)
	full := image.Rect(0, 0, c.Width, c.Height)
	g1, err := Cast(context.Background(), s, c, full, 1)
	if err != nil {
		t.Fatal(err)
	}
	g3, err := Cast(context.Background(), s, c, full, 3)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(g1, g3) {
		t.Fatal("Cast depends on the thread count")
	}
	hits := 0
	for y := 0; y < c.Height; y++ {
		for x := 0; x < c.Width; x++ {
			i := g1.Index(x, y)
			r, _ := c.Ray(float64(x), float64(y))
			var h Hit
			ok := s.Intersect(r, math.Inf(1), &h)
			if ok != g1.Hit[i] {
				t.Fatalf("pixel %d %d: hit %v, Intersect %v", x, y, g1.Hit[i], ok)
			}
			if !ok {
				if g1.Tri[i] != -1 || g1.Segment[i] != -1 || !math.IsInf(float64(g1.Depth[i]), 1) {
					t.Fatalf("pixel %d %d: miss not marked", x, y)
				}
				continue
			}
			hits++
			if g1.Pos[i] != h.P || g1.Ns[i] != h.Ns || g1.Ng[i] != h.Ng || g1.Tri[i] != h.Tri || g1.Segment[i] != h.Segment || g1.Depth[i] != float32(h.T) {
				t.Fatalf("pixel %d %d differs from Intersect", x, y)
			}
			// The hit point projects back to the pixel centre.
			u, v, _ := c.Project(h.P)
			if math.Abs(u-float64(x)) > 1e-6 || math.Abs(v-float64(y)) > 1e-6 {
				t.Fatalf("pixel %d %d: hit projects to %v %v", x, y, u, v)
			}
		}
	}
	if hits < c.Width*c.Height/4 || hits == c.Width*c.Height {
		t.Fatalf("%d hits", hits)
	}
	// A sub-region equals the same pixels of the full cast.
	sub := image.Rect(37, 21, 101, 77)
	gs, err := Cast(context.Background(), s, c, sub, 2)
	if err != nil {
		t.Fatal(err)
	}
	if gs.Width != 64 || gs.Height != 56 || gs.Origin != sub.Min {
		t.Fatalf("region %v: %d x %d at %v", sub, gs.Width, gs.Height, gs.Origin)
	}
	for y := sub.Min.Y; y < sub.Max.Y; y++ {
		for x := sub.Min.X; x < sub.Max.X; x++ {
			if gs.Pos[gs.Index(x, y)] != g1.Pos[g1.Index(x, y)] || gs.Tri[gs.Index(x, y)] != g1.Tri[g1.Index(x, y)] {
				t.Fatalf("region pixel %d %d differs", x, y)
			}
		}
	}
}

func TestCastCancel(t *testing.T) {
	s, c := castScene(t)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Cast(ctx, s, c, image.Rect(0, 0, c.Width, c.Height), 2); !errors.Is(err, context.Canceled) {
		t.Fatalf("err %v", err)
	}
	if _, err := Cast(context.Background(), s, c, image.Rect(0, 0, 1<<15, 1<<15), 2); err == nil {
		t.Fatal("oversized region accepted")
	}
	o := Orbit{Target: Vec3{}, Azimuth: 30, Elevation: 20, Distance: 3, VFOV: 40, Width: 40, Height: 30}
	g, err := Cast(context.Background(), s, o, image.Rect(0, 0, 40, 30), 0)
	if err != nil || !g.Hit[g.Index(20, 15)] {
		t.Fatalf("orbit cast: %v", err)
	}
}
