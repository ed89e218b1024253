package app

import (
	"context"
	"errors"
	"image"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"patina/assets/capture"
	"patina/assets/hdr"
	"patina/assets/materials"
	"patina/brdf"
	"patina/render"
	"patina/render/colour"
)

const fixture = "../testdata/jar-small/capture.json"

// openFixture opens a copy of the jar-small fixture (so saving cannot
// touch the repository's files) and waits for it.
func openFixture(t *testing.T) *Session {
	t.Helper()
	dir := t.TempDir()
	copyTree(t, filepath.Dir(fixture), dir)
	s := NewSession(context.Background(), nil)
	t.Cleanup(s.Close)
	if err := s.Open(filepath.Join(dir, "capture.json"), "").Wait(); err != nil {
		t.Fatalf("open: %v", err)
	}
	if j := s.Job("photo"); j != nil {
		j.Wait()
	}
	return s
}

func copyTree(t *testing.T, from, to string) {
	t.Helper()
	err := filepath.Walk(from, func(p string, info os.FileInfo, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(from, p)
		dst := filepath.Join(to, rel)
		if info.IsDir() {
			return os.MkdirAll(dst, 0o755)
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		return os.WriteFile(dst, b, 0o644)
	})
	if err != nil {
		t.Fatal(err)
	}
}

// drain runs everything queued for the stand-in UI goroutine so far
// (Session.queue: jobs post into it and the test goroutine runs what they
// posted, so widgets are only ever touched from one goroutine, as in the
// real window).
func drain(q chan func()) {
	for {
		select {
		case f := <-q:
			f()
		default:
			return
		}
	}
}

func waitJob(t *testing.T, s *Session, kind string) error {
	t.Helper()
	j := s.Job(kind)
	if j == nil {
		drain(s.queue)
		return nil
	}
	return waitFor(t, s, j)
}

func waitFor(t *testing.T, s *Session, j *Job) error {
	t.Helper()
	timeout := time.After(90 * time.Second)
	q := s.queue
	for {
		select {
		case f := <-q:
			f()
		case <-j.Done():
			drain(q)
			return j.err
		case <-timeout:
			t.Fatalf("%s job did not finish", j.Kind)
			return nil
		}
	}
}

func TestOpenFixture(t *testing.T) {
	s := openFixture(t)
	if s.Capture == nil || s.Scene == nil {
		t.Fatal("capture or scene missing after open")
	}
	// The fixture lists three segments and four photos (testdata/jar-small).
	if len(s.Materials) != 3 || len(s.Capture.Photos) != 4 {
		t.Fatalf("segments %d photos %d, want 3 and 4", len(s.Materials), len(s.Capture.Photos))
	}
	if s.Materials[1].Params.Kind != brdf.Metal {
		t.Errorf("gilding should open as a metal, got %v", s.Materials[1].Params.Kind)
	}
	if s.Selected != 0 || !s.PhotoLoaded() {
		t.Fatalf("first photo not selected and loaded: %d %v", s.Selected, s.PhotoLoaded())
	}
	img, _ := s.PhotoImage()
	if img == nil || img.Rect.Dx() != 64 || img.Rect.Dy() != 48 {
		t.Fatalf("display image %v, want 64x48", img.Bounds())
	}
	if s.Dirty() || s.Title() != "jar, small (synthetic fixture) - Patina" {
		t.Errorf("title %q dirty %v", s.Title(), s.Dirty())
	}
	if s.Compare.Photo != 3 {
		t.Errorf("compare photo %d, want the holdout photo 3", s.Compare.Photo)
	}
}

func TestFilterAndStep(t *testing.T) {
	s := openFixture(t)
	s.SetFilter(PhotoFilter{Camera: "east"})
	if got := s.FilteredPhotos(); len(got) != 2 || got[0] != 2 || got[1] != 3 {
		t.Fatalf("east photos %v, want [2 3]", got)
	}
	s.StepPhoto(+1) // selection 0 is not in the list: the first east photo
	if s.Selected != 2 {
		t.Fatalf("selected %d, want 2", s.Selected)
	}
	s.StepPhoto(+1)
	s.StepPhoto(+1)
	if s.Selected != 2 {
		t.Fatalf("wrap-around selected %d, want 2", s.Selected)
	}
	s.SetFilter(PhotoFilter{Light: "sky", Use: capture.UseHoldout})
	if got := s.FilteredPhotos(); len(got) != 1 || got[0] != 3 {
		t.Fatalf("sky holdout photos %v, want [3]", got)
	}
	if err := s.SetPhotoUse(3, "train"); err == nil {
		t.Error("an unknown use was accepted")
	}
	if err := s.SetPhotoUse(3, capture.UseIgnore); err != nil || !s.CaptureDirty || s.Title()[0] != '*' {
		t.Fatalf("use change: err %v dirty %v title %q", err, s.CaptureDirty, s.Title())
	}
	if err := s.SaveCapture(); err != nil {
		t.Fatal(err)
	}
	back, err := capture.Load(s.Capture.Path)
	if err != nil || back.Photos[3].Use != capture.UseIgnore {
		t.Fatalf("saved use not read back: %v", err)
	}
}

// TestOverlays checks the projected overlays against the calibrated
// camera: the segment colours cover exactly the pixels whose centre ray
// hits the mesh (render.Cast, itself checked against OpenCV's projection
// in render's tests), and a light marker is drawn where Pinhole.Project
// puts the light.
func TestOverlays(t *testing.T) {
	s := openFixture(t)
	s.SetOverlays(Overlays{Segments: true})
	waitJob(t, s, "overlay")
	_, ov := s.PhotoImage()
	if ov == nil {
		t.Fatal("no overlay")
	}
	gb := s.photo.gb
	for k, hit := range gb.Hit {
		a := ov.Pix[4*k+3]
		if hit != (a > 0) {
			t.Fatalf("pixel %d: hit %v but overlay alpha %d", k, hit, a)
		}
	}
	s.ToggleOverlay("segments")
	s.ToggleOverlay("mask")
	waitJob(t, s, "overlay")
	rc := s.PhotoRejections()
	hits := 0
	for _, h := range gb.Hit {
		if h {
			hits++
		}
	}
	sum := rc.Total()
	if sum != hits || rc.Border == 0 || rc.Kept == 0 {
		t.Fatalf("mask counts %+v sum %d, want %d hit pixels with some border and some kept", rc, sum, hits)
	}
	// Photo 0's mask keeps the pixels mostly on the object, so its edge
	// falls inside the border band: nothing beyond the border is masked.
	if rc.Masked != 0 {
		t.Errorf("photo 0's mask rejected pixels away from the silhouette: %+v", rc)
	}
	s.SetOverlays(Overlays{Lights: true})
	waitJob(t, s, "overlay")
	_, ov = s.PhotoImage()
	cam, _ := s.photoCamera(0)
	l, _ := s.Capture.LightByID("key")
	px, py, ok := cam.Project(render.V3(l.Position[0], l.Position[1], l.Position[2]))
	if ok && px >= 0 && py >= 0 && px < 64 && py < 48 {
		x, y := int(math.Round(px)), int(math.Round(py))
		if ov.RGBAAt(x, y).A == 0 {
			t.Errorf("no light marker at the projected light (%d, %d)", x, y)
		}
	}
	s.SetOverlays(Overlays{})
	waitJob(t, s, "overlay")
	if _, ov := s.PhotoImage(); ov != nil {
		t.Error("overlay kept with every layer off")
	}
}

func TestThumbnails(t *testing.T) {
	s := openFixture(t)
	for i := range s.Capture.Photos {
		if s.Thumbnail(i) != nil {
			t.Fatal("thumbnail ready before loading")
		}
	}
	deadline := time.Now().Add(30 * time.Second)
	for !s.ThumbnailsDone() && time.Now().Before(deadline) {
		time.Sleep(10 * time.Millisecond)
	}
	for i := range s.Capture.Photos {
		th := s.Thumbnail(i)
		if th == nil || th.Rect.Dx() > ThumbW || th.Rect.Dy() > ThumbH || th.Rect.Dx() < 32 {
			t.Fatalf("thumbnail %d: %v", i, th)
		}
	}
}

func TestEditMaterials(t *testing.T) {
	s := openFixture(t)
	if err := s.SetModel(0, "free"); err != nil {
		t.Fatal(err)
	}
	if s.Capture.Segments[0].Model != "free" || s.Materials[0].Params.Kind != brdf.Free || !s.CaptureDirty {
		t.Fatal("model change not recorded")
	}
	p := s.Materials[0].Params
	p.Roughness = 2
	if err := s.SetParams(0, p); err == nil {
		t.Error("roughness 2 accepted")
	}
	p.Roughness = 0.25
	if err := s.SetParams(0, p); err != nil {
		t.Fatal(err)
	}
	if err := s.ApplyPreset(1, "gold"); err != nil {
		t.Fatal(err)
	}
	gold, _ := brdf.PresetByName("gold")
	if s.Materials[1].Params != gold.Params || s.Materials[1].Preset != "gold" {
		t.Fatalf("preset not applied: %+v", s.Materials[1].Params)
	}
	out := filepath.Join(t.TempDir(), "m.json")
	if err := s.SaveMaterials(out); err != nil {
		t.Fatal(err)
	}
	mf, err := materials.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	if got := mf.Segment("glaze"); got == nil || got.Roughness != 0.25 || got.Model != "free" {
		t.Fatalf("saved glaze %+v", got)
	}
}

// TestSwatch checks a swatch against the Lambertian formula: at the
// sphere's centre pixel (normal towards the viewer) a pure diffuse
// material reflects albedo/pi * E * cos(theta_light) plus the surround
// term, encoded with the sRGB curve of IEC 61966-2-1 (render/colour).
func TestSwatch(t *testing.T) {
	p := brdf.Params{Kind: brdf.Free, Diffuse: brdf.RGB{0.2, 0.2, 0.2}, Roughness: 0.5}
	size := 33
	img := Swatch(p, size)
	c := img.RGBAAt(size/2, size/2)
	light := render.V3(-0.5, 0.6, 0.75).Norm()
	n := render.V3(0, 0, 1)
	// The pixel centre is exactly the sphere's centre for an odd size.
	lin := 0.2/math.Pi*2.6*n.Dot(light) + 0.12*0.2
	want := math.Round(255 * colour.LinearToSRGB(lin))
	if math.Abs(float64(c.R)-want) > 1 {
		t.Fatalf("centre %d, want %.0f (linear %.4f)", c.R, want, lin)
	}
}

func TestFitStartCancel(t *testing.T) {
	s := openFixture(t)
	var changes int
	s.Listen(func(c Change) {
		if c == ChangeFit {
			changes++
		}
	})
	j, err := s.StartFit()
	if err != nil {
		t.Fatal(err)
	}
	if !s.Fit.Running {
		t.Fatal("not running after start")
	}
	s.CancelFit()
	err = j.Wait()
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled fit returned %v", err)
	}
	if s.Fit.Running || !s.Fit.Cancelled || s.FitResult != nil {
		t.Fatalf("state after cancel: %+v", s.Fit)
	}
	before := s.Materials[0].Params
	// Lock the glaze roughness at a value of our own and fit to the end.
	p := before
	p.Roughness = 0.61
	if err := s.SetParams(0, p); err != nil {
		t.Fatal(err)
	}
	s.SetLock(0, LockRoughness, true)
	j, _ = s.StartFit()
	if err := j.Wait(); err != nil {
		t.Fatalf("fit: %v", err)
	}
	if s.FitResult == nil || len(s.FitResult.Segments) != 3 {
		t.Fatal("no fit result")
	}
	if s.Materials[0].Params.Roughness != 0.61 || s.Fit.LockNote == "" {
		t.Errorf("locked roughness %v, note %q", s.Materials[0].Params.Roughness, s.Fit.LockNote)
	}
	// The table carries the fit's values for what was not locked.
	for i, sf := range s.FitResult.Segments {
		sm := s.Materials[i]
		if sm.Name != sf.Name || sm.Observations != sf.Observations || sm.Sigma == nil {
			t.Errorf("segment %d: table %+v, fit %s %d", i, sm, sf.Name, sf.Observations)
		}
		if i > 0 && sm.Params != sf.Params {
			t.Errorf("segment %s: params %+v, fit %+v", sm.Name, sm.Params, sf.Params)
		}
	}
	if s.Materials[0].Params.Diffuse != s.FitResult.Segments[0].Params.Diffuse {
		t.Error("unlocked diffuse not taken from the fit")
	}
	if len(s.Fit.Curve) == 0 || changes < 2 {
		t.Errorf("no live loss curve (%d points, %d changes)", len(s.Fit.Curve), changes)
	}
	if !s.MaterialsDirty {
		t.Error("fit result not marked unsaved")
	}
}

func TestRelight(t *testing.T) {
	s := openFixture(t)
	s.Relight.SPP = 4
	s.Relight.Width, s.Relight.Height = 64, 48
	s.SetRelightActive(true)
	if err := waitJob(t, s, "relight"); err != nil {
		t.Fatal(err)
	}
	r := s.Relight
	if r.Pix == nil || r.W != 64 || r.H != 48 || r.Done != 4 {
		t.Fatalf("relight image %dx%d at %d spp", r.W, r.H, r.Done)
	}
	img := s.RelightImage()
	if img == nil || img.Rect.Dx() != 64 {
		t.Fatal("no display image")
	}
	lum := func(pix []float32) float64 {
		var sum float64
		for _, v := range pix {
			sum += float64(v)
		}
		return sum
	}
	base := lum(r.Pix)
	// Change a light: without the environment and with the point light
	// four times as strong the image must change, and with only that light
	// doubling its intensity must double the image (linear transport).
	rs := s.Relight
	rs.Env = EnvNone
	rs.PointIntensity = 4 * s.pointIntensity()
	// A display exposure this low (-8 EV) puts the indirect clamp (a quarter of
	// the display's white) above every contribution, so transport is
	// exactly linear.
	rs.Exposure = -8
	s.SetRelight(rs)
	waitJob(t, s, "relight")
	one := lum(s.Relight.Pix)
	if one == base || s.Relight.Generation < 2 {
		t.Fatalf("light change did not re-render (%v vs %v)", one, base)
	}
	rs = s.Relight
	rs.PointIntensity *= 2
	s.SetRelight(rs)
	waitJob(t, s, "relight")
	two := lum(s.Relight.Pix)
	if math.Abs(two/one-2) > 1e-4 {
		t.Errorf("doubling the light gave ratio %v", two/one)
	}
	// Exposure within a stop of the render's re-encodes without a new
	// render; further away it restarts, so the clamp follows the display.
	g := s.Relight.Generation
	prev := append([]uint8(nil), s.RelightImage().Pix...)
	s.SetExposure(-7.5)
	if s.Relight.Generation != g || string(prev) == string(s.RelightImage().Pix) {
		t.Error("exposure did not re-encode in place")
	}
	s.SetExposure(1)
	if s.Relight.Generation != g+1 {
		t.Errorf("an exposure 9 stops away kept the render (generation %d, was %d)", s.Relight.Generation, g)
	}
	waitJob(t, s, "relight")
	dir := t.TempDir()
	if err := s.SaveRender(filepath.Join(dir, "r.hdr")); err != nil {
		t.Fatal(err)
	}
	back, err := hdr.ReadFile(filepath.Join(dir, "r.hdr"))
	if err != nil || back.Width != 64 || back.Height != 48 {
		t.Fatalf("saved .hdr: %v", err)
	}
	if err := s.SaveRender(filepath.Join(dir, "r.png")); err != nil {
		t.Fatal(err)
	}
	if err := s.SaveRender(filepath.Join(dir, "r.bmp")); err == nil {
		t.Error(".bmp accepted")
	}
	// Photo camera: the render takes the photo's resolution.
	rs = s.Relight
	rs.Camera, rs.PhotoLights = 0, 0
	s.SetRelight(rs)
	waitJob(t, s, "relight")
	if s.Relight.W != 64 || s.Relight.H != 48 {
		t.Errorf("photo camera render %dx%d", s.Relight.W, s.Relight.H)
	}
	s.SetRelightActive(false)
	if j := s.Job("relight"); j != nil {
		waitFor(t, s, j) // cancelled: it returns at the next tile
	}
	if s.Job("relight") != nil {
		t.Error("render still running with the view hidden")
	}
}

func TestCompareModes(t *testing.T) {
	s := openFixture(t)
	if _, err := s.RunCompare(); err != nil {
		t.Fatal(err)
	}
	if err := waitJob(t, s, "compare"); err != nil {
		t.Fatal(err)
	}
	cs := s.Compare
	if cs.Result == nil || cs.Maps == nil || cs.Verdict == nil || cs.PhotoImg == nil || cs.RenderImg == nil {
		t.Fatalf("no comparison: %+v", cs)
	}
	if cs.Result.Pixels == 0 || cs.Maps.DeltaEImage == nil {
		t.Fatal("empty comparison")
	}
	if cs.PhotoImg.Rect != image.Rect(0, 0, 64, 48) {
		t.Errorf("photo image %v", cs.PhotoImg.Rect)
	}
	modes := []CompareMode{}
	for i := 0; i < 3; i++ {
		s.CycleCompareMode()
		modes = append(modes, s.Compare.Mode)
	}
	if modes[0] != CompareWipe || modes[1] != CompareDeltaE || modes[2] != CompareSideBySide {
		t.Errorf("cycle %v", modes)
	}
	s.SetWipe(2)
	if s.Compare.Wipe != 1 {
		t.Errorf("wipe not clamped: %v", s.Compare.Wipe)
	}
	if err := s.SetTolerance("jnd"); err != nil || s.Compare.Verdict.Tolerance.Name != "jnd" {
		t.Errorf("tolerance: %v", err)
	}
}

func TestDisplayMatchesToneMap(t *testing.T) {
	// The table must agree with render.ToneMap.Encode (IEC 61966-2-1 curve
	// after exposure) within one code value.
	tm := render.ToneMap{ExposureEV: -1, Highlight: render.RollOff}
	d := NewDisplay(tm, 2)
	for _, v := range []float32{0, 0.001, 0.01, 0.1, 0.5, 1, 1.7, 3} {
		want := math.Round(255 * tm.Encode(2*float64(v)))
		got := float64(d.code(v))
		if math.Abs(got-want) > 1 {
			t.Errorf("v %v: %v, want %v", v, got, want)
		}
	}
	if d.code(float32(math.NaN())) != 0 || d.code(-1) != 0 {
		t.Error("NaN or negative not black")
	}
}

func TestProblemPhoto(t *testing.T) {
	for path, want := range map[string]int{"photos[12].camera": 12, "photos[0]": 0, "cameras[1].fx": -1, "": -1} {
		if got := ProblemPhoto(capture.Problem{Path: path}); got != want {
			t.Errorf("%q: %d, want %d", path, got, want)
		}
	}
}

func TestWrapText(t *testing.T) {
	got := wrapText("mean dE00 1.43 < 3.5 (FADGI guidelines)\nnext", 12)
	want := "mean dE00\n1.43 < 3.5\n(FADGI\nguidelines)\nnext"
	if got != want {
		t.Errorf("got %q, want %q", got, want)
	}
}

func TestExportReport(t *testing.T) {
	s := openFixture(t)
	dir := t.TempDir()
	if _, err := s.ExportReport(filepath.Join(dir, "r.html")); err != ErrSaveFirst {
		t.Fatalf("no materials file yet: %v", err)
	}
	if err := s.SaveMaterials(filepath.Join(dir, "m.json")); err != nil {
		t.Fatal(err)
	}
	j, err := s.ExportReport(filepath.Join(dir, "r.html"))
	if err != nil {
		t.Fatal(err)
	}
	if err := j.Wait(); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"r.html", "r.json"} {
		if fi, err := os.Stat(filepath.Join(dir, f)); err != nil || fi.Size() == 0 {
			t.Errorf("%s not written: %v", f, err)
		}
	}
}
