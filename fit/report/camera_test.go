package report

import (
	"context"
	"testing"

	"patina/assets/capture"
	"patina/assets/materials"
	"patina/assets/mesh"
	"patina/render"
)

// jarSmallSetup loads the jar-small fixture with its true materials.
func jarSmallSetup(t *testing.T) *Setup {
	t.Helper()
	c, err := capture.Load(jarSmall)
	if err != nil {
		t.Fatal(err)
	}
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	if err != nil {
		t.Fatal(err)
	}
	mf, err := materials.Load(writeMaterials(t, t.TempDir(), jarSmallTruth()))
	if err != nil {
		t.Fatal(err)
	}
	s, err := NewSetup(c, m, mf, 2)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// TestMaskedRenderEqualsFullRender: tracing only the pixels near the mesh
// changes no traced pixel, bit for bit (every sample depends on the seed,
// the pixel and the sample index only: the ARCHITECTURE's randomness rule),
// and the pixels left out are black in the full render too (no environment).
func TestMaskedRenderEqualsFullRender(t *testing.T) {
	s := jarSmallSetup(t)
	pi := s.Capture.PhotosByUse(capture.UseHoldout)[0]
	v, err := s.castView(context.Background(), pi, 2)
	if err != nil {
		t.Fatal(err)
	}
	lights, err := PhotoLights(s.Capture, pi)
	if err != nil {
		t.Fatal(err)
	}
	ls := &render.Lights{Lights: lights}
	set := render.Settings{SPP: 4, MaxDepth: 4, Seed: 9, Threads: 2}
	full, err := render.Render(context.Background(), s.Scene, v.cam, ls, s.Params, set)
	if err != nil {
		t.Fatal(err)
	}
	w, h := v.cam.Width, v.cam.Height
	on := dilate(v.hit, w, h)
	part, err := render.Render(context.Background(), s.Scene, &maskedCamera{cam: v.cam, on: on}, ls, s.Params, set)
	if err != nil {
		t.Fatal(err)
	}
	fp, pp := full.RGB(), part.RGB()
	traced, left := 0, 0
	for i := 0; i < w*h; i++ {
		for c := 0; c < 3; c++ {
			switch {
			case on[i] && fp[3*i+c] != pp[3*i+c]:
				t.Fatalf("pixel (%d, %d) channel %d: %v masked, %v full", i%w, i/w, c, pp[3*i+c], fp[3*i+c])
			case !on[i] && (pp[3*i+c] != 0 || fp[3*i+c] != 0):
				t.Fatalf("pixel (%d, %d) away from the mesh: %v masked, %v full, want 0", i%w, i/w, pp[3*i+c], fp[3*i+c])
			}
		}
		if on[i] {
			traced++
		} else {
			left++
		}
	}
	if traced == 0 || left == 0 {
		t.Errorf("%d pixels traced, %d left out: the fixture should have both", traced, left)
	}
}

// TestGatherCamera: film pixel j of the gathered film shoots the ray of the
// camera's pixel idx[j] at the same offset inside the pixel, and film
// pixels past the gathered ones have no ray.
func TestGatherCamera(t *testing.T) {
	s := jarSmallSetup(t)
	c := s.Capture
	cc, _ := c.CameraByID(c.Photos[0].Camera)
	cam := Pinhole(cc)
	in := make([]bool, cam.Width*cam.Height)
	for i := range in {
		in[i] = i%7 == 3
	}
	g := newGatherCamera(cam, in, 200)
	if len(g.idx) == 0 || len(g.idx) > 200 {
		t.Fatalf("%d pixels gathered, want 1..200", len(g.idx))
	}
	for j, i := range g.idx {
		if !in[i] {
			t.Fatalf("gathered pixel %d was not marked", i)
		}
		for _, off := range [][2]float64{{-0.5, -0.5}, {0, 0}, {0.49, -0.2}} {
			got, ok := g.Ray(float64(j%g.cw)+off[0], float64(j/g.cw)+off[1])
			want, ok2 := cam.Ray(float64(int(i)%cam.Width)+off[0], float64(int(i)/cam.Width)+off[1])
			// Equal up to the rounding of the offset's round trip.
			if ok != ok2 || got.O.Sub(want.O).Len() > 1e-12 || got.D.Sub(want.D).Len() > 1e-12 {
				t.Fatalf("film pixel %d offset %v: ray %v %v, want %v %v", j, off, got, ok, want, ok2)
			}
		}
	}
	if w, h := g.Size(); w*h > len(g.idx) {
		if _, ok := g.Ray(float64(len(g.idx)%g.cw), float64(len(g.idx)/g.cw)); ok {
			t.Error("a film pixel past the gathered ones has a ray")
		}
	}
}
