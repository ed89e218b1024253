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
	DefaultMaxSPP = 64
	// MinSPP is the default of Options.MinSPP, the fewest samples per
	// pixel the noise rule chooses. The rule holds the median pixel's
	// noise; the rarer noisy pixels (glossy surfaces lit by indirect
	// light) make the upper Delta E statistics, and at fewer samples their
	// noise shows there: on the small demo capture, 4 samples instead of
	// 16 raised the 95th percentile of a view from 5.7 to 7.8 with the
	// median pixel's noise still at 0.3 times the photo's.
	MinSPP = 16
	// LowestMinSPP bounds Options.MinSPP from below: more than one position
	// inside every pixel's box filter, and a film with a variance
	// estimate of its own.
	LowestMinSPP = 2
	// PixelMinSPP is the default of Options.PixelMinSPP, the fewest
	// samples adaptive sampling gives any one pixel: the pilot's first
	// count, so that no pixel's error is extrapolated from more samples
	// than it has.
	PixelMinSPP       = 4
	DefaultMaxDepth   = 4
	DefaultNoiseRatio = 0.5
	// DefaultIndirectClamp is the default of Options.IndirectClamp: a
	// quarter of the photo's full scale, the bound the demo's own
	// photographs are made with (assets/demo).
	DefaultIndirectClamp = 0.25
	// MaxSPPLimit bounds Options.SPP and Options.MaxSPP.
	MaxSPPLimit = 1 << 16
	// PilotSPP, PilotReplicates and PilotPixels size the noise rule's
	// pilot render: PilotReplicates independent renders (other
	// scrambling seeds) of PilotSPP samples each, of at most PilotPixels
	// pixels spread over the compared interior. The spread of a pixel's
	// replicate means after n samples, for n in PilotCounts (the pilot's
	// passes), is the error variance of an n-sample mean as the
	// renderer's sampler makes it. The variance the film estimates from
	// one render's samples treats them as independent, but the sampler's
	// scrambled Sobol points are stratified: on the small demo capture's
	// four views the replicates' spread at 16 samples was 0.35 to 0.47 of
	// that estimate, and at 32 samples 0.29 to 0.38, falling faster than
	// 1/N. So the rule, which extrapolates the error measured at the
	// largest pilot count at or below a render's N by 1/N, errs on the
	// noisy side. Many samples of each pixel (64), because the variance
	// of a path tracer's samples is dominated by rare bright paths
	// (indirect light reaching a glossy surface).
	PilotSPP        = 8
	PilotReplicates = 8
	PilotPixels     = 4096
	// DefaultPanelWidth is the default of Options.PanelWidth: the page's
	// strip shows three panels across its column of 64em, about 340 CSS
	// pixels each.
	DefaultPanelWidth = 400
)

// PilotCounts are the sample counts at which the pilot measures the error:
// passes of the pilot render, the last PilotSPP.
var PilotCounts = []int{PixelMinSPP, PilotSPP}

// Options control the holdout comparisons. The zero value is the documented
// default, field by field.
type Options struct {
	// SPP fixes the samples per pixel of every render; 0 chooses them by
	// the noise rule of the package documentation.
	SPP int
	// MaxSPP caps the rule's choice; 0 means DefaultMaxSPP.
	MaxSPP int
	// MinSPP is the rule's floor; 0 means MinSPP, else LowestMinSPP or
	// more.
	MinSPP int
	// NoiseRatio is the target ratio of the render's standard error to the
	// photo's noise; 0 means DefaultNoiseRatio.
	NoiseRatio float64
	// Uniform turns adaptive sampling off: with the noise rule, every
	// pixel gets the rule's samples. By default (false) each pixel stops
	// once its own standard error is below NoiseRatio times the photo's
	// noise (render.Adaptive), after at least PixelMinSPP samples and at
	// most the rule's count.
	Uniform bool
	// PixelMinSPP is the fewest samples of any pixel with adaptive
	// sampling; 0 means PixelMinSPP, else LowestMinSPP or more.
	PixelMinSPP int
	// MaxDepth is the render's largest number of scattering events (direct
	// and indirect light); 0 means DefaultMaxDepth.
	MaxDepth int
	// IndirectClamp bounds, as a fraction of the photo's full scale (its
	// white level in the capture's radiance), what any one path sample
	// may add through two or more scatterings (render.Settings'
	// IndirectClamp). A photograph averages millions of photons per
	// pixel; a render of a few dozen samples shows the same caustic light
	// as rare bright specks, which dominate the render's noise and so the
	// samples the noise rule asks for. Light seen directly or after one
	// scattering, which is what the fitted materials decide, is never
	// clamped. 0 means DefaultIndirectClamp; negative means no clamp.
	IndirectClamp float64
	// Seed selects the render's random sequence; 0 means 1. Holdout photo
	// k is rendered with Seed + k, so views are independent.
	Seed uint64
	// Threads is the number of worker goroutines; 0 means all cores.
	// Results do not depend on it.
	Threads int
	// Tolerance judges each comparison; the zero value means
	// metrics.FADGI3Star.
	Tolerance metrics.Tolerance
	// Metrics are passed to metrics.Compare (Threads is set from Threads,
	// and ImageBlock from PanelWidth unless set).
	Metrics metrics.Options
	// PanelWidth is the largest width in pixels of each panel of the
	// pictures (photo, simulation, maps): a wider view is drawn reduced by
	// the smallest whole factor that fits, each picture pixel the mean of
	// a block of image pixels, which keeps the page light enough to mail.
	// The metrics always use every pixel. 0 means DefaultPanelWidth.
	PanelWidth int
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
	if o.MinSPP <= 0 {
		o.MinSPP = MinSPP
	}
	if o.NoiseRatio <= 0 {
		o.NoiseRatio = DefaultNoiseRatio
	}
	if o.PixelMinSPP <= 0 {
		o.PixelMinSPP = PixelMinSPP
	}
	if o.MaxDepth <= 0 {
		o.MaxDepth = DefaultMaxDepth
	}
	if o.IndirectClamp == 0 {
		o.IndirectClamp = DefaultIndirectClamp
	}
	if o.Seed == 0 {
		o.Seed = 1
	}
	if o.Tolerance.Name == "" {
		o.Tolerance = metrics.FADGI3Star
	}
	if o.PanelWidth <= 0 {
		o.PanelWidth = DefaultPanelWidth
	}
	o.Metrics.Threads = o.Threads
	return o
}

// imageBlock is the block size that brings a view of width w within the
// panel width.
func (o Options) imageBlock(w int) int {
	if o.Metrics.ImageBlock > 0 {
		return o.Metrics.ImageBlock
	}
	return min(metrics.MaxImageBlock, max(1, (w+o.PanelWidth-1)/o.PanelWidth))
}

// Check reports options out of their documented ranges.
func (o Options) Check() error {
	switch {
	case o.SPP < 0 || o.SPP > MaxSPPLimit:
		return fmt.Errorf("samples per pixel %d: expected 0 (automatic) or 1..%d", o.SPP, MaxSPPLimit)
	case o.MaxSPP < 0 || o.MaxSPP > MaxSPPLimit:
		return fmt.Errorf("largest samples per pixel %d: expected 0 (default) or 1..%d", o.MaxSPP, MaxSPPLimit)
	case o.MinSPP != 0 && (o.MinSPP < LowestMinSPP || o.MinSPP > MaxSPPLimit):
		return fmt.Errorf("fewest samples per pixel %d: expected 0 (default %d) or %d..%d", o.MinSPP, MinSPP, LowestMinSPP, MaxSPPLimit)
	case o.PixelMinSPP != 0 && (o.PixelMinSPP < LowestMinSPP || o.PixelMinSPP > MaxSPPLimit):
		return fmt.Errorf("fewest samples of a pixel %d: expected 0 (default %d) or %d..%d", o.PixelMinSPP, PixelMinSPP, LowestMinSPP, MaxSPPLimit)
	case o.MaxDepth < 0 || o.MaxDepth > 1024:
		return fmt.Errorf("depth %d: expected 0 (default) or 1..1024", o.MaxDepth)
	case o.NoiseRatio < 0 || math.IsNaN(o.NoiseRatio) || math.IsInf(o.NoiseRatio, 0):
		return fmt.Errorf("noise ratio %v: expected a finite value >= 0", o.NoiseRatio)
	case math.IsNaN(o.IndirectClamp) || math.IsInf(o.IndirectClamp, 0):
		return fmt.Errorf("indirect clamp %v: expected a finite fraction of full scale (negative for none)", o.IndirectClamp)
	case o.Threads < 0:
		return fmt.Errorf("threads %d: expected >= 0", o.Threads)
	case o.PanelWidth < 0:
		return fmt.Errorf("panel width %d: expected 0 (default) or more", o.PanelWidth)
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
	// SPP is the samples per pixel of the compared render; with adaptive
	// sampling, the most any pixel got.
	SPP int `json:"spp"`
	// Automatic is true when the noise rule chose SPP.
	Automatic bool `json:"automatic"`
	// Adaptive is true when each pixel stopped once its own standard
	// error met the target (after at least PixelMinSPP samples, at most
	// SPP); MeanSPP is then the mean samples per traced pixel.
	Adaptive    bool    `json:"adaptive"`
	PixelMinSPP int     `json:"pixel_min_spp,omitempty"`
	MeanSPP     float64 `json:"mean_spp"`
	// PhotoNoise is the estimated standard deviation of the photo's noise
	// (linear radiance, capture scale); 0 when it could not be estimated.
	PhotoNoise float64 `json:"photo_noise"`
	// RenderNoise is the median standard error of the render's pixels
	// (same units), the quantity the rule holds against PhotoNoise;
	// RenderNoiseRMS is the root-mean-square one, which the rare bright
	// paths of indirect light dominate. With uniform sampling by the rule
	// they are the pilot's per-sample variances divided by SPP; with
	// adaptive sampling or a fixed SPP, the render's own (each pixel's
	// sample variance over its samples), over the pixels the pilot
	// measures.
	RenderNoise    float64 `json:"render_noise"`
	RenderNoiseRMS float64 `json:"render_noise_rms"`
	// Target is the wanted RenderNoise / PhotoNoise.
	Target float64 `json:"target_ratio"`
	// WantedSPP is the rule's N before the cap; Capped is true when it
	// exceeds SPP (the cap bound).
	Capped    bool `json:"capped"`
	WantedSPP int  `json:"wanted_spp,omitempty"`
	// PilotSPP, PilotReplicates and PilotPixels describe the pilot render
	// the rule measured the render's error on (automatic sampling only):
	// replicates of PilotSPP samples each of PilotPixels pixels, the
	// error measured after each of PilotCounts samples.
	PilotSPP        int   `json:"pilot_spp,omitempty"`
	PilotCounts     []int `json:"pilot_counts,omitempty"`
	PilotReplicates int   `json:"pilot_replicates,omitempty"`
	PilotPixels     int   `json:"pilot_pixels,omitempty"`
	// RenderedPixels is the number of pixels path-traced: those within one
	// pixel of a pixel whose centre ray hits the mesh. The rest see no
	// mesh and are left black.
	RenderedPixels int `json:"rendered_pixels"`
	// IndirectClamp is the bound on one sample's light of two or more
	// scatterings, in the capture's radiance (0: none); see
	// Options.IndirectClamp.
	IndirectClamp float64 `json:"indirect_clamp"`
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
	var clampCapture float64
	if opts.IndirectClamp > 0 {
		d, err := c.Decoding(pi)
		if err != nil {
			return nil, &InputError{err}
		}
		// Full scale in the capture's radiance is the exposure
		// multiplier; renders are in the capture's radiance over Scale.
		clampCapture = opts.IndirectClamp * d.Exposure
		settings.IndirectClamp = clampCapture / s.Scale
	}
	start := time.Now()

	// Noise is measured away from silhouettes and segment borders, where a
	// pixel mixes surfaces and its spread is that of the mix, not noise.
	inner := interior(valid, v.segment, w, h)
	smp := Sampling{SPP: opts.SPP, Target: opts.NoiseRatio, PhotoNoise: PhotoNoise(img.Pix, w, h, inner), IndirectClamp: clampCapture}
	// Only pixels that can see the mesh are traced: every sample depends
	// on (seed, pixel, sample index) alone, so a pixel's value is the same
	// whichever other pixels are rendered.
	on := dilate(v.hit, w, h)
	for _, b := range on {
		if b {
			smp.RenderedPixels++
		}
	}
	var film *render.Film
	var gc *gatherCamera
	var pilotS2 [][]float64 // the pilot's per-sample variance of each gathered pixel at each of PilotCounts
	if opts.SPP > 0 {
		settings.SPP = opts.SPP
	} else {
		// The noise rule: a pilot of PilotReplicates independent
		// renders of PilotSPP samples of at most PilotPixels interior
		// pixels, spread over the view, measures each pixel's error
		// variance V_j(n) of an n-sample mean, n in PilotCounts, from
		// the spread of its replicate means; s^2(n) = median(V_j(n)) n
		// is the per-sample variance it implies, and the render gets
		// the N of chooseSPPCounts. The pilot traces the same pixels'
		// footprints gathered into a compact film (gatherCamera), so it
		// costs PilotReplicates * PilotSPP * PilotPixels samples, a
		// fraction of one sample per pixel of a large view, and its
		// samples are independent of the render's (other film
		// coordinates, other scrambling).
		smp.Automatic = true
		gc = newGatherCamera(v.cam, inner, PilotPixels)
		gc.reps = PilotReplicates
		smp.PilotSPP, smp.PilotCounts, smp.PilotReplicates, smp.PilotPixels = PilotSPP, PilotCounts, PilotReplicates, len(gc.idx)
		ps := settings
		ps.SPP = PilotSPP
		ps.OnProgress = func(done, total int64) { progress("render", 0.05*float64(done)/float64(total)) }
		pilotS2 = make([][]float64, len(PilotCounts))
		meds := make([]float64, len(PilotCounts))
		if len(gc.idx) > 0 {
			ps.OnPass = func(p render.Pass) {
				for c, n := range PilotCounts {
					if p.SPP == n {
						pilotS2[c] = replicateVariance(p.Film, gc)
						for j := range pilotS2[c] {
							pilotS2[c][j] *= float64(n)
						}
					}
				}
			}
			if _, err := render.Render(ctx, s.Scene, gc, ls, s.Params, ps); err != nil {
				return nil, err
			}
			for c := range PilotCounts {
				if pilotS2[c] == nil {
					return nil, fmt.Errorf("report: pilot count %d is not one of the pilot render's passes", PilotCounts[c])
				}
				med, _ := medianMean(pilotS2[c])
				meds[c] = med / chiSquareMedianRatio(PilotReplicates-1) * s.Scale * s.Scale
			}
		}
		settings.SPP, smp.WantedSPP = chooseSPPCounts(PilotCounts, meds, smp.PhotoNoise, opts.NoiseRatio, opts.MinSPP, opts.MaxSPP)
		smp.Capped = smp.WantedSPP > settings.SPP
		// Adaptive sampling: the rule's count is every pixel's most;
		// a pixel whose own standard error (with its neighbours', see
		// render.Adaptive) is below the target stops sooner.
		if t := opts.NoiseRatio * smp.PhotoNoise / s.Scale; !opts.Uniform && t > 0 && settings.SPP > opts.PixelMinSPP {
			smp.Adaptive, smp.PixelMinSPP = true, opts.PixelMinSPP
			settings.Adaptive = &render.Adaptive{MinSPP: opts.PixelMinSPP, Variance: t * t}
		}
	}
	base := 0.0
	if smp.Automatic {
		base = 0.05
	}
	settings.OnProgress = func(done, total int64) {
		progress("render", base+(0.95-base)*float64(done)/float64(total))
	}
	if film, err = render.Render(ctx, s.Scene, &maskedCamera{cam: v.cam, on: on}, ls, s.Params, settings); err != nil {
		return nil, err
	}
	smp.SPP = film.SPP
	smp.MeanSPP = meanSamples(film, on)
	if smp.Automatic {
		// The render's noise from the pilot's independent samples of the
		// same pixels: their per-sample variance over the samples each
		// pixel got. (The render's own variance estimates treat its
		// stratified samples as independent, and with adaptive sampling
		// they are those its stops were decided on.)
		se2 := make([]float64, 0, len(gc.idx))
		for j, i := range gc.idx {
			n := film.Samples(int(i)%w, int(i)/w)
			se2 = append(se2, pilotS2[pilotCount(PilotCounts, n)][j]/float64(n))
		}
		med, mean := medianMean(se2)
		med /= chiSquareMedianRatio(PilotReplicates - 1)
		smp.RenderNoise = math.Sqrt(med) * s.Scale
		smp.RenderNoiseRMS = math.Sqrt(mean) * s.Scale
	} else {
		med, mean := meanVariance(film, inner)
		smp.RenderNoise = math.Sqrt(med) * s.Scale
		smp.RenderNoiseRMS = math.Sqrt(mean) * s.Scale
	}
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
	mopt := opts.Metrics
	mopt.ImageBlock = opts.imageBlock(w)
	res, maps, err := metrics.Compare(rpix, img.Pix, w, h, valid, v.segment, s.SegmentNames, mopt)
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

// maskedCamera is a camera that gives rays only through the pixels marked
// on; Render skips the others (no ray, no radiance).
type maskedCamera struct {
	cam render.Pinhole
	on  []bool
}

func (m *maskedCamera) Ray(px, py float64) (render.Ray, bool) {
	// A sample of pixel (x, y) lies in [x-0.5, x+0.5) x [y-0.5, y+0.5).
	x, y := int(math.Floor(px+0.5)), int(math.Floor(py+0.5))
	w, h := m.cam.Size()
	if x < 0 || y < 0 || x >= w || y >= h || !m.on[y*w+x] {
		return render.Ray{}, false
	}
	return m.cam.Ray(px, py)
}

func (m *maskedCamera) Project(p render.Vec3) (float64, float64, bool) { return m.cam.Project(p) }
func (m *maskedCamera) Size() (int, int)                               { return m.cam.Size() }

// dilate marks the pixels within one pixel (8-neighbourhood) of a marked
// one: a pixel whose centre misses the mesh may still be partly covered.
func dilate(in []bool, w, h int) []bool {
	out := make([]bool, len(in))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			if !in[y*w+x] {
				continue
			}
			for yy := max(0, y-1); yy <= min(h-1, y+1); yy++ {
				for xx := max(0, x-1); xx <= min(w-1, x+1); xx++ {
					out[yy*w+xx] = true
				}
			}
		}
	}
	return out
}

// gatherCamera traces a subset of a camera's pixels packed into a compact
// film gatherWidth pixels wide: film pixel j is the camera's pixel idx[j],
// with the same offset inside the pixel. With reps above 1 the film holds
// that many copies one below the other (rows r*ch to (r+1)*ch-1 for copy
// r), whose different film coordinates give independent samples of the
// same pixels.
type gatherCamera struct {
	cam    render.Pinhole
	idx    []int32
	cw, ch int
	reps   int
}

const gatherWidth = 128

// newGatherCamera gathers at most n of the pixels marked in, every k-th in
// row-major order, so that they spread over the whole view.
func newGatherCamera(cam render.Pinhole, in []bool, n int) *gatherCamera {
	total := 0
	for _, b := range in {
		if b {
			total++
		}
	}
	k := max(1, (total+n-1)/n)
	g := &gatherCamera{cam: cam, cw: gatherWidth}
	j := 0
	for i, b := range in {
		if !b {
			continue
		}
		if j%k == 0 {
			g.idx = append(g.idx, int32(i))
		}
		j++
	}
	g.ch = max(1, (len(g.idx)+g.cw-1)/g.cw)
	return g
}

func (g *gatherCamera) Ray(px, py float64) (render.Ray, bool) {
	cx, cy := math.Floor(px+0.5), math.Floor(py+0.5)
	if cy >= 0 {
		if int(cy)/g.ch >= max(1, g.reps) {
			return render.Ray{}, false
		}
		cy = float64(int(cy) % g.ch)
	}
	j := int(cy)*g.cw + int(cx)
	if cx < 0 || cy < 0 || int(cx) >= g.cw || j >= len(g.idx) {
		return render.Ray{}, false
	}
	w := g.cam.Width
	i := int(g.idx[j])
	return g.cam.Ray(float64(i%w)+(px-math.Floor(px+0.5)), float64(i/w)+(py-math.Floor(py+0.5)))
}

// Project is not meaningful for a gathered film; Render does not use it.
func (g *gatherCamera) Project(render.Vec3) (float64, float64, bool) { return 0, 0, false }
func (g *gatherCamera) Size() (int, int)                             { return g.cw, g.ch * max(1, g.reps) }

// replicateVariance returns, for every gathered pixel j of a film made
// through g, the sample variance of its copies' means (mean of the
// channels): an unbiased estimate of the error variance of one copy's
// mean, with reps-1 degrees of freedom.
func replicateVariance(f *render.Film, g *gatherCamera) []float64 {
	r := max(1, g.reps)
	out := make([]float64, len(g.idx))
	if r < 2 {
		for j := range out {
			out[j] = math.Inf(1)
		}
		return out
	}
	for j := range g.idx {
		var sum, sq brdf.RGB
		for k := 0; k < r; k++ {
			L, _ := f.Pixel(j%g.cw, k*g.ch+j/g.cw)
			for c := 0; c < 3; c++ {
				sum[c] += L[c]
				sq[c] += L[c] * L[c]
			}
		}
		var v float64
		for c := 0; c < 3; c++ {
			m := sum[c] / float64(r)
			v += math.Max(0, sq[c]-float64(r)*m*m) / float64(r-1)
		}
		out[j] = v / 3
	}
	return out
}

// chiSquareMedianRatio is the median of a chi-square variable with k
// degrees of freedom over k, by the Wilson-Hilferty approximation
// (Wilson and Hilferty, "The distribution of chi-square", PNAS 17, 1931):
// (1 - 2/(9k))^3. Variances estimated with k degrees of freedom have
// their median at about this fraction of the true value, so the rule
// divides the median of the replicate variances by it (for pixels of one
// variance, exactly the correction; for pixels of spread variances, at
// most it).
func chiSquareMedianRatio(k int) float64 {
	a := 1 - 2/(9*float64(k))
	return a * a * a
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

// medianMean returns the median and the mean of the finite values of vs
// (0, 0 when there are none).
func medianMean(vs []float64) (median, mean float64) {
	var fin []float64
	var sum float64
	for _, v := range vs {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			fin = append(fin, v)
			sum += v
		}
	}
	n := len(fin)
	if n == 0 {
		return 0, 0
	}
	sort.Float64s(fin)
	median = fin[n/2]
	if n%2 == 0 {
		median = (fin[n/2-1] + fin[n/2]) / 2
	}
	return median, sum / float64(n)
}

// meanVariance returns the median and the mean over the valid pixels of
// the estimated variance of the film's pixel means (Film.Variance, the
// mean of the three channels).
func meanVariance(f *render.Film, valid []bool) (median, mean float64) {
	var vs []float64
	for y := 0; y < f.Height; y++ {
		for x := 0; x < f.Width; x++ {
			if valid == nil || valid[y*f.Width+x] {
				v := f.Variance(x, y)
				vs = append(vs, (v[0]+v[1]+v[2])/3)
			}
		}
	}
	return medianMean(vs)
}

// meanSamples is the mean number of samples of the pixels marked on.
func meanSamples(f *render.Film, on []bool) float64 {
	var sum, n float64
	for y := 0; y < f.Height; y++ {
		for x := 0; x < f.Width; x++ {
			if on[y*f.Width+x] {
				sum += float64(f.Samples(x, y))
				n++
			}
		}
	}
	if n == 0 {
		return 0
	}
	return sum / n
}

// pilotCount is the index in counts (ascending) of the largest count at
// most n, 0 when n is below them all: the pilot measurement a pixel of n
// samples is extrapolated from.
func pilotCount(counts []int, n int) int {
	c := 0
	for k, m := range counts {
		if m <= n {
			c = k
		}
	}
	return c
}

// chooseSPPCounts applies the noise rule with per-sample variances s2[c]
// measured at counts[c] samples (ascending): the smallest N with
// s2[pilotCount(N)]/N <= (ratio * sigma)^2, then as chooseSPP within
// [minSPP, maxSPP].
func chooseSPPCounts(counts []int, s2 []float64, sigma, ratio float64, minSPP, maxSPP int) (spp, wanted int) {
	last := len(counts) - 1
	if sigma <= 0 {
		return chooseSPP(s2[last], sigma, ratio, minSPP, maxSPP)
	}
	for c := range counts {
		// The smallest N of segment [counts[c], counts[c+1]) (from 1 for
		// the first, unbounded for the last) that s2[c] allows.
		_, w := chooseSPP(s2[c], sigma, ratio, 1, MaxSPPLimit)
		if c > 0 {
			w = max(w, counts[c])
		}
		if c == last || w < counts[c+1] {
			wanted = max(w, minSPP)
			return min(wanted, maxSPP), wanted
		}
	}
	return 0, 0 // not reached: the last segment always returns
}

// chooseSPP applies the noise rule: the smallest N with s2/N <= (ratio *
// sigma)^2, within [minSPP, maxSPP] (the cap wins over the floor). It
// returns N and the wanted value before the cap (maxSPP+1 when sigma is 0:
// no finite N meets the rule).
func chooseSPP(s2, sigma, ratio float64, minSPP, maxSPP int) (spp, wanted int) {
	if s2 <= 0 {
		return min(minSPP, maxSPP), minSPP
	}
	if sigma <= 0 {
		return maxSPP, maxSPP + 1
	}
	t := sigma * ratio
	want := math.Ceil(s2 / (t * t))
	if want > float64(MaxSPPLimit) {
		want = float64(MaxSPPLimit) + 1
	}
	wanted = max(int(want), minSPP)
	return min(wanted, maxSPP), wanted
}
