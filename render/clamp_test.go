package render

import (
	"context"
	"math"
	"testing"

	"patina/brdf"
)

// causticScene is a smooth metal ball on a rough grey floor lit by one
// lamp: the ball focuses the lamp onto the floor, the textbook
// source of isolated bright pixels in a path tracer.
func causticScene(t testing.TB) (*Scene, Camera, *Lights, []brdf.Params) {
	m := octaSphere(4, Vec3{0, 0, 0.3}, 0.3, false)
	appendQuad(m, 3, 0, 1)
	mats := []brdf.Params{
		{Kind: brdf.Metal, Specular: brdf.RGB{0.95, 0.93, 0.88}, Roughness: 0.05},
		lambert(0.5, 0.5, 0.5),
	}
	lights := &Lights{Lights: []Light{{Kind: SphereLight, Position: Vec3{0.4, -0.3, 1.2}, Radius: 0.1, Intensity: brdf.RGB{1, 1, 1}}}}
	return mustScene(t, m), lookAt(Vec3{0, -2.2, 1.4}, Vec3{0, 0, 0.2}, Vec3{0, 0, 1}, 32, 24, 45), lights, mats
}

func renderClamp(t *testing.T, s Settings) *Film {
	t.Helper()
	sc, cam, lights, mats := causticScene(t)
	s.SPP, s.Seed, s.MaxDepth = 16, 5, 4
	f, err := Render(context.Background(), sc, cam, lights, mats, s)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// TestIndirectClamp checks what the clamp promises: it only ever removes
// light (the same random paths are traced, so every pixel is at most its
// unclamped value), a clamp above every contribution changes nothing, a
// vanishing clamp leaves exactly the light of at most one scattering
// (which must agree with the renderer's direct-only mode within the
// standard error), and a moderate clamp lowers the pixel variance where
// the caustic falls.
func TestIndirectClamp(t *testing.T) {
	free := renderClamp(t, Settings{})
	huge := renderClamp(t, Settings{IndirectClamp: 1e30})
	mid := renderClamp(t, Settings{IndirectClamp: 0.05})
	tiny := renderClamp(t, Settings{IndirectClamp: 1e-12})
	direct := renderClamp(t, Settings{Direct: true})
	a, b := free.RGB(), huge.RGB()
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			t.Fatalf("value %d: a clamp above every contribution changed it from %v to %v", i, a[i], b[i])
		}
	}
	for i, v := range mid.RGB() {
		if v > a[i] {
			t.Fatalf("value %d: the clamp added light (%v > %v unclamped)", i, v, a[i])
		}
	}
	// Over the pixels the clamp touched, the variance falls.
	var vFree, vMid, maxFree, maxMid float64
	touched := 0
	pm := mid.RGB()
	for y := 0; y < free.Height; y++ {
		for x := 0; x < free.Width; x++ {
			i := 3 * (y*free.Width + x)
			if pm[i] == a[i] && pm[i+1] == a[i+1] && pm[i+2] == a[i+2] {
				continue
			}
			touched++
			vf, vm := free.Variance(x, y), mid.Variance(x, y)
			vFree += vf[0] + vf[1] + vf[2]
			vMid += vm[0] + vm[1] + vm[2]
			maxFree, maxMid = math.Max(maxFree, vf[0]), math.Max(maxMid, vm[0])
		}
	}
	t.Logf("clamp 0.05 touched %d of %d pixels; their summed variance %.3g, unclamped %.3g; max %.3g, %.3g", touched, free.Width*free.Height, vMid, vFree, maxMid, maxFree)
	if touched == 0 || !(vMid < 0.25*vFree) {
		t.Errorf("clamp 0.05 touched %d pixels and left their summed variance at %.3g of %.3g unclamped; want under a quarter", touched, vMid, vFree)
	}
	// Light of at most one scattering is untouched: with a vanishing clamp
	// the image estimates the same thing as direct-only rendering
	// (unbiased estimators of one integral; block means agree within
	// 4.5 standard errors, as in TestStrategiesAgree).
	for by := 0; by < 24; by += 8 {
		for bx := 0; bx < 32; bx += 8 {
			mt, vt := tiny.MeanVariance(bx, by, bx+8, by+8)
			md, vd := direct.MeanVariance(bx, by, bx+8, by+8)
			for c := 0; c < 3; c++ {
				if !within(mt[c], md[c], vt[c]+vd[c], 4.5) {
					t.Errorf("block (%d,%d) channel %d: vanishing clamp %.5f, direct only %.5f (standard error %.2g)", bx, by, c, mt[c], md[c], math.Sqrt(vt[c]+vd[c]))
				}
			}
		}
	}
}
