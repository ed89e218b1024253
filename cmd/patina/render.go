package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"patina/assets/atomicfile"
	"patina/assets/capture"
	"patina/assets/hdr"
	"patina/assets/materials"
	"patina/assets/mesh"
	"patina/brdf"
	"patina/render"
)

const renderUsage = `patina render CAPTURE.json [-materials M.json] [-photo FILE-OR-INDEX | -orbit AZ,EL,DIST]
       [-lights photo|all|none] [-light SPEC ...] [-env FILE.hdr|FILE.pfm|studio|sky:ELEV,AZ[,TURBIDITY]|const:R,G,B|none]
       [-env-rotate DEG] [-env-scale S] [-env-size W] [-spp N] [-depth D] [-direct] [-seed S]
       [-o OUT.hdr|OUT.pfm|OUT.png] [-exposure EV] [-highlight clip|rolloff] [-bits 8|16]
       [-transparent] [-size WxH] [-fov DEG] [-threads N] [-strategy mis|brdf|light] [-progress auto|always|never]

Path-traces the capture's mesh with the materials file's parameters and
writes the image atomically: linear radiance to .hdr or .pfm, or a display
image to .png (exposure in stops, highlight curve, sRGB). The exit status is
0 only when the image was written.

Camera: -photo renders the view of a photo (by index or file name) with its
camera's resolution, intrinsics and lens distortion, so every pixel lines up
with the photo; -orbit AZ,EL,DIST looks at the centre of the mesh from
azimuth AZ and elevation EL (degrees, about the capture's up axis) at DIST
metres (0 or omitted: frame the whole mesh), at -size (default 640x480) and
-fov (vertical, default 35 degrees). Default: -orbit 30,20,0.

Lights: -lights photo (default with -photo: that photo's lights), all (every
light of the capture) or none. -light adds a light and may be repeated:
  point:X,Y,Z:R,G,B              radiant intensity R,G,B (W/sr)
  sphere:X,Y,Z:R,G,B:RADIUS      a sphere light of that radius (soft shadows)
  directional:DX,DY,DZ:R,G,B     irradiance R,G,B from direction DX,DY,DZ
Lights given with -light replace the photo's lights unless -lights all or
photo is given explicitly.

Environment: an equirectangular HDR map (.hdr or .pfm), or a built-in one:
studio (soft boxes over a dim floor) or sky:ELEV,AZ[,T] (clear daylight sky
with sun at elevation ELEV and azimuth AZ degrees, turbidity T, default 3;
Preetham, Shirley and Smits 1999). The map's top is the capture's up axis;
-env-rotate turns it about that axis, -env-scale multiplies its radiance,
-env-size sets the width of generated maps (default 1024). Default: none
when lights are given, studio otherwise.

Materials: without -materials every segment is a grey dielectric (diffuse
0.5, F0 0.04, roughness 0.5).

Sampling: -spp samples per pixel (default 64) in progressive passes;
-depth maximum bounces (default 8); -direct renders direct light only (the
fit's forward model); -seed selects the random sequence (same seed, same
bytes on any number of threads); -strategy is for testing.`

func init() {
	register(&command{
		name:    "render",
		summary: "path-trace the object with fitted materials under lights or an environment",
		usage:   renderUsage,
		run:     runRender,
	})
}

// lightList collects repeated -light flags.
type lightList []string

func (l *lightList) String() string     { return strings.Join(*l, " ") }
func (l *lightList) Set(s string) error { *l = append(*l, s); return nil }

type renderFlags struct {
	materials, photo, orbit, lights, env, out, size string
	highlight, strategy, progress                   string
	extra                                           lightList
	envRotate, envScale, exposure, fov              float64
	envSize, spp, depth, bits, threads              int
	seed                                            uint64
	direct, transparent                             bool
	set                                             map[string]bool
}

func parseRenderFlags(args []string, stderr io.Writer) (string, *renderFlags, error) {
	fs := flag.NewFlagSet("render", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() { fmt.Fprintln(stderr, renderUsage) }
	f := &renderFlags{}
	fs.StringVar(&f.materials, "materials", "", "materials file")
	fs.StringVar(&f.photo, "photo", "", "render the view of this photo (index or file)")
	fs.StringVar(&f.orbit, "orbit", "", "AZ,EL,DIST orbit camera")
	fs.StringVar(&f.lights, "lights", "", "photo, all or none")
	fs.Var(&f.extra, "light", "add a light (repeatable)")
	fs.StringVar(&f.env, "env", "", "environment")
	fs.Float64Var(&f.envRotate, "env-rotate", 0, "environment rotation about the up axis, degrees")
	fs.Float64Var(&f.envScale, "env-scale", 1, "environment radiance scale")
	fs.IntVar(&f.envSize, "env-size", 1024, "width of generated environment maps")
	fs.IntVar(&f.spp, "spp", 64, "samples per pixel")
	fs.IntVar(&f.depth, "depth", 8, "maximum bounces")
	fs.BoolVar(&f.direct, "direct", false, "direct light only")
	fs.Uint64Var(&f.seed, "seed", 1, "random seed")
	fs.StringVar(&f.out, "o", "", "output image (.hdr, .pfm or .png)")
	fs.Float64Var(&f.exposure, "exposure", 0, "exposure in stops (.png)")
	fs.StringVar(&f.highlight, "highlight", "rolloff", "clip or rolloff (.png)")
	fs.IntVar(&f.bits, "bits", 8, "bits per channel of a .png: 8 or 16")
	fs.BoolVar(&f.transparent, "transparent", false, "transparent background (alpha 0; .png)")
	fs.StringVar(&f.size, "size", "640x480", "image size for -orbit")
	fs.Float64Var(&f.fov, "fov", 35, "vertical field of view for -orbit, degrees")
	fs.IntVar(&f.threads, "threads", 0, "worker threads (0: all cores)")
	fs.StringVar(&f.strategy, "strategy", "mis", "mis, brdf or light (testing)")
	fs.StringVar(&f.progress, "progress", "auto", "progress bar: auto (on a terminal), always or never")
	// Flags may follow the capture file: parse, take the positional, parse the rest.
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return "", nil, errHelpShown
			}
			return "", nil, badInput(err)
		}
		args = fs.Args()
		if len(args) == 0 {
			break
		}
		pos = append(pos, args[0])
		args = args[1:]
	}
	f.set = map[string]bool{}
	fs.Visit(func(fl *flag.Flag) { f.set[fl.Name] = true })
	if len(pos) != 1 {
		return "", nil, badInputf("render: expected one capture file, got %d arguments (see 'patina help render')", len(pos))
	}
	if f.out == "" {
		return "", nil, badInputf("render: -o OUT.hdr|OUT.pfm|OUT.png is required")
	}
	if f.photo != "" && f.orbit != "" {
		return "", nil, badInputf("render: -photo and -orbit are exclusive")
	}
	if f.spp <= 0 || f.spp > 1<<20 {
		return "", nil, badInputf("render: -spp %d: expected 1..%d", f.spp, 1<<20)
	}
	if f.depth <= 0 || f.depth > 1024 {
		return "", nil, badInputf("render: -depth %d: expected 1..1024", f.depth)
	}
	if f.bits != 8 && f.bits != 16 {
		return "", nil, badInputf("render: -bits %d: expected 8 or 16", f.bits)
	}
	if f.threads < 0 {
		return "", nil, badInputf("render: -threads %d: expected >= 0", f.threads)
	}
	if !(f.envScale >= 0) || math.IsInf(f.envScale, 0) || math.IsNaN(f.envRotate) || math.IsInf(f.envRotate, 0) || math.IsNaN(f.exposure) || math.IsInf(f.exposure, 0) {
		return "", nil, badInputf("render: -env-scale must be >= 0 and -env-rotate, -exposure finite")
	}
	switch strings.ToLower(filepath.Ext(f.out)) {
	case ".hdr", ".pfm", ".png":
	default:
		return "", nil, badInputf("render: -o %s: expected a .hdr, .pfm or .png file", f.out)
	}
	return pos[0], f, nil
}

// parseFloats parses n comma-separated numbers.
func parseFloats(s string, n int, what string) ([]float64, error) {
	parts := strings.Split(s, ",")
	if len(parts) != n {
		return nil, fmt.Errorf("%s %q: expected %d comma-separated numbers", what, s, n)
	}
	v := make([]float64, n)
	for i, p := range parts {
		x, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, fmt.Errorf("%s %q: %q is not a finite number", what, s, p)
		}
		v[i] = x
	}
	return v, nil
}

// parseLight parses one -light value.
func parseLight(s string) (render.Light, error) {
	parts := strings.Split(s, ":")
	bad := func(format string, a ...any) (render.Light, error) {
		return render.Light{}, fmt.Errorf("-light %q: "+format, append([]any{s}, a...)...)
	}
	if len(parts) < 3 {
		return bad("expected point:X,Y,Z:R,G,B, sphere:X,Y,Z:R,G,B:RADIUS or directional:DX,DY,DZ:R,G,B")
	}
	p, err := parseFloats(parts[1], 3, "position")
	if err != nil {
		return bad("%v", err)
	}
	c, err := parseFloats(parts[2], 3, "colour")
	if err != nil {
		return bad("%v", err)
	}
	v, rgb := render.Vec3{X: p[0], Y: p[1], Z: p[2]}, brdf.RGB{c[0], c[1], c[2]}
	var l render.Light
	switch parts[0] {
	case "point":
		if len(parts) != 3 {
			return bad("a point light has three parts")
		}
		l = render.Light{Kind: render.PointLight, Position: v, Intensity: rgb}
	case "sphere":
		if len(parts) != 4 {
			return bad("a sphere light has four parts, the last its radius")
		}
		r, err := strconv.ParseFloat(parts[3], 64)
		if err != nil {
			return bad("radius %q is not a number", parts[3])
		}
		l = render.Light{Kind: render.SphereLight, Position: v, Intensity: rgb, Radius: r}
	case "directional":
		if len(parts) != 3 {
			return bad("a directional light has three parts")
		}
		l = render.Light{Kind: render.DirectionalLight, Direction: v, Irradiance: rgb}
	default:
		return bad("unknown light type %q; expected point, sphere or directional", parts[0])
	}
	if err := l.Validate(); err != nil {
		return bad("%v", err)
	}
	return l, nil
}

// captureLight converts a capture light to the renderer's light.
func captureLight(l *capture.Light) (render.Light, error) { return l.RenderLight() }

// pinholeFromCapture converts a capture camera to the renderer's camera.
func pinholeFromCapture(c *capture.Camera) render.Pinhole { return c.Pinhole() }

// findPhoto resolves -photo: an index into the capture's photos or a file
// name as the capture lists it (or its base name).
func findPhoto(c *capture.Capture, s string) (int, error) {
	if i, err := strconv.Atoi(s); err == nil {
		if i < 0 || i >= len(c.Photos) {
			return 0, fmt.Errorf("-photo %d: the capture has %d photos (indices 0..%d)", i, len(c.Photos), len(c.Photos)-1)
		}
		return i, nil
	}
	for i, p := range c.Photos {
		if p.File == s || filepath.Base(p.File) == s || c.Resolve(p.File) == s {
			return i, nil
		}
	}
	return 0, fmt.Errorf("-photo %q: no photo of the capture has that file name", s)
}

// buildEnvironment makes the environment of -env.
func buildEnvironment(f *renderFlags, spec string, up render.Vec3) (*render.Environment, error) {
	o := render.EnvironmentOrientation{Up: up, RotateDeg: f.envRotate, Scale: f.envScale}
	switch {
	case spec == "none" || f.envScale == 0: // an explicit scale 0 is black
		return nil, nil
	case spec == "studio":
		w, h, pix, err := render.Studio{Width: f.envSize}.Map()
		if err != nil {
			return nil, err
		}
		return render.NewEnvironmentMap(w, h, pix, o)
	case strings.HasPrefix(spec, "sky:"):
		parts := strings.Split(spec[4:], ",")
		if len(parts) != 2 && len(parts) != 3 {
			return nil, fmt.Errorf("-env %q: expected sky:ELEVATION,AZIMUTH[,TURBIDITY]", spec)
		}
		v, err := parseFloats(spec[4:], len(parts), "-env sky")
		if err != nil {
			return nil, err
		}
		sky := render.Sky{ElevationDeg: v[0], AzimuthDeg: v[1], Width: f.envSize}
		if len(v) == 3 {
			sky.Turbidity = v[2]
		}
		w, h, pix, err := sky.Map()
		if err != nil {
			return nil, err
		}
		return render.NewEnvironmentMap(w, h, pix, o)
	case strings.HasPrefix(spec, "const:"):
		v, err := parseFloats(spec[6:], 3, "-env const")
		if err != nil {
			return nil, err
		}
		return render.NewConstantEnvironment(brdf.RGB{v[0], v[1], v[2]}, o)
	}
	img, err := hdr.ReadFile(spec)
	if err != nil {
		return nil, err
	}
	return render.NewEnvironmentMap(img.Width, img.Height, img.Pix, o)
}

func runRender(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	capPath, f, err := parseRenderFlags(args, stderr)
	if err != nil {
		return err
	}
	c, err := capture.Load(capPath)
	if err != nil {
		return badInput(err)
	}
	if ps := c.Validate(); capture.Errors(ps) > 0 {
		return badInput(&capture.Error{File: capPath, Problems: ps})
	}
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	if err != nil {
		return badInput(err)
	}
	var mats []brdf.Params
	if f.materials != "" {
		mf, err := materials.Load(f.materials)
		if err != nil {
			return badInput(err)
		}
		if err := mf.Validate(c, m); err != nil {
			return badInput(err)
		}
		if mats, err = mf.ParamsForMesh(c, m); err != nil {
			return badInput(err)
		}
	} else {
		grey := brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.5, 0.5, 0.5}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.5}
		mats = make([]brdf.Params, max(1, len(m.SegmentLabels)))
		for i := range mats {
			mats[i] = grey
		}
		fmt.Fprintln(stderr, "patina render: no -materials given; every segment is a grey dielectric")
	}
	upA := c.UpVector()
	up := render.Vec3{X: upA[0], Y: upA[1], Z: upA[2]}

	sc, err := render.NewScene(m, f.threads)
	if err != nil {
		return badInput(fmt.Errorf("%s: %w", c.Resolve(c.Mesh), err))
	}

	// Camera.
	var cam render.Camera
	photo := -1
	if f.photo != "" {
		if photo, err = findPhoto(c, f.photo); err != nil {
			return badInput(err)
		}
		pc, ci := c.CameraByID(c.Photos[photo].Camera)
		if pc == nil {
			return badInputf("render: photo %d names camera %q, which the capture does not define", photo, c.Photos[photo].Camera)
		}
		// A camera may be larger than a render may be (the photo limits are
		// higher), so the film limit is checked here, where the camera is
		// named, rather than left to render.Render.
		if int64(pc.Width)*int64(pc.Height) > render.MaxFilmPixels {
			return badInputf("render: %s: cameras[%d] (%q) is %dx%d, %d pixels, over the limit render.MaxFilmPixels of %d pixels",
				capPath, ci, pc.ID, pc.Width, pc.Height, int64(pc.Width)*int64(pc.Height), render.MaxFilmPixels)
		}
		cam = pinholeFromCapture(pc)
	} else {
		spec := f.orbit
		if spec == "" {
			spec = "30,20,0"
		}
		parts := strings.Split(spec, ",")
		if len(parts) == 2 {
			spec += ",0"
		}
		v, err := parseFloats(spec, 3, "-orbit")
		if err != nil {
			return badInput(err)
		}
		var w, h int
		if _, err := fmt.Sscanf(f.size, "%dx%d", &w, &h); err != nil || w <= 0 || h <= 0 || w > 1<<16 || h > 1<<16 {
			return badInputf("render: -size %q: expected WIDTHxHEIGHT, each 1..65536", f.size)
		}
		if int64(w)*int64(h) > render.MaxFilmPixels {
			return badInputf("render: -size %q: %d pixels, over the limit render.MaxFilmPixels of %d pixels", f.size, int64(w)*int64(h), render.MaxFilmPixels)
		}
		if !(f.fov > 0 && f.fov < 180) {
			return badInputf("render: -fov %v: expected 0 < fov < 180 degrees", f.fov)
		}
		b := sc.Bounds()
		dist := v[2]
		if dist <= 0 {
			// Frame the bounding sphere in the narrower field of view.
			half := math.Min(f.fov, 2*math.Atan(math.Tan(f.fov*math.Pi/360)*float64(w)/float64(h))*180/math.Pi) * math.Pi / 360
			dist = 1.1 * b.Diagonal() / 2 / math.Sin(half)
		}
		o := render.Orbit{Target: b.Centre(), Azimuth: v[0], Elevation: v[1], Distance: dist, VFOV: f.fov, Up: up, Width: w, Height: h}
		cam = o.Pinhole() // a Pinhole is built once, not per ray
	}

	// Lights.
	var ls render.Lights
	mode := f.lights
	if mode == "" {
		mode = "none"
		if photo >= 0 && len(f.extra) == 0 {
			mode = "photo"
		}
	}
	switch mode {
	case "none":
	case "photo":
		if photo < 0 {
			return badInputf("render: -lights photo needs -photo")
		}
		for _, id := range c.Photos[photo].Lights {
			cl, _ := c.LightByID(id)
			if cl == nil {
				return badInputf("render: photo %d names light %q, which the capture does not define", photo, id)
			}
			l, err := captureLight(cl)
			if err != nil {
				return badInput(err)
			}
			ls.Lights = append(ls.Lights, l)
		}
	case "all":
		for i := range c.Lights {
			l, err := captureLight(&c.Lights[i])
			if err != nil {
				return badInput(err)
			}
			ls.Lights = append(ls.Lights, l)
		}
	default:
		return badInputf("render: -lights %q: expected photo, all or none", f.lights)
	}
	for _, s := range f.extra {
		l, err := parseLight(s)
		if err != nil {
			return badInput(err)
		}
		ls.Lights = append(ls.Lights, l)
	}
	envSpec := f.env
	if envSpec == "" {
		envSpec = "none"
		if len(ls.Lights) == 0 {
			envSpec = "studio"
		}
	}
	if ls.Environment, err = buildEnvironment(f, envSpec, up); err != nil {
		return badInput(err)
	}

	strategy := map[string]render.Strategy{"mis": render.MIS, "brdf": render.BRDFOnly, "light": render.LightOnly}
	st, ok := strategy[f.strategy]
	if !ok {
		return badInputf("render: -strategy %q: expected mis, brdf or light", f.strategy)
	}
	if _, err := render.ParseHighlight(f.highlight); err != nil {
		return badInput(err)
	}
	settings := render.Settings{SPP: f.spp, MaxDepth: f.depth, Direct: f.direct, Strategy: st, Seed: f.seed,
		Threads: f.threads, TransparentBackground: f.transparent}

	showBar := f.progress == "always"
	if f.progress == "auto" {
		if fd, ok := stderr.(*os.File); ok && term.IsTerminal(int(fd.Fd())) {
			showBar = true
		}
	} else if f.progress != "always" && f.progress != "never" {
		return badInputf("render: -progress %q: expected auto, always or never", f.progress)
	}
	w, h := cam.Size()
	if showBar {
		desc := func(spp int) string { return fmt.Sprintf("render %dx%d, %d/%d spp", w, h, spp, f.spp) }
		bar := progressbar.NewOptions64(int64(w)*int64(h)*int64(f.spp),
			progressbar.OptionSetWriter(stderr),
			progressbar.OptionSetDescription(desc(0)),
			progressbar.OptionSetItsString("samples"),
			progressbar.OptionShowIts(),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionThrottle(100*time.Millisecond),
			progressbar.OptionClearOnFinish(),
		)
		// Samples are counted per finished tile; the description shows the
		// samples per pixel of the last finished pass.
		settings.OnProgress = func(done, total int64) { _ = bar.Set64(done) }
		settings.OnPass = func(p render.Pass) { bar.Describe(desc(p.SPP)) }
		defer bar.Finish()
	}

	start := time.Now()
	film, err := render.Render(ctx, sc, cam, &ls, mats, settings)
	if err != nil {
		return err
	}
	secs := time.Since(start).Seconds()
	if err := writeRender(f, film); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "wrote %s: %dx%d, %d spp, %.1f s (%.2f M paths/s)\n", f.out, w, h, film.SPP, secs,
		float64(w)*float64(h)*float64(film.SPP)/secs/1e6)
	return nil
}

// writeRender writes the film to -o, atomically.
func writeRender(f *renderFlags, film *render.Film) error {
	switch strings.ToLower(filepath.Ext(f.out)) {
	case ".png":
		hl, _ := render.ParseHighlight(f.highlight)
		img, err := render.ToneMap{ExposureEV: f.exposure, Highlight: hl}.Image(film, f.bits)
		if err != nil {
			return err
		}
		return atomicfile.Write(f.out, 0o644, func(w io.Writer) error { return png.Encode(w, img) })
	default:
		return hdr.WriteFile(f.out, &hdr.Image{Width: film.Width, Height: film.Height, Pix: film.RGB()})
	}
}
