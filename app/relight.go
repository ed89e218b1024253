package app

import (
	"context"
	"errors"
	"fmt"
	"image"
	"image/png"
	"io"
	"math"
	"path/filepath"
	"strings"
	"sync"
	"time"

	"patina/assets/atomicfile"
	"patina/assets/hdr"
	"patina/brdf"
	"patina/render"
)

// Environment kinds of the relight view.
const (
	EnvNone   = "none"
	EnvStudio = "studio"
	EnvSky    = "sky"
	EnvFile   = "file"
)

// envMapWidth is the width of generated studio and sky maps: small enough
// to make in a few tens of milliseconds, fine enough for soft lighting.
const envMapWidth = 512

// RelightState holds the relight view's settings and its latest image.
type RelightState struct {
	// Camera is -1 for the free orbit, or the photo whose calibrated
	// camera is used.
	Camera                       int
	Azimuth, Elevation, Distance float64 // orbit, degrees and metres
	Width, Height                int     // orbit image size, pixels
	// PhotoLights is -1 for none, or the photo whose lights are used.
	PhotoLights int
	// Point adds a point light at PointAzimuth, PointElevation (degrees,
	// about the up axis, seen from the object's centre) at three object
	// radii, with radiant intensity PointIntensity (W/sr, white).
	Point                                        bool
	PointAzimuth, PointElevation, PointIntensity float64
	// Env is none, studio, sky or file (EnvFile names the .hdr or .pfm).
	Env                      string
	EnvFile                  string
	SkyElevation, SkyAzimuth float64 // sun, degrees
	EnvRotate, EnvIntensity  float64 // degrees about up; radiance scale
	Exposure                 float64 // stops
	SPP                      int     // samples per pixel to refine to
	Active                   bool    // the view is shown: renders run only then

	// Latest image: linear RGB, its size and samples per pixel, and the
	// time since the render started.
	Pix        []float32
	W, H, Done int
	Elapsed    time.Duration
	// FirstImage is the time from the last restart to its first image.
	FirstImage time.Duration
	// Generation counts restarts.
	Generation int

	imageGen int // the generation of Pix
	// clampEV is the exposure the running render's indirect clamp was
	// set for (see relightClampFS).
	clampEV float64
	display *image.RGBA
	disp    Display
	envKey  string
	envMap  *hdr.Image
}

func defaultRelight() RelightState {
	return RelightState{Camera: -1, Azimuth: 30, Elevation: 20, Width: 512, Height: 384, PhotoLights: -1,
		Point: true, PointAzimuth: 60, PointElevation: 45, PointIntensity: 0,
		Env: EnvStudio, SkyElevation: 30, SkyAzimuth: 120, EnvIntensity: 1, SPP: 256}
}

// frameDistance is the orbit distance that frames the object in a 35
// degree field of view with a margin.
func (s *Session) frameDistance() float64 {
	r := math.Max(s.Radius, 1e-3)
	return 1.15 * r / math.Sin(35.0/2*math.Pi/180)
}

// pointIntensity is the default intensity of the placed light: it gives
// about the irradiance of the studio (1 W/m^2) at the object.
func (s *Session) pointIntensity() float64 {
	d := 3 * math.Max(s.Radius, 1e-3)
	return d * d
}

// RelightImage returns the display image of the latest render (nil before
// the first).
func (s *Session) RelightImage() *image.RGBA { return s.Relight.display }

// SetRelight replaces the settings and restarts the render.
func (s *Session) SetRelight(r RelightState) {
	keep := s.Relight
	r.Pix, r.W, r.H, r.Done, r.Elapsed, r.FirstImage, r.Generation = keep.Pix, keep.W, keep.H, keep.Done, keep.Elapsed, keep.FirstImage, keep.Generation
	r.display, r.disp, r.imageGen, r.clampEV = keep.display, keep.disp, keep.imageGen, keep.clampEV
	s.Relight = r
	s.RestartRelight()
}

// relightClampFS bounds what one path sample may add through two or more
// scatterings, as a fraction of the display's white at the exposure the
// render starts with: caustics (the glaze focusing a lamp onto the card)
// then refine as a glow instead of white specks that take thousands of
// samples to average out, the trade the report and the demo photos make
// too (render.Settings.IndirectClamp).
const relightClampFS = 0.25

// SetExposure changes the display exposure without restarting the render,
// unless it moves more than a stop from the exposure the render's clamp
// was set for.
func (s *Session) SetExposure(ev float64) {
	s.Relight.Exposure = ev
	if math.Abs(ev-s.Relight.clampEV) > 1 && s.Relight.Active {
		s.RestartRelight()
	}
	s.encodeRelight()
	s.notify(ChangeRelight)
}

// SetRelightActive starts rendering when the view shows, and stops it
// when the view hides.
func (s *Session) SetRelightActive(on bool) {
	s.Relight.Active = on
	if on {
		s.RestartRelight()
	} else {
		s.jobs.cancel("relight")
	}
}

func (s *Session) encodeRelight() {
	r := &s.Relight
	if r.Pix == nil {
		return
	}
	r.disp.Set(render.ToneMap{ExposureEV: r.Exposure, Highlight: render.RollOff}, 1)
	r.display = r.disp.Encode(r.display, r.Pix, r.W, r.H)
}

// envCache keeps the last environment map and the last oriented
// environment built from it, so that moving the rotation or intensity
// slider rebuilds only the sampling tables and changing a light rebuilds
// nothing. It is used from render goroutines, hence the mutex.
type envCache struct {
	mu     sync.Mutex
	key    string
	img    *hdr.Image
	envKey string
	env    *render.Environment
}

// envKey names the map of the settings.
func envKey(r *RelightState) string {
	switch r.Env {
	case EnvSky:
		return fmt.Sprintf("sky:%g,%g", r.SkyElevation, r.SkyAzimuth)
	case EnvFile:
		return "file:" + r.EnvFile
	}
	return r.Env
}

// environment returns the environment of the settings (nil for none). It
// may take a while the first time a map is made: call it off the UI
// goroutine.
func (ec *envCache) environment(r *RelightState, up render.Vec3) (*render.Environment, error) {
	if r.Env == EnvNone || r.Env == "" || r.EnvIntensity <= 0 {
		return nil, nil
	}
	ec.mu.Lock()
	defer ec.mu.Unlock()
	key := envKey(r)
	if key != ec.key || ec.img == nil {
		var w, h int
		var pix []float32
		var err error
		switch r.Env {
		case EnvStudio:
			w, h, pix, err = render.Studio{Width: envMapWidth}.Map()
		case EnvSky:
			w, h, pix, err = render.Sky{ElevationDeg: r.SkyElevation, AzimuthDeg: r.SkyAzimuth, Width: envMapWidth}.Map()
		case EnvFile:
			var img *hdr.Image
			if img, err = hdr.ReadFile(r.EnvFile); err == nil {
				w, h, pix = img.Width, img.Height, img.Pix
			}
		default:
			err = fmt.Errorf("unknown environment %q", r.Env)
		}
		if err != nil {
			return nil, err
		}
		ec.key, ec.img, ec.env = key, &hdr.Image{Width: w, Height: h, Pix: pix}, nil
	}
	full := fmt.Sprintf("%s|%g|%g|%v", key, r.EnvRotate, r.EnvIntensity, up)
	if ec.env == nil || ec.envKey != full {
		env, err := render.NewEnvironmentMap(ec.img.Width, ec.img.Height, ec.img.Pix,
			render.EnvironmentOrientation{Up: up, RotateDeg: r.EnvRotate, Scale: r.EnvIntensity})
		if err != nil {
			return nil, err
		}
		ec.env, ec.envKey = env, full
	}
	return ec.env, nil
}

// relightLights returns the discrete lights of the settings (cheap: on
// the UI goroutine); the environment comes from envCache in the job.
func (s *Session) relightLights(r *RelightState) ([]render.Light, error) {
	var ls []render.Light
	if r.PhotoLights >= 0 && r.PhotoLights < len(s.Capture.Photos) {
		pl, err := s.photoLights(r.PhotoLights)
		if err != nil {
			return nil, err
		}
		ls = append(ls, pl...)
	}
	if r.Point {
		in := r.PointIntensity
		if in <= 0 {
			in = s.pointIntensity()
		}
		d := dirAbout(s.upVec(), r.PointAzimuth, r.PointElevation)
		ls = append(ls, render.Light{Kind: render.PointLight,
			Position: s.Centre.AddScaled(d, 3*math.Max(s.Radius, 1e-3)), Intensity: brdf.RGB{in, in, in}})
	}
	for i := range ls {
		if err := ls[i].Validate(); err != nil {
			return nil, err
		}
	}
	return ls, nil
}

func (s *Session) upVec() render.Vec3 {
	u := s.Capture.UpVector()
	return render.Vec3{X: u[0], Y: u[1], Z: u[2]}
}

// dirAbout is the unit direction at azimuth and elevation (degrees) about
// up, azimuth measured from world +X projected onto the horizontal plane
// (+Y when up is along X), as render.Orbit measures it.
func dirAbout(up render.Vec3, azDeg, elDeg float64) render.Vec3 {
	u := up.Norm()
	a := render.V3(1, 0, 0)
	if math.Abs(u.X) > 0.9 {
		a = render.V3(0, 1, 0)
	}
	a = a.Sub(u.Mul(a.Dot(u))).Norm()
	b := u.Cross(a)
	az, el := azDeg*math.Pi/180, elDeg*math.Pi/180
	return a.Mul(math.Cos(el) * math.Cos(az)).Add(b.Mul(math.Cos(el) * math.Sin(az))).Add(u.Mul(math.Sin(el)))
}

// relightCamera returns the camera of the settings, its photo camera
// reduced to at most 640 pixels wide for interactive speed.
func (s *Session) relightCamera(r *RelightState) (render.Camera, error) {
	if r.Camera >= 0 && r.Camera < len(s.Capture.Photos) {
		cam, err := s.photoCamera(r.Camera)
		if err != nil {
			return nil, err
		}
		if cam.Width > 640 {
			cam = scaledPinhole(cam, 640/float64(cam.Width))
		}
		return cam, nil
	}
	return render.Orbit{Target: s.Centre, Azimuth: r.Azimuth, Elevation: r.Elevation, Distance: r.Distance,
		VFOV: 35, Up: s.upVec(), Width: r.Width, Height: r.Height}, nil
}

// coarse returns cam at a quarter of its resolution, for the first image.
func coarse(cam render.Camera) render.Camera {
	switch c := cam.(type) {
	case render.Pinhole:
		return scaledPinhole(c, 0.25)
	case render.Orbit:
		c.Width, c.Height = max(1, c.Width/4), max(1, c.Height/4)
		return c
	}
	return cam
}

// RestartRelight cancels the running render and starts again from a
// coarse first pass (a quarter of the resolution, one sample per pixel,
// two bounces), then refines at full resolution in progressive passes.
func (s *Session) RestartRelight() {
	if s.Scene == nil || !s.Relight.Active {
		return
	}
	r := &s.Relight
	if r.Distance <= 0 {
		r.Distance = s.frameDistance()
	}
	r.Generation++
	gen := r.Generation
	r.clampEV = r.Exposure
	clamp := relightClampFS * math.Exp2(-r.Exposure)
	snap := *r
	up := s.upVec()
	ec := &s.envs
	start := time.Now()
	discrete, err := s.relightLights(r)
	if err != nil {
		s.jobs.cancel("relight")
		s.fail("Relighting", err, "Check the photo's lights in the capture, or choose None for the photo lights.")
		return
	}
	cam, err := s.relightCamera(r)
	if err != nil {
		s.fail("Relighting", err, "Pick another photo's camera or the free orbit.")
		return
	}
	mats := s.renderMaterials()
	sc := s.Scene
	spp := max(1, r.SPP)
	cc := newCoalescer(s.post)
	// deliver hands an image of the job with context ctx to the UI. An
	// image that arrives after the job was cancelled (the view was left, a
	// setting changed, the window closed) is dropped: the cancel happened
	// on the UI goroutine before the image is looked at there, so a
	// cancelled render changes nothing, not even the image on show.
	deliver := func(ctx context.Context, f *render.Film, final bool) {
		pix := f.RGB()
		w, h, done, el := f.Width, f.Height, f.SPP, time.Since(start)
		cc.Post(func() {
			if s.Relight.Generation != gen || ctx.Err() != nil {
				return
			}
			rr := &s.Relight
			if rr.imageGen != gen {
				rr.FirstImage = el
			}
			rr.Pix, rr.W, rr.H, rr.Done, rr.Elapsed = pix, w, h, done, el
			rr.imageGen = gen
			s.encodeRelight()
			msg := fmt.Sprintf("Relight: %d samples per pixel, %.1f s", done, el.Seconds())
			if final {
				msg += " (done)"
			}
			s.Status, s.Progress = msg, -1
			s.notify(ChangeRelight)
			s.notify(ChangeStatus)
		})
	}
	s.jobs.start("relight", func(ctx context.Context) error {
		env, err := ec.environment(&snap, up)
		if err != nil {
			return &UserError{Title: "Relighting", Err: err, Advice: "Choose another environment; an environment file must be an equirectangular .hdr or .pfm."}
		}
		lights := &render.Lights{Lights: discrete, Environment: env}
		if err := ctx.Err(); err != nil {
			return err
		}
		f, err := render.Render(ctx, sc, coarse(cam), lights, mats, render.Settings{SPP: 1, MaxDepth: 2, Seed: 1, IndirectClamp: clamp})
		if err != nil {
			return err
		}
		deliver(ctx, f, false)
		_, err = render.Render(ctx, sc, cam, lights, mats, render.Settings{SPP: spp, Seed: 1, IndirectClamp: clamp, OnPass: func(p render.Pass) {
			deliver(ctx, p.Film, p.SPP >= spp)
		}})
		return err
	}, func(err error) {
		if err != nil && !errors.Is(err, context.Canceled) {
			s.post(func() {
				var ue *UserError
				if errors.As(err, &ue) {
					s.fail(ue.Title, ue.Err, ue.Advice)
					return
				}
				s.fail("Relighting", err, "Change a setting to try again.")
			})
		}
	})
}

// SaveRender writes the latest relight image: linear radiance to .hdr or
// .pfm, or the display image (exposure, highlight roll-off, sRGB) to .png.
func (s *Session) SaveRender(path string) error {
	r := &s.Relight
	if r.Pix == nil {
		return errors.New("no render yet: open the Relight view and wait for the first image")
	}
	switch strings.ToLower(filepath.Ext(path)) {
	case ".hdr", ".pfm":
		return hdr.WriteFile(path, &hdr.Image{Width: r.W, Height: r.H, Pix: r.Pix})
	case ".png":
		var d Display
		d.Set(render.ToneMap{ExposureEV: r.Exposure, Highlight: render.RollOff}, 1)
		img := d.Encode(nil, r.Pix, r.W, r.H)
		return atomicfile.Write(path, 0o644, func(w io.Writer) error { return png.Encode(w, img) })
	}
	return fmt.Errorf("%s: expected a .hdr, .pfm or .png file name", path)
}
