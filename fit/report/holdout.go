package report

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"sort"
	"time"

	"patina/assets/capture"
	"patina/assets/materials"
	"patina/brdf"
	"patina/fit/metrics"
	"patina/render"
)

// Defaults and limits of Options.
const (
	DefaultMaxSPP     = 64
	MinSPP            = 16
	DefaultMaxDepth   = 4
	DefaultNoiseRatio = 0.5
	// MaxSPPLimit bounds Options.SPP and Options.MaxSPP.
	MaxSPPLimit = 1 << 16
)

// Options control the holdout comparisons. The zero value is the documented
// default, field by field.
type Options struct {
	// SPP fixes the samples per pixel of every render; 0 chooses them by
	// the noise rule of the package documentation.
	SPP int
	// MaxSPP caps the rule's choice; 0 means DefaultMaxSPP.
	MaxSPP int
	// NoiseRatio is the target ratio of the render's standard error to the
	// photo's noise; 0 means DefaultNoiseRatio.
	NoiseRatio float64
	// MaxDepth is the render's largest number of scattering events (direct
	// and indirect light); 0 means DefaultMaxDepth.
	MaxDepth int
	// Seed selects the render's random sequence; 0 means 1. Holdout photo
	// k is rendered with Seed + k, so views are independent.
	Seed uint64
	// Threads is the number of worker goroutines; 0 means all cores.
	// Results do not depend on it.
	Threads int
	// Tolerance judges each comparison; the zero value means
	// metrics.FADGI3Star.
	Tolerance metrics.Tolerance
	// Metrics are passed to metrics.Compare (Threads is set from Threads).
	Metrics metrics.Options
	// Progress, if set, is told what is being done; calls come from the
	// calling goroutine or serialised from workers.
	Progress func(Progress)
}

// Progress reports the work on one holdout photo.
type Progress struct {
	Photo, Photos int    // 1-based position among the holdout photos, and their number
	File          string // the photo's file as the capture names it
	Stage         string // "render" or "compare"
	// Fraction is the fraction of all the work done, 0..1.
	Fraction float64
}

func (o Options) withDefaults() Options {
	if o.MaxSPP <= 0 {
		o.MaxSPP = DefaultMaxSPP
	}
	if o.NoiseRatio <= 0 {
		o.NoiseRatio = DefaultNoiseRatio
	}
	if o.MaxDepth <= 0 {
		o.MaxDepth = DefaultMaxDepth
	}
	if o.Seed == 0 {
		o.Seed = 1
	}
	if o.Tolerance.Name == "" {
		o.Tolerance = metrics.FADGI3Star
	}
	o.Metrics.Threads = o.Threads
	return o
}

// Check reports options out of their documented ranges.
func (o Options) Check() error {
	switch {
	case o.SPP < 0 || o.SPP > MaxSPPLimit:
		return fmt.Errorf("samples per pixel %d: expected 0 (automatic) or 1..%d", o.SPP, MaxSPPLimit)
	case o.MaxSPP < 0 || o.MaxSPP > MaxSPPLimit:
		return fmt.Errorf("largest samples per pixel %d: expected 0 (default) or 1..%d", o.MaxSPP, MaxSPPLimit)
	case o.MaxDepth < 0 || o.MaxDepth > 1024:
		return fmt.Errorf("depth %d: expected 0 (default) or 1..1024", o.MaxDepth)
	case o.NoiseRatio < 0 || math.IsNaN(o.NoiseRatio) || math.IsInf(o.NoiseRatio, 0):
		return fmt.Errorf("noise ratio %v: expected a finite value >= 0", o.NoiseRatio)
	case o.Threads < 0:
		return fmt.Errorf("threads %d: expected >= 0", o.Threads)
	}
	return nil
}

// Setup is what every holdout comparison of one capture and one materials
// file shares: the mesh's BVH, the materials per mesh segment, the map from
// mesh segment labels to capture segments, and the radiometric scale.
type Setup struct {
	Capture   *capture.Capture
	Mesh      *render.Mesh
	Scene     *render.Scene
	Materials *materials.File
	// Params are the reflectance of every mesh segment label, as
	// render.Render takes them.
	Params []brdf.Params
	// LabelSegment maps a mesh segment label to the capture segment index
	// (capture.SegmentIndex), -1 for none.
	LabelSegment []int
	// SegmentNames are the capture's effective segments' names.
	SegmentNames []string
	// Scale is the radiometric scale applied to renders (the materials
	// file's, 1 when it records none).
	Scale float64
}

// NewSetup checks the materials file against the capture and mesh and
// builds the scene. Errors name the file at fault.
func NewSetup(c *capture.Capture, m *render.Mesh, mf *materials.File, threads int) (*Setup, error) {
	if err := mf.Validate(c, m); err != nil {
		return nil, err
	}
	params, err := mf.ParamsForMesh(c, m)
	if err != nil {
		return nil, err
	}
	labelSeg, err := c.SegmentIndex(m)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", c.Path, err)
	}
	sc, err := render.NewScene(m, threads)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", c.Resolve(c.Mesh), err)
	}
	s := &Setup{Capture: c, Mesh: m, Scene: sc, Materials: mf, Params: params, LabelSegment: labelSeg, Scale: 1}
	for _, seg := range c.EffectiveSegments(m) {
		s.SegmentNames = append(s.SegmentNames, seg.Name)
	}
	if mf.Fit != nil && mf.Fit.RadiometricScale != 0 {
		s.Scale = mf.Fit.RadiometricScale
		if !(s.Scale > 0) || math.IsInf(s.Scale, 0) {
			return nil, &materials.Error{File: mf.Path, Path: "fit.radiometric_scale", Msg: fmt.Sprintf("%v: expected a finite positive factor", s.Scale)}
		}
	}
	return s, nil
}

// Sampling records how the samples per pixel of a render were chosen.
type Sampling struct {
	// SPP is the samples per pixel of the compared render.
	SPP int `json:"spp"`
	// Automatic is true when the noise rule chose SPP.
	Automatic bool `json:"automatic"`
	// PhotoNoise is the estimated standard deviation of the photo's noise
	// (linear radiance, capture scale); 0 when it could not be estimated.
	PhotoNoise float64 `json:"photo_noise"`
	// RenderNoise is the median standard error of the render's pixels
	// (same units), the quantity the rule holds against PhotoNoise;
	// RenderNoiseRMS is the root-mean-square one, which the rare bright
	// paths of indirect light dominate.
	RenderNoise    float64 `json:"render_noise"`
	RenderNoiseRMS float64 `json:"render_noise_rms"`
	// Target is the wanted RenderNoise / PhotoNoise.
	Target float64 `json:"target_ratio"`
	// WantedSPP is the rule's N at the last pass evaluated; Capped is
	// true when it exceeds SPP (the cap bound).
	Capped    bool `json:"capped"`
	WantedSPP int  `json:"wanted_spp,omitempty"`
}

// Ratio is RenderNoise / PhotoNoise (NaN when the photo's noise is unknown).
func (s Sampling) Ratio() float64 {
	if s.PhotoNoise <= 0 {
		return math.NaN()
	}
	return s.RenderNoise / s.PhotoNoise
}

// Holdout is the comparison of one holdout photo with the render of its view.
type Holdout struct {
	Photo   int      // index in the capture
	File    string   // as the capture names it
	Camera  string   // camera id
	Lights  []string // light ids
	Width   int
	Height  int
	Sampler Sampling
	// MaxDepth and Seed are the render's settings.
	MaxDepth int
	Seed     uint64
	// RenderSeconds is the wall time of the render; CompareSeconds that
	// of the metrics.
	RenderSeconds  float64
	CompareSeconds float64
	Result         *metrics.Result
	Maps           *metrics.Maps
	Verdict        metrics.Verdict
	// Render is the compared render (linear, radiometric scale applied),
	// Photo the decoded photo, Valid the compared pixels.
	Render, PhotoPix []float32
	Valid            []bool
}

// PhotoLights converts the lights of photo pi of c to the renderer's.
func PhotoLights(c *capture.Capture, pi int) ([]render.Light, error) {
	if pi < 0 || pi >= len(c.Photos) {
		return nil, fmt.Errorf("%s: photo index %d out of range (%d photos)", c.Path, pi, len(c.Photos))
	}
	var out []render.Light
	for k, id := range c.Photos[pi].Lights {
		l, _ := c.LightByID(id)
		if l == nil {
			return nil, fmt.Errorf("%s: photos[%d].lights[%d]: no light %q", c.Path, pi, k, id)
		}
		v := func(a [3]float64) render.Vec3 { return render.V3(a[0], a[1], a[2]) }
		var r render.Light
		switch l.Type {
		case capture.LightPoint:
			r = render.Light{Kind: render.PointLight, Position: v(l.Position), Intensity: brdf.RGB(l.Intensity)}
		case capture.LightSphere:
			r = render.Light{Kind: render.SphereLight, Position: v(l.Position), Intensity: brdf.RGB(l.Intensity), Radius: l.Radius}
		case capture.LightDirectional:
			r = render.Light{Kind: render.DirectionalLight, Direction: v(l.Direction), Irradiance: brdf.RGB(l.Irradiance)}
		default:
			return nil, fmt.Errorf("%s: light %q: unknown type %q (expected point, sphere or directional)", c.Path, id, l.Type)
		}
		if err := r.Validate(); err != nil {
			return nil, fmt.Errorf("%s: light %q: %w", c.Path, id, err)
		}
		out = append(out, r)
	}
	return out, nil
}

// Pinhole converts a capture camera to the renderer's.
func Pinhole(c *capture.Camera) render.Pinhole {
	return render.Pinhole{Width: c.Width, Height: c.Height, Fx: c.Fx, Fy: c.Fy, Cx: c.Cx, Cy: c.Cy, Dist: c.Distortion,
		Position: render.V3(c.Position[0], c.Position[1], c.Position[2]), Rotation: c.Rotation}
}

// view is the geometry of one photo's camera: which pixels see the mesh and
// the capture segment of each.
type view struct {
	cam     render.Pinhole
	hit     []bool
	segment []int32
}

func (s *Setup) castView(ctx context.Context, pi, threads int) (*view, error) {
	c := s.Capture
	cc, ci := c.CameraByID(c.Photos[pi].Camera)
	if ci < 0 {
		return nil, fmt.Errorf("%s: photos[%d].camera: no camera %q", c.Path, pi, c.Photos[pi].Camera)
	}
	cam := Pinhole(cc)
	gb, err := render.Cast(ctx, s.Scene, cam, image.Rect(0, 0, cam.Width, cam.Height), threads)
	if err != nil {
		return nil, err
	}
	v := &view{cam: cam, hit: gb.Hit, segment: make([]int32, len(gb.Hit))}
	for i := range v.segment {
		v.segment[i] = -1
		if !gb.Hit[i] {
			continue
		}
		l := int(gb.Segment[i])
		switch {
		case l >= 0 && l < len(s.LabelSegment):
			v.segment[i] = int32(s.LabelSegment[l])
		case len(s.LabelSegment) == 0:
			v.segment[i] = 0
		}
	}
	return v, nil
}

// CompareHoldout renders the view of photo pi under its lights and compares
// it with the photo. k is the photo's position among the holdout photos
// (0-based) and n their number, for the seed and the progress.
func (s *Setup) CompareHoldout(ctx context.Context, pi, k, n int, opts Options) (*Holdout, error) {
	if err := opts.Check(); err != nil {
		return nil, err
	}
	opts = opts.withDefaults()
	c := s.Capture
	if pi < 0 || pi >= len(c.Photos) {
		return nil, fmt.Errorf("%s: photo index %d out of range (%d photos)", c.Path, pi, len(c.Photos))
	}
	file := c.Photos[pi].File
	progress := func(stage string, frac float64) {
		if opts.Progress != nil {
			opts.Progress(Progress{Photo: k + 1, Photos: max(n, 1), File: file, Stage: stage,
				Fraction: (float64(k) + math.Min(math.Max(frac, 0), 1)) / float64(max(n, 1))})
		}
	}
	lights, err := PhotoLights(c, pi)
	if err != nil {
		return nil, &InputError{err}
	}
	img, err := c.LoadPhoto(pi)
	if err != nil {
		return nil, &InputError{err}
	}
	mask, err := c.LoadMask(pi, img.Width, img.Height)
	if err != nil {
		return nil, &InputError{err}
	}
	v, err := s.castView(ctx, pi, opts.Threads)
	if err != nil {
		return nil, err
	}
	w, h := v.cam.Width, v.cam.Height
	if img.Width != w || img.Height != h {
		return nil, &InputError{fmt.Errorf("%s: photo %s is %dx%d but its camera %q is %dx%d", c.Path, file, img.Width, img.Height, c.Photos[pi].Camera, w, h)}
	}
	valid := make([]bool, w*h)
	for i := range valid {
		valid[i] = v.hit[i] && (mask == nil || mask[i]) && (img.Saturated == nil || !img.Saturated[i])
	}

	seed := opts.Seed + uint64(k)
	ho := &Holdout{Photo: pi, File: file, Camera: c.Photos[pi].Camera, Lights: append([]string(nil), c.Photos[pi].Lights...),
		Width: w, Height: h, MaxDepth: opts.MaxDepth, Seed: seed, PhotoPix: img.Pix, Valid: valid}
	ls := &render.Lights{Lights: lights}
	settings := render.Settings{MaxDepth: opts.MaxDepth, Seed: seed, Threads: opts.Threads}
	start := time.Now()

	// Noise is measured away from silhouettes and segment borders, where a
	// pixel mixes surfaces and its spread is that of the mix, not noise.
	inner := interior(valid, v.segment, w, h)
	smp := Sampling{SPP: opts.SPP, Target: opts.NoiseRatio, PhotoNoise: PhotoNoise(img.Pix, w, h, inner)}
	pixels := float64(w) * float64(h)
	var film *render.Film
	if opts.SPP > 0 {
		settings.SPP = opts.SPP
		settings.OnProgress = func(done, total int64) { progress("render", 0.95*float64(done)/float64(total)) }
		if film, err = render.Render(ctx, s.Scene, v.cam, ls, s.Params, settings); err != nil {
			return nil, err
		}
	} else {
		// The noise rule, applied to the render itself: Render works in
		// passes of 1, 2, 4, ... samples per pixel and every sample depends
		// only on (seed, pixel, sample index), so the film after a pass is
		// exactly a render with that many samples. After each pass of at
		// least MinSPP samples the rule is evaluated on the film; once met,
		// the render is cancelled from OnPass, before the next pass takes
		// its first tile (Render checks the context before every tile), and
		// the film stands at that pass.
		smp.Automatic = true
		settings.SPP = max(opts.MaxSPP, MinSPP)
		rctx, stop := context.WithCancel(ctx)
		defer stop()
		expect := float64(MinSPP)
		stoppedAt := 0
		settings.OnProgress = func(done, total int64) {
			progress("render", 0.95*math.Min(float64(done)/(pixels*expect), 1))
		}
		settings.OnPass = func(p render.Pass) {
			if p.SPP < MinSPP {
				return
			}
			s2, _ := sampleVariance(p.Film, inner)
			s2 *= s.Scale * s.Scale
			_, smp.WantedSPP = chooseSPP(s2, smp.PhotoNoise, opts.NoiseRatio, opts.MaxSPP)
			expect = float64(min(smp.WantedSPP, settings.SPP))
			if p.SPP >= smp.WantedSPP {
				stoppedAt = p.SPP
				stop()
			}
		}
		film, err = render.Render(rctx, s.Scene, v.cam, ls, s.Params, settings)
		switch {
		case ctx.Err() != nil:
			return nil, ctx.Err()
		case err != nil && !(errors.Is(err, context.Canceled) && stoppedAt > 0):
			return nil, err
		case stoppedAt > 0 && film.SPP != stoppedAt:
			return nil, fmt.Errorf("report: internal: the render stopped at %d samples per pixel, not at the pass of %d", film.SPP, stoppedAt)
		}
		smp.SPP = film.SPP
		smp.Capped = smp.WantedSPP > film.SPP
	}
	med, mean := sampleVariance(film, inner)
	smp.RenderNoise = math.Sqrt(med/float64(film.SPP)) * s.Scale
	smp.RenderNoiseRMS = math.Sqrt(mean/float64(film.SPP)) * s.Scale
	ho.Sampler = smp
	ho.RenderSeconds = time.Since(start).Seconds()
	rpix := film.RGB()
	sc := float32(s.Scale)
	for i := range rpix {
		rpix[i] *= sc
	}
	ho.Render = rpix

	progress("compare", 0.95)
	t0 := time.Now()
	res, maps, err := metrics.Compare(rpix, img.Pix, w, h, valid, v.segment, s.SegmentNames, opts.Metrics)
	if err != nil {
		if errors.Is(err, metrics.ErrNoPixels) {
			return nil, &InputError{fmt.Errorf("%s: photo %s: no pixel to compare (the mesh is not seen, or every pixel it covers is masked or saturated): %w", c.Path, file, err)}
		}
		return nil, fmt.Errorf("%s: photo %s: %w", c.Path, file, err)
	}
	ho.CompareSeconds = time.Since(t0).Seconds()
	ho.Result, ho.Maps = res, maps
	ho.Verdict = opts.Tolerance.Verdict(res)
	progress("compare", 1)
	return ho, nil
}

// interior marks the valid pixels whose 3x3 neighbourhood is valid and of
// one segment.
func interior(valid []bool, seg []int32, w, h int) []bool {
	out := make([]bool, w*h)
	for y := 1; y < h-1; y++ {
		for x := 1; x < w-1; x++ {
			i := y*w + x
			ok := valid[i]
			for dy := -1; ok && dy <= 1; dy++ {
				for dx := -1; dx <= 1; dx++ {
					j := i + dy*w + dx
					if !valid[j] || seg[j] != seg[i] {
						ok = false
						break
					}
				}
			}
			out[i] = ok
		}
	}
	return out
}

// sampleVariance returns the median and the mean over the valid pixels of
// the per-sample variance of the film's pixels (Film.Variance times the
// samples per pixel, the mean of the three channels).
func sampleVariance(f *render.Film, valid []bool) (median, mean float64) {
	var vs []float64
	var sum float64
	for y := 0; y < f.Height; y++ {
		for x := 0; x < f.Width; x++ {
			if valid != nil && !valid[y*f.Width+x] {
				continue
			}
			v := f.Variance(x, y)
			m := (v[0] + v[1] + v[2]) / 3 * float64(f.SPP)
			if !math.IsNaN(m) && !math.IsInf(m, 0) {
				vs = append(vs, m)
				sum += m
			}
		}
	}
	n := len(vs)
	if n == 0 {
		return 0, 0
	}
	sort.Float64s(vs)
	median = vs[n/2]
	if n%2 == 0 {
		median = (vs[n/2-1] + vs[n/2]) / 2
	}
	return median, sum / float64(n)
}

// chooseSPP applies the noise rule: the smallest N with s2/N <= (ratio *
// sigma)^2, within [MinSPP, maxSPP]. It returns N and the wanted value before
// the cap (maxSPP+1 when sigma is 0: no finite N meets the rule).
func chooseSPP(s2, sigma, ratio float64, maxSPP int) (spp, wanted int) {
	if s2 <= 0 {
		return MinSPP, MinSPP
	}
	if sigma <= 0 {
		return maxSPP, maxSPP + 1
	}
	t := sigma * ratio
	want := math.Ceil(s2 / (t * t))
	if want > float64(MaxSPPLimit) {
		want = float64(MaxSPPLimit) + 1
	}
	wanted = max(int(want), MinSPP)
	return min(wanted, max(maxSPP, MinSPP)), wanted
}
