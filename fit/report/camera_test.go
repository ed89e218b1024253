package report

import (
	"context"
	"math"
	"sort"
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

// TestGatherCameraReplicates: with reps copies, film row r*ch+y of the
// gathered film shoots the same ray as row y, and rows past the copies
// have none.
func TestGatherCameraReplicates(t *testing.T) {
	s := jarSmallSetup(t)
	c := s.Capture
	cc, _ := c.CameraByID(c.Photos[0].Camera)
	cam := Pinhole(cc)
	in := make([]bool, cam.Width*cam.Height)
	for i := range in {
		in[i] = i%5 == 1
	}
	g := newGatherCamera(cam, in, 300)
	g.reps = 3
	if w, h := g.Size(); w != g.cw || h != 3*g.ch {
		t.Fatalf("size %dx%d, want %dx%d", w, h, g.cw, 3*g.ch)
	}
	for j := range g.idx {
		x, y := float64(j%g.cw)+0.3, float64(j/g.cw)-0.2
		want, ok := g.Ray(x, y)
		for r := 1; r < 3; r++ {
			got, ok2 := g.Ray(x, y+float64(r*g.ch))
			if !ok || !ok2 || got.O != want.O || got.D != want.D {
				t.Fatalf("film pixel %d copy %d: ray %v %v, want %v %v", j, r, got, ok2, want, ok)
			}
		}
	}
	if _, ok := g.Ray(0, float64(3*g.ch)); ok {
		t.Error("a row past the copies has a ray")
	}
}

// TestPilotMeasuresRenderError: the pilot's replicate variance is the
// error variance of a PilotSPP-sample render of the pixel, checked by
// brute force: over the pilot's pixels, its mean equals the mean squared
// difference between independent PilotSPP renders (other seeds) and a long
// reference render, less the reference's own variance, within four
// standard errors of that difference's mean; and so does the typical
// pixel's.
func TestPilotMeasuresRenderError(t *testing.T) {
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
	w, h := v.cam.Width, v.cam.Height
	valid := make([]bool, w*h)
	for i := range valid {
		valid[i] = v.hit[i]
	}
	g := newGatherCamera(v.cam, interior(valid, v.segment, w, h), PilotPixels)
	g.reps = PilotReplicates
	if len(g.idx) < 200 {
		t.Fatalf("only %d pilot pixels", len(g.idx))
	}
	dec, err := s.Capture.Decoding(pi)
	if err != nil {
		t.Fatal(err)
	}
	clamp := DefaultIndirectClamp * dec.Exposure / s.Scale // as the report renders
	render1 := func(cam render.Camera, spp int, seed uint64) *render.Film {
		f, err := render.Render(context.Background(), s.Scene, cam, ls, s.Params, render.Settings{SPP: spp, MaxDepth: 4, Seed: seed, Threads: 2, IndirectClamp: clamp})
		if err != nil {
			t.Fatal(err)
		}
		return f
	}
	vr := replicateVariance(render1(g, PilotSPP, 5), g)
	one := &gatherCamera{cam: g.cam, idx: g.idx, cw: g.cw, ch: g.ch}
	// Eight independent test renders against one long reference.
	ref := render1(one, 2048, 100)
	var tests []*render.Film
	for k := 0; k < 8; k++ {
		tests = append(tests, render1(one, PilotSPP, uint64(200+k)))
	}
	var sumV, sumD, sumD2 float64
	var ds []float64
	for j := range g.idx {
		x, y := j%g.cw, j/g.cw
		b, _ := ref.Pixel(x, y)
		rv := ref.Variance(x, y)
		var d float64
		for _, test := range tests {
			a, _ := test.Pixel(x, y)
			for c := 0; c < 3; c++ {
				d += ((a[c]-b[c])*(a[c]-b[c]) - rv[c]) / 3 / float64(len(tests))
			}
		}
		sumV += vr[j]
		ds = append(ds, d)
		sumD += d
		sumD2 += d * d
	}
	n := float64(len(g.idx))
	mv, md := sumV/n, sumD/n
	se := math.Sqrt((sumD2/n - md*md) / n)
	// The typical pixel, which the rule uses: the medians' distribution-free
	// confidence intervals (order statistics n/2 -+ sqrt(n), about two
	// binomial standard deviations of the rank) must overlap.
	ci := func(vs []float64) (lo, hi float64) {
		v := append([]float64(nil), vs...)
		sort.Float64s(v)
		k := int(math.Sqrt(float64(len(v))))
		return v[len(v)/2-k], v[len(v)/2+k]
	}
	l1, h1 := ci(vr)
	l2, h2 := ci(ds)
	t.Logf("median replicate variance in [%.4g, %.4g], brute force in [%.4g, %.4g]", l1, h1, l2, h2)
	if h1 < l2 || h2 < l1 {
		t.Errorf("median replicate variance in [%.4g, %.4g], brute force in [%.4g, %.4g]: disjoint", l1, h1, l2, h2)
	}
	t.Logf("%d pixels: mean replicate variance %.4g, brute-force error variance %.4g (standard error %.2g)", len(g.idx), mv, md, se)
	if math.Abs(mv-md) > 4*se {
		t.Errorf("replicate variance %.4g, brute-force error variance %.4g: differ by more than 4 standard errors (%.2g)", mv, md, se)
	}
}

// TestChiSquareMedianRatio checks the Wilson-Hilferty median against the
// median of the chi-square distribution from its density,
// x^(k/2-1) e^(-x/2) / (2^(k/2) Gamma(k/2)) (the definition), integrated by
// Simpson's rule and solved by bisection.
func TestChiSquareMedianRatio(t *testing.T) {
	// Wilson and Hilferty's cube-root form is 0.13 % high at k = 7 (the
	// pilot's) and better above; at k = 3 it is 0.7 % high.
	for _, k := range []int{PilotReplicates - 1, 15, 31} {
		kf := float64(k)
		pdf := func(x float64) float64 {
			return math.Exp((kf/2-1)*math.Log(x) - x/2 - kf/2*math.Ln2 - lgamma(kf/2))
		}
		cdf := func(x float64) float64 {
			const n = 20000
			hh := x / n
			s := pdf(x)
			for i := 1; i < n; i++ {
				c := 2.0
				if i%2 == 1 {
					c = 4
				}
				s += c * pdf(float64(i)*hh)
			}
			return s * hh / 3
		}
		lo, hi := 0.0, 4*kf
		for i := 0; i < 60; i++ {
			mid := (lo + hi) / 2
			if cdf(mid) < 0.5 {
				lo = mid
			} else {
				hi = mid
			}
		}
		want := (lo + hi) / 2 / kf
		if got := chiSquareMedianRatio(k); math.Abs(got-want) > 2e-3 {
			t.Errorf("k = %d: median ratio %.5f, from the density %.5f", k, got, want)
		}
	}
}

func lgamma(x float64) float64 {
	v, _ := math.Lgamma(x)
	return v
}
