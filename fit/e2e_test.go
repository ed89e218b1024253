package fit

import (
	"context"
	"encoding/json"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/assets/capture"
	"patina/brdf"
)

// The end-to-end scene: a box (segment "box") standing on a card (segment
// "card", the calibration target) photographed by three cameras under point
// and directional lights. Everything is planar, so the test's own ray
// casting (slab test for the box, Kay and Kajiya 1986; ray-plane for the
// card) and the mesh agree exactly, and the photos are rendered with the
// model written out in synth_test.go, written as 16-bit linear PNG.

const (
	boxHalf   = 0.15
	boxHeight = 0.3
	cardHalf  = 0.6
	trueScale = 1.6 // the photos are this much brighter than the capture's light values say
)

var (
	boxTruth  = truthParams(brdf.Dielectric, [3]float64{0.55, 0.25, 0.1}, [3]float64{0.05, 0.05, 0.05}, 0.3)
	cardTruth = truthParams(brdf.Dielectric, [3]float64{0.5, 0.45, 0.4}, [3]float64{0.04, 0.04, 0.04}, 0.6)
)

type e2eLight struct {
	id    string
	point bool
	pos   v3
	power [3]float64 // true value; the capture file gets power / trueScale
}

var e2eLights = []e2eLight{
	{"l1", true, v3{-0.6, 0.5, 0.6}, [3]float64{0.5, 0.5, 0.5}},
	{"l2", true, v3{0.7, 0.6, 0.5}, [3]float64{0.45, 0.45, 0.5}},
	{"l3", true, v3{0.1, -0.8, 0.6}, [3]float64{0.5, 0.48, 0.45}},
	{"l4", true, v3{-0.7, -0.5, 0.4}, [3]float64{0.4, 0.4, 0.4}},
	{"sun", false, v3{0.3, -0.2, 1}, [3]float64{0.7, 0.7, 0.7}},
}

type e2eCam struct {
	id  string
	pos v3
}

var e2eCams = []e2eCam{{"c1", v3{0.9, -0.7, 0.7}}, {"c2", v3{-0.8, -0.6, 0.9}}, {"c3", v3{0.1, 0.9, 0.8}}}

// The photo size; BenchmarkBuildObservationsFull raises it to 1280x960.
var (
	camW, camH = 160, 120
	camF       = 150.0
)

// camAxes returns the camera x (right), y (down), z (forward) axes looking
// at the point (0, 0, 0.1) with +z up.
func camAxes(pos v3) (x, y, z v3) {
	z = v3{0, 0, 0.1}.sub(pos).norm()
	x = z.cross(v3{0, 0, 1}).norm()
	y = z.cross(x)
	return
}

// e2eHit intersects a ray with the box (slab test) and the card.
func e2eHit(o, d v3) (p, n v3, seg int, ok bool) {
	best := math.Inf(1)
	// Box: the slabs in x, y, z; the entry face gives the normal.
	lo := [3]float64{-boxHalf, -boxHalf, 0}
	hi := [3]float64{boxHalf, boxHalf, boxHeight}
	oo := [3]float64{o.x, o.y, o.z}
	dd := [3]float64{d.x, d.y, d.z}
	tn, tf := math.Inf(-1), math.Inf(1)
	axis, sign := -1, 0.0
	for a := 0; a < 3; a++ {
		t0 := (lo[a] - oo[a]) / dd[a]
		t1 := (hi[a] - oo[a]) / dd[a]
		s := -1.0
		if t0 > t1 {
			t0, t1 = t1, t0
			s = 1
		}
		if t0 > tn {
			tn, axis, sign = t0, a, s
		}
		tf = math.Min(tf, t1)
	}
	if tn <= tf && tn > 0 && !(axis == 2 && sign < 0) {
		best = tn
		p = o.add(d.mul(tn))
		nn := [3]float64{}
		nn[axis] = sign
		n = v3{nn[0], nn[1], nn[2]}
		seg, ok = 0, true
	}
	if d.z < 0 {
		t := -o.z / d.z
		q := o.add(d.mul(t))
		if t > 0 && t < best && math.Abs(q.x) <= cardHalf && math.Abs(q.y) <= cardHalf {
			return q, v3{0, 0, 1}, 1, true
		}
	}
	return p, n, seg, ok
}

// e2eRender renders camera cam under one light: linear radiance per pixel
// divided by the exposure multiplier.
func e2eRender(cam e2eCam, L e2eLight, exposure float64) []float64 {
	x, y, z := camAxes(cam.pos)
	img := make([]float64, 3*camW*camH)
	cx, cy := float64(camW-1)/2, float64(camH-1)/2
	for py := 0; py < camH; py++ {
		for px := 0; px < camW; px++ {
			// OpenCV pinhole without distortion: (x', y') = ((u-cx)/fx, (v-cy)/fy).
			d := z.add(x.mul((float64(px) - cx) / camF)).add(y.mul((float64(py) - cy) / camF)).norm()
			p, n, seg, ok := e2eHit(cam.pos, d)
			if !ok {
				continue
			}
			v := cam.pos.sub(p).norm()
			var l v3
			var e [3]float64
			tmax := math.Inf(1)
			if L.point {
				dl := L.pos.sub(p)
				tmax = math.Sqrt(dl.dot(dl))
				l = dl.norm()
				for c := range e {
					e[c] = L.power[c] / dl.dot(dl)
				}
			} else {
				l = L.pos.norm()
				e = L.power
			}
			cos := n.dot(l)
			if cos <= 0 {
				continue
			}
			if seg == 1 { // the box's cast shadow on the card
				if _, _, s2, hit := e2eHit(p.add(l.mul(1e-9)), l); hit && s2 == 0 {
					if q, _, _, _ := e2eHit(p.add(l.mul(1e-9)), l); q.sub(p).dot(q.sub(p)) < tmax*tmax {
						continue
					}
				}
			}
			tp := cardTruth
			if seg == 0 {
				tp = boxTruth
			}
			f := gltfBRDF(tp.Kind, tp.Diffuse, tp.Specular, tp.Roughness, n, v, l)
			for c := 0; c < 3; c++ {
				img[3*(py*camW+px)+c] = f[c] * e[c] * cos / exposure
			}
		}
	}
	return img
}

// writeE2ECapture writes the whole capture into dir and returns its path.
func writeE2ECapture(t testing.TB, dir string) string {
	t.Helper()
	// Mesh: each face has its own four vertices carrying the face normal,
	// so the shading normals are exact.
	type quad struct {
		c    [4]v3
		n    v3
		segm int
	}
	b, hgt, cs := boxHalf, boxHeight, cardHalf
	quads := []quad{
		{[4]v3{{-cs, -cs, 0}, {cs, -cs, 0}, {cs, cs, 0}, {-cs, cs, 0}}, v3{0, 0, 1}, 1},
		{[4]v3{{-b, -b, hgt}, {b, -b, hgt}, {b, b, hgt}, {-b, b, hgt}}, v3{0, 0, 1}, 0},
		{[4]v3{{b, -b, 0}, {b, b, 0}, {b, b, hgt}, {b, -b, hgt}}, v3{1, 0, 0}, 0},
		{[4]v3{{-b, b, 0}, {-b, -b, 0}, {-b, -b, hgt}, {-b, b, hgt}}, v3{-1, 0, 0}, 0},
		{[4]v3{{b, b, 0}, {-b, b, 0}, {-b, b, hgt}, {b, b, hgt}}, v3{0, 1, 0}, 0},
		{[4]v3{{-b, -b, 0}, {b, -b, 0}, {b, -b, hgt}, {-b, -b, hgt}}, v3{0, -1, 0}, 0},
	}
	var sb strings.Builder
	fmt.Fprintf(&sb, "ply\nformat ascii 1.0\nelement vertex %d\nproperty float x\nproperty float y\nproperty float z\nproperty float nx\nproperty float ny\nproperty float nz\n", 4*len(quads))
	fmt.Fprintf(&sb, "element face %d\nproperty list uchar int vertex_indices\nproperty int segment\nend_header\n", 2*len(quads))
	for _, q := range quads {
		for _, c := range q.c {
			fmt.Fprintf(&sb, "%g %g %g %g %g %g\n", c.x, c.y, c.z, q.n.x, q.n.y, q.n.z)
		}
	}
	for i, q := range quads {
		fmt.Fprintf(&sb, "3 %d %d %d %d\n3 %d %d %d %d\n", 4*i, 4*i+1, 4*i+2, q.segm, 4*i, 4*i+2, 4*i+3, q.segm)
	}
	must(t, os.WriteFile(filepath.Join(dir, "scene.ply"), []byte(sb.String()), 0o644))

	type jcam struct {
		ID       string        `json:"id"`
		W        int           `json:"width"`
		H        int           `json:"height"`
		Fx       float64       `json:"fx"`
		Fy       float64       `json:"fy"`
		Cx       float64       `json:"cx"`
		Cy       float64       `json:"cy"`
		Position [3]float64    `json:"position"`
		Rotation [3][3]float64 `json:"rotation"`
	}
	doc := map[string]any{
		"patina_capture": 1, "name": "box on a card", "mesh": "scene.ply",
		"segments": []map[string]any{
			{"name": "box", "label": 0, "model": "dielectric"},
			{"name": "card", "label": 1, "model": "dielectric", "reference_albedo": cardTruth.Diffuse},
		},
	}
	var cams []jcam
	for _, c := range e2eCams {
		x, y, z := camAxes(c.pos)
		cams = append(cams, jcam{c.id, camW, camH, camF, camF, float64(camW-1) / 2, float64(camH-1) / 2,
			[3]float64{c.pos.x, c.pos.y, c.pos.z},
			[3][3]float64{{x.x, y.x, z.x}, {x.y, y.y, z.y}, {x.z, y.z, z.z}}})
	}
	doc["cameras"] = cams
	var lights []map[string]any
	for _, l := range e2eLights {
		pw := [3]float64{l.power[0] / trueScale, l.power[1] / trueScale, l.power[2] / trueScale}
		if l.point {
			lights = append(lights, map[string]any{"id": l.id, "type": "point", "position": [3]float64{l.pos.x, l.pos.y, l.pos.z}, "intensity": pw})
		} else {
			lights = append(lights, map[string]any{"id": l.id, "type": "directional", "direction": [3]float64{l.pos.x, l.pos.y, l.pos.z}, "irradiance": pw})
		}
	}
	doc["lights"] = lights
	var photos []map[string]any
	const exposure = 0.5
	for ci, c := range e2eCams {
		for li, l := range e2eLights {
			name := fmt.Sprintf("%s-%s.png", c.id, l.id)
			pix := e2eRender(c, l, exposure)
			img := image.NewRGBA64(image.Rect(0, 0, camW, camH))
			for i := 0; i < camW*camH; i++ {
				q := func(v float64) uint16 { return uint16(math.Round(math.Min(math.Max(v, 0), 1) * 65535)) }
				img.SetRGBA64(i%camW, i/camW, color.RGBA64{q(pix[3*i]), q(pix[3*i+1]), q(pix[3*i+2]), 65535})
			}
			f, err := os.Create(filepath.Join(dir, name))
			must(t, err)
			must(t, png.Encode(f, img))
			must(t, f.Close())
			ph := map[string]any{"file": name, "camera": c.id, "lights": []string{l.id}, "encoding": "linear", "exposure": exposure, "use": "fit"}
			if ci == 2 && li == 4 {
				ph["use"] = "holdout"
			}
			if ci == 0 && li == 0 {
				// A mask that leaves out the left third.
				m := image.NewGray(image.Rect(0, 0, camW, camH))
				for i := range m.Pix {
					if i%camW >= camW/3 {
						m.Pix[i] = 255
					}
				}
				mf, err := os.Create(filepath.Join(dir, "mask.png"))
				must(t, err)
				must(t, png.Encode(mf, m))
				must(t, mf.Close())
				ph["mask"] = "mask.png"
			}
			photos = append(photos, ph)
		}
	}
	doc["photos"] = photos
	data, err := json.MarshalIndent(doc, "", " ")
	must(t, err)
	path := filepath.Join(dir, "capture.json")
	must(t, os.WriteFile(path, data, 0o644))
	return path
}

func must(t testing.TB, err error) {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
}

// TestRunEndToEnd runs the whole fit on the box-and-card capture: photos
// decoded from files, rays cast through Patina's BVH, rejections counted,
// the radiometric scale solved from the card, both segments fitted.
func TestRunEndToEnd(t *testing.T) {
	dir := t.TempDir()
	path := writeE2ECapture(t, dir)
	c, err := capture.Load(path)
	must(t, err)
	if errs := capture.Errors(c.Validate()); errs > 0 {
		t.Fatalf("capture has %d errors: %v", errs, c.Validate())
	}
	var stages []Stage
	// The photos are rendered with direct light only (no interreflection
	// between box and card), so the fit's indirect term is left out.
	res, err := Run(context.Background(), c, Options{Samples: 3000, Threads: 2, IndirectSamples: -1, Progress: func(p Progress) {
		if len(stages) == 0 || stages[len(stages)-1] != p.Stage {
			stages = append(stages, p.Stage)
		}
	}})
	must(t, err)
	t.Logf("stages %v; rejections %+v; scale %+v", stages, res.Rejections, res.Scale)
	// Calibration target: the solved scale reproduces the card's albedo
	// within 1% (the goal), and the scale the truth within 1%.
	card := res.Segments[1]
	for c := 0; c < 3; c++ {
		if d := math.Abs(card.Params.Diffuse[c]/cardTruth.Diffuse[c] - 1); d > 0.01 {
			t.Errorf("card diffuse[%d] %.4f vs reference albedo %.4f (%.2f%% off, limit 1%%)", c, card.Params.Diffuse[c], cardTruth.Diffuse[c], 100*d)
		}
	}
	if d := math.Abs(res.Scale.Value/trueScale - 1); !res.Scale.Solved || d > 0.01 {
		t.Errorf("radiometric scale %.5f (solved %v), truth %.5f", res.Scale.Value, res.Scale.Solved, trueScale)
	}
	for i, want := range []brdf.Params{boxTruth, cardTruth} {
		sf := res.Segments[i]
		var got, w, sg [brdf.MaxParams]float64
		sf.Params.Vector(got[:0])
		want.Vector(w[:0])
		sf.Sigma.Vector(sg[:0])
		t.Logf("%s: obs %d near-specular %d passes %d: %v ± %v (truth %v) warnings %q",
			sf.Name, sf.Observations, sf.NearSpecular, sf.Passes, got[:5], sg[:5], w[:5], sf.Warnings)
		for k := 0; k < 3; k++ {
			// 16-bit quantisation is the only error source.
			if math.Abs(got[k]-w[k]) > 2e-3 {
				t.Errorf("%s diffuse[%d] = %.5f, truth %.5f", sf.Name, k, got[k], w[k])
			}
		}
		for k := 3; k < 5; k++ {
			if math.Abs(got[k]-w[k]) > math.Max(3*sg[k], 2e-3) {
				t.Errorf("%s param %d = %.5f ± %.2g, truth %.5f", sf.Name, k, got[k], sg[k], w[k])
			}
		}
	}
	r := res.Rejections
	if r.Masked == 0 || r.Shadow == 0 || r.Border == 0 || r.Grazing == 0 {
		t.Errorf("expected masked, shadow, border and grazing rejections, got %+v", r)
	}
	if len(res.PhotosUsed) != len(e2eCams)*len(e2eLights)-1 {
		t.Errorf("%d photos used, want %d", len(res.PhotosUsed), len(e2eCams)*len(e2eLights)-1)
	}
	for _, p := range res.Photos {
		if p.Outlier || math.Abs(p.Ratio-1) > 0.01 {
			t.Errorf("photo %s: ratio %.4f outlier %v", p.File, p.Ratio, p.Outlier)
		}
	}
	// The materials file round-trips through its own reader.
	out := filepath.Join(dir, "out", "materials.json")
	must(t, os.MkdirAll(filepath.Dir(out), 0o755))
	mf := res.Materials(c, out)
	must(t, mf.Save(out))
	data, err := os.ReadFile(out)
	must(t, err)
	for _, key := range []string{`"sigma"`, `"observations"`, `"near_specular"`, `"rmse"`, `"radiometric_scale"`, `"rejections"`, `"capture": "../capture.json"`} {
		if !strings.Contains(string(data), key) {
			t.Errorf("materials file lacks %s:\n%s", key, data)
		}
	}
}

// BenchmarkBuildObservations reads 3, 6 and 12 photos of the box-and-card
// capture (160x120, two cameras' worth and more): the time per photo should
// stay flat as photos are added (memory does not grow with them: one photo
// is decoded at a time), and it reports CPU time per photo.
func BenchmarkBuildObservations(b *testing.B) {
	dir := b.TempDir()
	path := writeE2ECapture(b, dir)
	for _, n := range []int{3, 6, 12} {
		b.Run(fmt.Sprintf("photos=%d", n), func(b *testing.B) {
			c, err := capture.Load(path)
			must(b, err)
			k := 0
			for i := range c.Photos {
				if c.Photos[i].Use == capture.UseFit {
					if k >= n {
						c.Photos[i].Use = capture.UseIgnore
					}
					k++
				}
			}
			b.ReportAllocs()
			b.ResetTimer()
			cpu0 := processCPU()
			for i := 0; i < b.N; i++ {
				if _, err := BuildObservations(context.Background(), c, Options{Threads: 2}); err != nil {
					b.Fatal(err)
				}
			}
			cpu := processCPU() - cpu0
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*n)/1e6, "ms/photo")
			b.ReportMetric(float64(cpu.Nanoseconds())/float64(b.N*n)/1e6, "cpu-ms/photo")
		})
	}
}

// TestRunDeterministic: the same seed gives the same result, bit for bit,
// on one thread and on three.
func TestRunDeterministic(t *testing.T) {
	dir := t.TempDir()
	c, err := capture.Load(writeE2ECapture(t, dir))
	must(t, err)
	var ref *Result
	for _, th := range []int{1, 3} {
		res, err := Run(context.Background(), c, Options{Samples: 300, Seed: 9, Threads: th})
		must(t, err)
		if ref == nil {
			ref = res
			continue
		}
		if res.Rejections != ref.Rejections {
			t.Errorf("threads %d: rejections %+v, threads 1: %+v", th, res.Rejections, ref.Rejections)
		}
		if res.Scale.Value != ref.Scale.Value {
			t.Errorf("threads %d: scale %v != %v", th, res.Scale.Value, ref.Scale.Value)
		}
		for i := range res.Segments {
			a, b := res.Segments[i], ref.Segments[i]
			if a.Params != b.Params || a.Sigma != b.Sigma || a.Observations != b.Observations || a.Passes != b.Passes {
				t.Errorf("threads %d: segment %s: %+v vs %+v", th, a.Name, a.Params, b.Params)
			}
		}
	}
}

// TestRunCancel: a context cancelled during the fit stops Run with the
// context's error.
func TestRunCancel(t *testing.T) {
	dir := t.TempDir()
	c, err := capture.Load(writeE2ECapture(t, dir))
	must(t, err)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	passes := 0
	_, err = Run(ctx, c, Options{Samples: 300, Progress: func(p Progress) {
		if p.Stage == StageFit {
			passes++
			if passes == 3 {
				cancel()
			}
		}
	}})
	if err != context.Canceled {
		t.Fatalf("Run after cancel: %v, want context.Canceled", err)
	}
	if passes > 5 {
		t.Errorf("%d passes reported after cancelling at the third", passes-3)
	}
	// And during the observations.
	ctx2, cancel2 := context.WithCancel(context.Background())
	_, err = Run(ctx2, c, Options{Progress: func(p Progress) {
		if p.Stage == StageObservations && p.Photo == 2 {
			cancel2()
		}
	}})
	if err != context.Canceled {
		t.Fatalf("Run cancelled while reading photos: %v", err)
	}
}

// TestRunNoFitPhotos: a capture without fitting photos is refused with an
// error naming the file.
func TestRunNoFitPhotos(t *testing.T) {
	dir := t.TempDir()
	c, err := capture.Load(writeE2ECapture(t, dir))
	must(t, err)
	for i := range c.Photos {
		c.Photos[i].Use = capture.UseHoldout
	}
	_, err = Run(context.Background(), c, Options{})
	if err == nil || !strings.Contains(err.Error(), "capture.json") || !strings.Contains(err.Error(), `"fit"`) {
		t.Fatalf("error %v, want one naming the capture and the missing fit photos", err)
	}
}

// TestRejectionMap: the per-pixel map of one photo agrees with the counts
// the fit reports for that photo (up to the shadow split, which the fit
// estimates from a sample only beyond maxDarkTests dark pixels).
func TestRejectionMap(t *testing.T) {
	dir := t.TempDir()
	c, err := capture.Load(writeE2ECapture(t, dir))
	must(t, err)
	set, err := BuildObservations(context.Background(), c, Options{})
	must(t, err)
	pi := 0 // the photo with the mask
	m, w, h, err := RejectionMap(context.Background(), c, pi, Options{})
	must(t, err)
	if w != camW || h != camH || len(m) != w*h {
		t.Fatalf("map %dx%d (%d)", w, h, len(m))
	}
	var n [PixelClipped + 1]int
	for _, r := range m {
		n[r]++
	}
	want := set.PhotoRejections[pi]
	got := Rejections{Border: n[PixelBorder], Unassigned: n[PixelUnassigned], Grazing: n[PixelGrazing], Masked: n[PixelMasked],
		Saturated: n[PixelSaturated], UnderExposed: n[PixelUnderExposed], Shadow: n[PixelShadow]}
	if got.Masked == 0 || got != want {
		t.Errorf("map counts %+v, fit's counts %+v", got, want)
	}
	if n[PixelClipped] != set.PhotoClipped[pi] {
		t.Errorf("map: %d clipped pixels kept, the fit %d", n[PixelClipped], set.PhotoClipped[pi])
	}
}

// TestPhotoOutlier: one photo recorded with a wrong exposure (25% too
// high) stands out in the per-photo residuals and is named in a warning.
func TestPhotoOutlier(t *testing.T) {
	dir := t.TempDir()
	c, err := capture.Load(writeE2ECapture(t, dir))
	must(t, err)
	bad := 7
	c.Photos[bad].Exposure.Scale *= 1.25
	res, err := Run(context.Background(), c, Options{Samples: 1000, IndirectSamples: -1}) // direct-light photos
	must(t, err)
	for _, p := range res.Photos {
		t.Logf("%s ratio %.4f outlier %v", p.File, p.Ratio, p.Outlier)
		if (p.Photo == bad) != p.Outlier {
			t.Errorf("photo %s: outlier %v (ratio %.3f)", p.File, p.Outlier, p.Ratio)
		}
	}
	found := false
	for _, w := range res.Warnings {
		found = found || strings.Contains(w, c.Photos[bad].File)
	}
	if !found {
		t.Errorf("no warning names %s: %q", c.Photos[bad].File, res.Warnings)
	}
}

// BenchmarkBuildObservationsFull reads the box-and-card capture at the demo's
// full photo size, 1280x960 (14 fitting photos): CPU time per photo for
// decoding a 16-bit PNG, classifying 1.2 million pixels and observing the
// sampled ones, with each camera's cast shared by its photos.
func BenchmarkBuildObservationsFull(b *testing.B) {
	w, h, f := camW, camH, camF
	camW, camH, camF = 1280, 960, 1200
	defer func() { camW, camH, camF = w, h, f }()
	dir := b.TempDir()
	path := writeE2ECapture(b, dir)
	c, err := capture.Load(path)
	must(b, err)
	n := len(c.PhotosByUse(capture.UseFit))
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := processCPU()
	for i := 0; i < b.N; i++ {
		if _, err := BuildObservations(context.Background(), c, Options{Threads: 2}); err != nil {
			b.Fatal(err)
		}
	}
	cpu := processCPU() - cpu0
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*n)/1e6, "ms/photo")
	b.ReportMetric(float64(cpu.Nanoseconds())/float64(b.N*n)/1e6, "cpu-ms/photo")
}
