// Package demo makes Patina's built-in scenario from nothing but code: the
// jar in the dome. A small glazed stoneware jar (glossy dielectric glaze with
// a twisted relief band, a gilt band at the shoulder, an unglazed foot ring)
// stands on a grey calibration card of known albedo under a dome of lamps,
// photographed from four camera stations. The photos are rendered with
// Patina's path tracer (interreflection on) and then given what real
// photographs have: Poisson-Gaussian sensor noise, per-photo exposure,
// clipped highlights, 8-bit sRGB or 16-bit linear files, and a small
// calibration error (camera jitter, lamp position error) that the capture
// file does not record. The true materials go to truth.json, which nothing in
// the capture points to.
package demo

import (
	"context"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"time"

	"patina/assets/atomicfile"
	"patina/assets/capture"
	"patina/assets/materials"
	"patina/assets/mesh"
	"patina/brdf"
	"patina/render"
	"patina/render/colour"
)

// Options control Generate. The zero value makes the small capture with
// seed 1 on all cores.
type Options struct {
	Size    Size
	Seed    uint64 // 0 means 1
	Threads int    // 0 means all cores; the files do not depend on it
	// Force allows writing into a directory that is not empty.
	Force bool
	// Progress, if set, is told about each file written.
	Progress func(done, total int, file string)
}

// Result says what Generate wrote.
type Result struct {
	Dir       string
	Capture   string // path of capture.json
	Truth     string // path of truth.json
	Mesh      string
	Photos    int
	Holdout   int
	Triangles int
	Bytes     int64
	Elapsed   time.Duration
}

// Truth returns the true materials of the demo, segment by segment in
// SegmentNames order. The gilding is gold from the Johnson and Christy (1972)
// optical constants (brdf's "gold" preset).
func Truth() []materials.Segment {
	gold, _ := brdf.PresetByName("gold")
	return []materials.Segment{
		materials.FromParams("glaze", brdf.Params{Kind: brdf.Dielectric,
			Diffuse: brdf.RGB{0.11, 0.30, 0.26}, Specular: brdf.RGB{0.045, 0.045, 0.045}, Roughness: 0.16}),
		materials.FromParams("gilding", brdf.Params{Kind: brdf.Metal,
			Specular: gold.Params.Specular, Roughness: 0.38}),
		materials.FromParams("foot", brdf.Params{Kind: brdf.Dielectric,
			Diffuse: brdf.RGB{0.52, 0.36, 0.24}, Specular: brdf.RGB{0.03, 0.03, 0.03}, Roughness: 0.78}),
		materials.FromParams("grey card", brdf.Params{Kind: brdf.Dielectric,
			Diffuse: brdf.RGB{0.18, 0.18, 0.18}, Specular: brdf.RGB{0.02, 0.02, 0.02}, Roughness: 0.92}),
	}
}

// CardAlbedo is the grey card's reference albedo written into the capture.
var CardAlbedo = [3]float64{0.18, 0.18, 0.18}

// Calibration error applied when photographing but not recorded in the
// capture: principal-point jitter (pixels at full size, one standard
// deviation) and lamp position error (metres, per axis).
const (
	cameraJitterPx = 0.3
	lampErrorM     = 0.002
)

// indirectClampFS bounds what any one path sample may add through two or
// more scatterings, as a fraction of the sensor's full scale. A real
// photograph integrates millions of photons per pixel, so a caustic (the
// glaze focusing a lamp onto the card) is a smooth glow in it; a path
// tracer at a few samples per pixel shows it as isolated white specks
// instead. The clamp keeps diffuse interreflection (a fraction of the
// glaze's brightness, well under the bound) and removes the specks.
const indirectClampFS = 0.25

// lampScale converts the dome's nominal lamp outputs to the capture's units;
// with it a well-lit grey card sits near a fifth of full scale at the
// recorded exposures.
const lampScale = 40

// ErrNotEmpty is returned when the output directory holds files and Force is
// not set.
var ErrNotEmpty = errors.New("directory is not empty (use -force to write into it)")

// Generate writes the demo capture into dir: capture.json, mesh/jar.ply,
// photos/*.png and truth.json. The files depend only on the size and the seed.
func Generate(ctx context.Context, dir string, opt Options) (*Result, error) {
	return generate(ctx, dir, opt, layoutFor(opt.Size))
}

func generate(ctx context.Context, dir string, opt Options, lay layout) (*Result, error) {
	start := time.Now()
	if opt.Seed == 0 {
		opt.Seed = 1
	}
	if ents, err := os.ReadDir(dir); err == nil && len(ents) > 0 && !opt.Force {
		return nil, fmt.Errorf("%s: %w", dir, ErrNotEmpty)
	}
	for _, sub := range []string{"", "mesh", "photos"} {
		if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
			return nil, err
		}
	}
	res := &Result{Dir: dir}

	// The mesh is written first and read back, so the photos are rendered
	// from exactly the geometry (and the computed normals) the fit will see.
	meshPath := filepath.Join(dir, "mesh", "jar.ply")
	if err := mesh.WriteFile(meshPath, JarMesh(lay.around, lay.along)); err != nil {
		return nil, err
	}
	m, _, err := mesh.Load(meshPath)
	if err != nil {
		return nil, fmt.Errorf("reading back the demo mesh: %w", err)
	}
	res.Mesh, res.Triangles = meshPath, m.NumTriangles()
	scene, err := render.NewScene(m, opt.Threads)
	if err != nil {
		return nil, err
	}
	truth := Truth()
	mats := make([]brdf.Params, len(m.SegmentLabels))
	for i, sl := range m.SegmentLabels {
		if sl.Label < 0 || sl.Label >= len(truth) {
			return nil, fmt.Errorf("demo mesh has unexpected segment label %d", sl.Label)
		}
		if mats[i], err = truth[sl.Label].Params(); err != nil {
			return nil, err
		}
	}

	c := buildCapture(lay, opt.Seed)
	total := len(c.Photos)
	for k := range c.Photos {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		if err := photograph(ctx, c, k, lay, scene, mats, dir, opt); err != nil {
			return nil, err
		}
		if c.Photos[k].Use == "holdout" {
			res.Holdout++
		}
		if opt.Progress != nil {
			opt.Progress(k+1, total, c.Photos[k].File)
		}
	}
	res.Photos = total

	res.Capture = filepath.Join(dir, "capture.json")
	c.Path, c.Dir = res.Capture, dir
	if abs, err := filepath.Abs(res.Capture); err == nil {
		c.Path, c.Dir = abs, filepath.Dir(abs)
	}
	if err := c.Save(res.Capture); err != nil {
		return nil, err
	}
	res.Truth = filepath.Join(dir, "truth.json")
	tf := &materials.File{Version: materials.Version, Capture: "capture.json", Segments: truth}
	if err := tf.Save(res.Truth); err != nil {
		return nil, err
	}
	filepath.Walk(dir, func(_ string, info os.FileInfo, err error) error {
		if err == nil && !info.IsDir() {
			res.Bytes += info.Size()
		}
		return nil
	})
	res.Elapsed = time.Since(start)
	return res, nil
}

// buildCapture lays out the capture file: segments, cameras, lamps and one
// photo per station and lamp, about one in six held out.
func buildCapture(lay layout, seed uint64) *capture.Capture {
	c := &capture.Capture{
		Version: capture.FormatVersion,
		Name:    fmt.Sprintf("The jar in the dome (Patina demo, %dx%d, seed %d)", lay.width, lay.height, seed),
		Up:      "+z",
		Mesh:    "mesh/jar.ply",
	}
	models := []string{"dielectric", "metal", "dielectric", "dielectric"}
	for i, name := range SegmentNames {
		label := i
		s := capture.Segment{Name: name, Label: &label, Model: models[i]}
		if i == LabelCard {
			alb := CardAlbedo
			s.ReferenceAlbedo = &alb
		}
		c.Segments = append(c.Segments, s)
	}
	scale := float64(lay.width) / 1280
	for _, st := range lay.stations {
		pos, rot := st.pose()
		c.Cameras = append(c.Cameras, capture.Camera{
			ID: st.id, Width: lay.width, Height: lay.height,
			Fx: lay.focal, Fy: lay.focal * (1 + 2e-4), // square pixels to calibration precision
			Cx: float64(lay.width-1)/2 + 3.2*scale, Cy: float64(lay.height-1)/2 - 2.1*scale,
			Distortion: st.dist, Position: pos, Rotation: rot,
		})
	}
	for _, l := range lay.lights {
		typ := capture.LightPoint
		if l.radius > 0 {
			typ = "sphere"
		}
		in := l.intensity
		for k := range in {
			in[k] *= lampScale
		}
		c.Lights = append(c.Lights, capture.Light{ID: l.id, Type: typ, Position: l.position(), Intensity: in, Radius: l.radius})
	}
	for si, st := range lay.stations {
		for li, l := range lay.lights {
			p := capture.Photo{
				File:   fmt.Sprintf("photos/%s-%s.png", st.id, l.id),
				Camera: st.id, Lights: []string{l.id},
				Encoding: "srgb", WhiteLevel: 1, Use: "fit",
			}
			if st.linear16 {
				p.Encoding, p.BlackLevel = "linear", 256.0/65535
			}
			// Exposures vary from photo to photo as a photographer's would;
			// every photo records its shutter time, ISO and f-number, so all
			// share one radiance scale.
			vary := math.Pow(2, 0.5*math.Sin(float64(3*si+7*li)))
			p.Exposure = capture.Exposure{ShutterS: st.shutter * vary, ISO: 100, FNumber: st.fNumber}
			if (li+2*si)%6 == 0 {
				p.Use = "holdout"
			}
			c.Photos = append(c.Photos, p)
		}
	}
	return c
}

// photograph renders photo k with the calibration error applied, adds sensor
// noise, clips and encodes it.
func photograph(ctx context.Context, c *capture.Capture, k int, lay layout, scene *render.Scene, mats []brdf.Params, dir string, opt Options) error {
	p := c.Photos[k]
	cam, _ := c.CameraByID(p.Camera)
	rng := newRNG(opt.Seed, 1, uint64(k))
	scale := float64(lay.width) / 1280
	pin := cam.Pinhole()
	pin.Cx += cameraJitterPx * scale * rng.normal()
	pin.Cy += cameraJitterPx * scale * rng.normal()
	var lights render.Lights
	for _, id := range p.Lights {
		l, _ := c.LightByID(id)
		rl, err := l.RenderLight()
		if err != nil {
			return err
		}
		rl.Position = rl.Position.Add(render.V3(lampErrorM*rng.normal(), lampErrorM*rng.normal(), lampErrorM*rng.normal()))
		lights.Lights = append(lights.Lights, rl)
	}
	rel := 1 / p.Exposure.Multiplier() // pixel value per unit radiance
	film, err := render.Render(ctx, scene, pin, &lights, mats, render.Settings{
		SPP: lay.spp, MaxDepth: 4, Seed: opt.Seed*7919 + uint64(k), Threads: opt.Threads,
		IndirectClamp: indirectClampFS / rel,
	})
	if err != nil {
		return err
	}
	w, h := film.Width, film.Height
	pix := film.RGB()
	var img image.Image
	if p.Encoding == "linear" {
		out := image.NewRGBA64(image.Rect(0, 0, w, h))
		span := (p.WhiteLevel - p.BlackLevel)
		for i := 0; i < w*h; i++ {
			px := newRNG(opt.Seed, 2, uint64(k), uint64(i))
			var cc [3]uint16
			for ch := 0; ch < 3; ch++ {
				v := DefaultSensor.Apply(float64(pix[3*i+ch])*rel, &px)
				code := p.BlackLevel + clamp01(v)*span
				cc[ch] = uint16(math.Round(clamp01(code) * 65535))
			}
			out.SetRGBA64(i%w, i/w, color.RGBA64{cc[0], cc[1], cc[2], 0xffff})
		}
		img = out
	} else {
		out := image.NewRGBA(image.Rect(0, 0, w, h))
		for i := 0; i < w*h; i++ {
			px := newRNG(opt.Seed, 2, uint64(k), uint64(i))
			for ch := 0; ch < 3; ch++ {
				v := DefaultSensor.Apply(float64(pix[3*i+ch])*rel, &px)
				out.Pix[4*i+ch] = uint8(math.Round(colour.LinearToSRGB(clamp01(v)) * 255))
			}
			out.Pix[4*i+3] = 255
		}
		img = out
	}
	return atomicfile.Write(filepath.Join(dir, filepath.FromSlash(p.File)), 0o644, func(w io.Writer) error {
		return png.Encode(w, img)
	})
}

func clamp01(v float64) float64 { return math.Min(1, math.Max(0, v)) }
