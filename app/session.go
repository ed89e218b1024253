package app

import (
	"context"
	"errors"
	"fmt"
	"image"
	"path/filepath"
	"sort"
	"strings"
	"sync"

	"patina/assets/capture"
	"patina/assets/materials"
	"patina/assets/photo"
	"patina/brdf"
	"patina/fit"
	"patina/render"
)

// Change says what part of a session changed, so a view redraws only what
// it shows.
type Change int

// The kinds of change a session reports.
const (
	ChangeCapture   Change = iota // a capture was opened (or closed)
	ChangePhoto                   // the selected photo, its image or its overlays
	ChangeThumbnail               // a thumbnail finished loading
	ChangeFilter                  // the photo filters
	ChangeMaterials               // segment models, parameters, locks, fit results
	ChangeFit                     // fit progress
	ChangeRelight                 // a new relight image or new settings
	ChangeCompare                 // comparison result or display mode
	ChangeStatus                  // the status line
	ChangeDirty                   // unsaved-changes marks
)

// UserError is an error for the user: what failed and what to do about it.
type UserError struct {
	Title  string
	Err    error
	Advice string
}

func (e *UserError) Error() string {
	s := e.Title + ": " + e.Err.Error()
	if e.Advice != "" {
		s += ". " + e.Advice
	}
	return s
}

func (e *UserError) Unwrap() error { return e.Err }

// Lock names the parameter groups of a segment that can be held at the
// user's value.
type Lock uint8

// Lockable parameter groups.
const (
	LockDiffuse Lock = 1 << iota
	LockSpecular
	LockRoughness
)

// SegmentMaterial is the workbench's record of one segment's material.
type SegmentMaterial struct {
	Name   string
	Params brdf.Params
	// Sigma is the one-sigma uncertainty laid out like Params; nil when no
	// fit has estimated it.
	Sigma        *brdf.Params
	Observations int
	NearSpecular int
	RMSE         float64
	Fitted       bool
	Warnings     []string
	// Locked parameters keep the user's value when a fit result arrives.
	Locked Lock
	// Preset names the preset last applied, if any.
	Preset string
}

// PhotoFilter narrows the photo list; empty fields match everything.
type PhotoFilter struct {
	Camera, Light, Use string
}

// Overlays are the layers drawn over the photo viewer.
type Overlays struct {
	Wireframe bool // mesh edges projected through the photo's camera
	Segments  bool // segment colours projected through the camera
	Mask      bool // pixels the fit leaves out, by reason
	Lights    bool // light positions projected into the photo
}

// Session is the state of one workbench session. Its methods are called
// from one goroutine (the UI goroutine); background jobs hand their results
// back through Post.
type Session struct {
	post  Poster
	jobs  *jobs
	lmu   sync.Mutex
	lists []func(Change)

	Capture  *capture.Capture
	Problems []capture.Problem
	Mesh     *render.Mesh
	Scene    *render.Scene
	Segments []capture.Segment // effective segments of the capture
	TriSeg   []int32           // capture segment of each triangle, -1 for none
	LabelSeg []int             // capture segment of each mesh segment label
	Centre   render.Vec3       // centre of the mesh's bounding box
	Radius   float64           // half its diagonal, metres

	Materials     []SegmentMaterial
	MaterialsPath string
	FitResult     *fit.Result
	// Scale is the radiometric scale of the last fit: photo radiance =
	// Scale x radiance rendered from the capture's lights. 1 before a fit.
	Scale float64

	CaptureDirty, MaterialsDirty bool

	Selected int // photo index, -1 for none
	Filter   PhotoFilter
	Overlays Overlays

	Status   string
	Progress float64 // 0..1 for the running task; negative when idle

	// OnError receives errors for the user (a dialog in the workbench).
	OnError func(*UserError)

	photo    photoView
	thumbs   map[int]*image.RGBA
	thumbReq map[int]bool
	thumbQ   []int
	thumbMu  sync.Mutex
	thumbGen int
	// thumbRunning is true while the loader goroutine serves the queue.
	thumbRunning bool

	Fit     FitState
	Relight RelightState
	Compare CompareState

	statusC *coalescer
	envs    envCache
	fitLast func() fit.Progress
	// queue is set by workbench tests: the channel their Poster fills,
	// which the test goroutine drains while it waits, standing in for the
	// UI goroutine.
	queue   chan func()
	fitMu   sync.Mutex
	fitLive []float64 // worker side of Fit.Curve
}

// NewSession makes an empty session whose jobs are children of ctx and
// whose results are handed over through post (fyne.Do in the workbench;
// nil runs them on the worker's goroutine, for tests that wait on jobs).
func NewSession(ctx context.Context, post Poster) *Session {
	if post == nil {
		post = immediate
	}
	s := &Session{post: post, jobs: newJobs(ctx), Selected: -1, Progress: -1, Scale: 1,
		thumbs: map[int]*image.RGBA{}, thumbReq: map[int]bool{}}
	s.statusC = newCoalescer(post)
	s.Relight = defaultRelight()
	s.Compare = CompareState{Photo: -1, Mode: CompareSideBySide, Wipe: 0.5, Tolerance: "fadgi-3star"}
	s.Fit.Samples = 2000
	return s
}

// Listen registers f to be told about every change.
func (s *Session) Listen(f func(Change)) {
	s.lmu.Lock()
	s.lists = append(s.lists, f)
	s.lmu.Unlock()
}

func (s *Session) notify(c Change) {
	s.lmu.Lock()
	ls := append([]func(Change){}, s.lists...)
	s.lmu.Unlock()
	for _, f := range ls {
		f(c)
	}
}

func (s *Session) fail(title string, err error, advice string) {
	if err == nil || errors.Is(err, context.Canceled) {
		return
	}
	ue := &UserError{Title: title, Err: err, Advice: advice}
	s.setStatus(ue.Title+" failed", -1)
	if s.OnError != nil {
		s.OnError(ue)
	}
}

func (s *Session) setStatus(msg string, progress float64) {
	s.Status, s.Progress = msg, progress
	s.notify(ChangeStatus)
}

// postStatus sets the status from a worker goroutine.
func (s *Session) postStatus(msg string, progress float64) {
	s.statusC.Post(func() { s.setStatus(msg, progress) })
}

// Close cancels every job and waits for them to return.
func (s *Session) Close() {
	s.jobs.cancelAll()
	s.jobs.wait()
}

// Job returns the running job of a kind ("open", "fit", "relight",
// "compare", "photo", "thumbnails", "demo"), or nil.
func (s *Session) Job(kind string) *Job { return s.jobs.get(kind) }

// Cancel stops the running job of a kind.
func (s *Session) Cancel(kind string) { s.jobs.cancel(kind) }

// Title is the window title: the capture's name, with a mark when
// something is unsaved.
func (s *Session) Title() string {
	t := "Patina"
	if s.Capture != nil {
		name := s.Capture.Name
		if name == "" {
			name = filepath.Base(s.Capture.Path)
		}
		t = name + " - Patina"
	}
	if s.Dirty() {
		t = "* " + t
	}
	return t
}

// Dirty reports unsaved changes to the capture or the materials.
func (s *Session) Dirty() bool { return s.CaptureDirty || s.MaterialsDirty }

// loaded is what the open job builds off the UI goroutine.
type loaded struct {
	c        *capture.Capture
	problems []capture.Problem
	m        *render.Mesh
	sc       *render.Scene
	segs     []capture.Segment
	triSeg   []int32
	labelSeg []int
	mats     *materials.File
}

// Open loads a capture in the background: the file, its check, the mesh
// and its ray-tracing structure; then, if materialsPath is not empty, the
// materials file. The result replaces the session's capture.
func (s *Session) Open(path, materialsPath string) *Job {
	s.setStatus("Opening "+path, 0)
	s.jobs.cancel("fit")
	var ld *loaded
	return s.jobs.start("open", func(ctx context.Context) error {
		var err error
		ld, err = load(ctx, path, materialsPath)
		return err
	}, func(err error) {
		s.post(func() {
			if err != nil {
				if ld != nil && ld.c != nil {
					s.install(ld)
				}
				advice := "Check the file with 'patina check' and correct what it lists, or open another capture."
				s.fail("Opening "+filepath.Base(path), err, advice)
				return
			}
			s.install(ld)
			s.setStatus(fmt.Sprintf("Opened %s: %d photos, %d segments, %d problems", filepath.Base(path), len(ld.c.Photos), len(ld.segs), len(ld.problems)), -1)
		})
	})
}

func load(ctx context.Context, path, materialsPath string) (*loaded, error) {
	c, err := capture.Load(path)
	if err != nil {
		return nil, err
	}
	ld := &loaded{c: c}
	sum, problems := c.Check(capture.CheckOptions{})
	ld.problems = problems
	if err := ctx.Err(); err != nil {
		return ld, err
	}
	if sum == nil || sum.Mesh == nil {
		return ld, fmt.Errorf("the mesh %s could not be loaded (see the problems listed)", c.Mesh)
	}
	ld.m = sum.Mesh
	ld.segs = c.EffectiveSegments(ld.m)
	if ld.sc, err = render.NewScene(ld.m, 0); err != nil {
		return ld, fmt.Errorf("%s: %w", c.Resolve(c.Mesh), err)
	}
	if ld.triSeg, err = c.TriangleSegments(ld.m); err != nil {
		return ld, err
	}
	if ld.labelSeg, err = c.SegmentIndex(ld.m); err != nil {
		return ld, err
	}
	if materialsPath != "" {
		mf, err := materials.Load(materialsPath)
		if err != nil {
			return ld, err
		}
		if err := mf.Validate(c, ld.m); err != nil {
			return ld, err
		}
		ld.mats = mf
	}
	return ld, nil
}

// install makes a loaded capture the session's (UI goroutine).
func (s *Session) install(ld *loaded) {
	s.jobs.cancel("thumbnails")
	s.jobs.cancel("photo")
	s.jobs.cancel("relight")
	s.jobs.cancel("compare")
	s.Capture, s.Problems = ld.c, ld.problems
	s.Mesh, s.Scene, s.Segments, s.TriSeg, s.LabelSeg = ld.m, ld.sc, ld.segs, ld.triSeg, ld.labelSeg
	s.CaptureDirty, s.MaterialsDirty = false, false
	s.FitResult, s.Scale, s.MaterialsPath = nil, 1, ""
	s.Fit = FitState{Samples: s.Fit.Samples}
	s.thumbMu.Lock()
	s.thumbs, s.thumbReq, s.thumbQ = map[int]*image.RGBA{}, map[int]bool{}, nil
	s.thumbGen++
	s.thumbRunning = false
	s.thumbMu.Unlock()
	s.photo = photoView{}
	s.Selected = -1
	s.Materials = nil
	if s.Scene != nil {
		b := s.Scene.Bounds()
		s.Centre, s.Radius = b.Centre(), b.Diagonal()/2
	}
	for _, seg := range s.Segments {
		kind, err := brdf.ParseKind(seg.Model)
		if err != nil {
			kind = brdf.Dielectric
		}
		s.Materials = append(s.Materials, SegmentMaterial{Name: seg.Name, Params: neutral(kind)})
	}
	if ld.mats != nil {
		s.applyMaterialsFile(ld.mats)
	}
	active := s.Relight.Active
	s.Relight = defaultRelight()
	s.Relight.Active = active // the view stays shown across an open
	s.Relight.Distance = s.frameDistance()
	s.Compare = CompareState{Photo: -1, Mode: s.Compare.Mode, Wipe: s.Compare.Wipe, Tolerance: s.Compare.Tolerance}
	if hs := s.Capture.PhotosByUse(capture.UseHoldout); len(hs) > 0 {
		s.Compare.Photo = hs[0]
	}
	s.notify(ChangeCapture)
	s.notify(ChangeMaterials)
	s.notify(ChangeDirty)
	if s.Mesh != nil {
		// Make the default environment map now, so the first visit to the
		// relight view does not wait for it.
		r, up := s.Relight, s.upVec()
		s.jobs.start("environment", func(context.Context) error {
			_, err := s.envs.environment(&r, up)
			return err
		}, nil)
	}
	if len(s.Capture.Photos) > 0 && s.Mesh != nil {
		s.SelectPhoto(0)
	}
}

// neutral is the starting material of a segment before any fit: a mid grey
// of the model's kind (common practice for a neutral preview).
func neutral(k brdf.Kind) brdf.Params {
	p := brdf.Params{Kind: k, Diffuse: brdf.RGB{0.5, 0.5, 0.5}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.5}
	if k == brdf.Metal {
		p.Diffuse = brdf.RGB{}
		p.Specular = brdf.RGB{0.9, 0.9, 0.9}
		p.Roughness = 0.3
	}
	return p
}

func (s *Session) applyMaterialsFile(mf *materials.File) {
	for i := range s.Materials {
		ms := mf.Segment(s.Materials[i].Name)
		if ms == nil {
			continue
		}
		p, err := ms.Params()
		if err != nil {
			continue
		}
		sm := &s.Materials[i]
		sm.Params, sm.Observations, sm.NearSpecular, sm.Warnings = p, ms.Observations, ms.NearSpecular, ms.Warnings
		sm.Locked = locksFromNames(ms.Locked)
		sm.Fitted = ms.RMSE != nil
		if ms.RMSE != nil {
			sm.RMSE = *ms.RMSE
		}
		if ms.Sigma != nil {
			sm.Sigma = &brdf.Params{Kind: p.Kind, Diffuse: ms.Sigma.Diffuse, Specular: ms.Sigma.Specular, Roughness: ms.Sigma.Roughness}
		}
	}
	if mf.Fit != nil && mf.Fit.RadiometricScale > 0 {
		s.Scale = mf.Fit.RadiometricScale
	}
	s.MaterialsPath = mf.Path
}

// LoadMaterials reads a materials file into the segment table.
func (s *Session) LoadMaterials(path string) error {
	if s.Capture == nil || s.Mesh == nil {
		return errors.New("open a capture first")
	}
	mf, err := materials.Load(path)
	if err != nil {
		return err
	}
	if err := mf.Validate(s.Capture, s.Mesh); err != nil {
		return err
	}
	s.applyMaterialsFile(mf)
	s.MaterialsDirty = false
	s.notify(ChangeMaterials)
	s.notify(ChangeDirty)
	s.RestartRelight()
	return nil
}

// SaveCapture writes the capture (photo uses, segment models) atomically.
func (s *Session) SaveCapture() error {
	if s.Capture == nil {
		return errors.New("no capture is open")
	}
	// Save a copy: Save records the path and directory it wrote in the
	// Capture, and a photo, thumbnail or fit job may be reading them from
	// the session's Capture at this moment (a data race the race detector
	// reported). The path is the same, so the session's Capture needs no
	// update.
	cp := *s.Capture
	if err := cp.Save(s.Capture.Path); err != nil {
		return err
	}
	s.CaptureDirty = false
	s.notify(ChangeDirty)
	s.setStatus("Saved "+s.Capture.Path, -1)
	return nil
}

// MaterialsFile builds the materials file of the current segment table, to
// be written at outPath.
func (s *Session) MaterialsFile(outPath string) *materials.File {
	var f *materials.File
	if s.FitResult != nil {
		f = s.FitResult.Materials(s.Capture, outPath)
	} else {
		f = &materials.File{Version: materials.Version, Capture: s.Capture.Path}
		if abs, err := filepath.Abs(outPath); err == nil {
			if rel, err := filepath.Rel(filepath.Dir(abs), s.Capture.Path); err == nil {
				f.Capture = filepath.ToSlash(rel)
			}
		}
	}
	byName := map[string]int{}
	for i := range f.Segments {
		byName[f.Segments[i].Name] = i
	}
	for _, sm := range s.Materials {
		ms := materials.FromParams(sm.Name, sm.Params)
		if i, ok := byName[sm.Name]; ok {
			old := f.Segments[i]
			ms.Sigma, ms.Observations, ms.NearSpecular, ms.RMSE, ms.Warnings = old.Sigma, old.Observations, old.NearSpecular, old.RMSE, old.Warnings
			ms.LossHistory = old.LossHistory
			ms.Locked = sm.Locked.names(sm.Params.Kind)
			f.Segments[i] = ms
		} else {
			ms.Locked = sm.Locked.names(sm.Params.Kind)
			f.Segments = append(f.Segments, ms)
		}
	}
	return f
}

// lockNames pairs the table's lock bits with the materials file's names
// (materials.LockableParams).
var lockNames = []struct {
	bit  Lock
	name string
}{{LockDiffuse, "diffuse"}, {LockSpecular, "specular"}, {LockRoughness, "roughness"}}

// names lists the locked parameters as a materials file spells them; a
// metal has no diffuse term to hold.
func (l Lock) names(kind brdf.Kind) []string {
	var out []string
	for _, ln := range lockNames {
		if l&ln.bit != 0 && !(ln.bit == LockDiffuse && kind == brdf.Metal) {
			out = append(out, ln.name)
		}
	}
	return out
}

// locksFromNames is the inverse of Lock.names; the file's validation has
// already refused unknown names.
func locksFromNames(names []string) Lock {
	var l Lock
	for _, n := range names {
		for _, ln := range lockNames {
			if n == ln.name {
				l |= ln.bit
			}
		}
	}
	return l
}

// SaveMaterials writes the segment table as a materials file, atomically.
func (s *Session) SaveMaterials(path string) error {
	if s.Capture == nil {
		return errors.New("no capture is open")
	}
	if err := s.MaterialsFile(path).Save(path); err != nil {
		return err
	}
	s.MaterialsPath = path
	s.MaterialsDirty = false
	s.notify(ChangeDirty)
	s.setStatus("Saved materials to "+path, -1)
	return nil
}

// Save writes the capture if it changed and the materials if they changed
// and have a file; it returns true when materials still need a file name.
func (s *Session) Save() (needMaterialsPath bool, err error) {
	if s.CaptureDirty {
		if err := s.SaveCapture(); err != nil {
			return false, err
		}
	}
	if s.MaterialsDirty {
		if s.MaterialsPath == "" {
			return true, nil
		}
		return false, s.SaveMaterials(s.MaterialsPath)
	}
	return false, nil
}

// ProblemPhoto returns the photo index a problem's JSON path points into
// (photos[12].camera gives 12), or -1.
func ProblemPhoto(p capture.Problem) int {
	var i int
	if _, err := fmt.Sscanf(p.Path, "photos[%d]", &i); err == nil {
		return i
	}
	return -1
}

// PhotoLabel is the short label of a photo in lists.
func (s *Session) PhotoLabel(i int) string {
	if s.Capture == nil || i < 0 || i >= len(s.Capture.Photos) {
		return ""
	}
	p := s.Capture.Photos[i]
	use := p.Use
	if use == "" {
		use = capture.UseFit
	}
	return fmt.Sprintf("%s\n%s · %s · %s", filepath.Base(p.File), p.Camera, strings.Join(p.Lights, "+"), use)
}

// Cameras, LightIDs list the ids for the filters.
func (s *Session) Cameras() []string {
	var ids []string
	if s.Capture != nil {
		for _, c := range s.Capture.Cameras {
			ids = append(ids, c.ID)
		}
	}
	return ids
}

// LightIDs lists the capture's light ids.
func (s *Session) LightIDs() []string {
	var ids []string
	if s.Capture != nil {
		for _, l := range s.Capture.Lights {
			ids = append(ids, l.ID)
		}
	}
	return ids
}

// SetFilter changes the photo filter.
func (s *Session) SetFilter(f PhotoFilter) {
	s.Filter = f
	s.notify(ChangeFilter)
}

// FilteredPhotos lists the photos the filter lets through, in file order.
func (s *Session) FilteredPhotos() []int {
	if s.Capture == nil {
		return nil
	}
	var out []int
	for i, p := range s.Capture.Photos {
		use := p.Use
		if use == "" {
			use = capture.UseFit
		}
		if s.Filter.Camera != "" && p.Camera != s.Filter.Camera {
			continue
		}
		if s.Filter.Use != "" && use != s.Filter.Use {
			continue
		}
		if s.Filter.Light != "" {
			found := false
			for _, l := range p.Lights {
				found = found || l == s.Filter.Light
			}
			if !found {
				continue
			}
		}
		out = append(out, i)
	}
	return out
}

// StepPhoto selects the next (+1) or previous (-1) photo of the filtered
// list, wrapping around.
func (s *Session) StepPhoto(d int) {
	list := s.FilteredPhotos()
	if len(list) == 0 {
		return
	}
	pos := sort.SearchInts(list, s.Selected)
	if pos < len(list) && list[pos] == s.Selected {
		pos = ((pos+d)%len(list) + len(list)) % len(list)
	} else if d < 0 {
		pos = len(list) - 1
	} else {
		pos = 0
	}
	s.SelectPhoto(list[pos])
}

// SetPhotoUse switches a photo between fit, holdout and ignore.
func (s *Session) SetPhotoUse(i int, use string) error {
	if s.Capture == nil || i < 0 || i >= len(s.Capture.Photos) {
		return fmt.Errorf("no photo %d", i)
	}
	switch use {
	case capture.UseFit, capture.UseHoldout, capture.UseIgnore:
	default:
		return fmt.Errorf("photo use %q: expected fit, holdout or ignore", use)
	}
	if s.Capture.Photos[i].Use == use {
		return nil
	}
	s.Capture.Photos[i].Use = use
	s.CaptureDirty = true
	s.notify(ChangeFilter)
	s.notify(ChangeDirty)
	return nil
}

// SetOverlays changes the overlays and recomputes them for the selected
// photo.
func (s *Session) SetOverlays(o Overlays) {
	s.Overlays = o
	s.notify(ChangePhoto)
	s.refreshOverlay()
}

// ToggleOverlay flips one overlay by name: wireframe, segments, mask or
// lights.
func (s *Session) ToggleOverlay(name string) {
	o := s.Overlays
	switch name {
	case "wireframe":
		o.Wireframe = !o.Wireframe
	case "segments":
		o.Segments = !o.Segments
	case "mask":
		o.Mask = !o.Mask
	case "lights":
		o.Lights = !o.Lights
	}
	s.SetOverlays(o)
}

// ensureSegments gives the capture an explicit segment list (the effective
// one) so a model can be edited and saved.
func (s *Session) ensureSegments() {
	if len(s.Capture.Segments) == 0 {
		s.Capture.Segments = append([]capture.Segment(nil), s.Segments...)
	}
}

// SetModel changes segment i's reflectance model (dielectric, metal, free).
func (s *Session) SetModel(i int, model string) error {
	if i < 0 || i >= len(s.Materials) {
		return fmt.Errorf("no segment %d", i)
	}
	kind, err := brdf.ParseKind(model)
	if err != nil {
		return err
	}
	s.ensureSegments()
	if s.Capture.Segments[i].Model != model {
		s.Capture.Segments[i].Model = model
		s.Segments[i].Model = model
		s.CaptureDirty = true
	}
	p := s.Materials[i].Params
	if p.Kind != kind {
		p.Kind = kind
		switch kind {
		case brdf.Metal:
			p.Diffuse = brdf.RGB{}
		case brdf.Dielectric:
			p.Specular = brdf.RGB{p.Specular[0], p.Specular[0], p.Specular[0]}
			if p.Diffuse == (brdf.RGB{}) {
				p.Diffuse = brdf.RGB{0.5, 0.5, 0.5}
			}
		}
		s.Materials[i].Params = p
		s.Materials[i].Sigma = nil
		s.MaterialsDirty = true
	}
	s.notify(ChangeMaterials)
	s.notify(ChangeDirty)
	s.RestartRelight()
	return nil
}

// SetParams sets segment i's parameters (the starting values of a fit,
// and what the relight view shows until a fit replaces them).
func (s *Session) SetParams(i int, p brdf.Params) error {
	if i < 0 || i >= len(s.Materials) {
		return fmt.Errorf("no segment %d", i)
	}
	p.Kind = s.Materials[i].Params.Kind
	if p.Kind == brdf.Dielectric {
		p.Specular = brdf.RGB{p.Specular[0], p.Specular[0], p.Specular[0]}
	}
	if err := p.Validate(); err != nil {
		return err
	}
	s.Materials[i].Params = p
	s.Materials[i].Preset = ""
	s.MaterialsDirty = true
	s.notify(ChangeMaterials)
	s.notify(ChangeDirty)
	s.RestartRelight()
	return nil
}

// SetLock holds (or frees) a parameter group of segment i.
func (s *Session) SetLock(i int, l Lock, on bool) {
	if i < 0 || i >= len(s.Materials) {
		return
	}
	if on {
		s.Materials[i].Locked |= l
	} else {
		s.Materials[i].Locked &^= l
	}
	s.notify(ChangeMaterials)
}

// ApplyPreset sets segment i to a preset of brdf's table (its model
// follows the preset's kind).
func (s *Session) ApplyPreset(i int, name string) error {
	pr, ok := brdf.PresetByName(name)
	if !ok {
		return fmt.Errorf("no preset %q", name)
	}
	if err := s.SetModel(i, pr.Params.Kind.String()); err != nil {
		return err
	}
	if err := s.SetParams(i, pr.Params); err != nil {
		return err
	}
	s.Materials[i].Preset = name
	s.notify(ChangeMaterials)
	return nil
}

// renderMaterials returns the reflectance per mesh segment label, the
// order render.Render takes.
func (s *Session) renderMaterials() []brdf.Params {
	n := 1
	if s.Mesh != nil {
		n = max(1, len(s.Mesh.SegmentLabels))
	}
	out := make([]brdf.Params, n)
	for l := range out {
		out[l] = neutral(brdf.Dielectric)
		if l < len(s.LabelSeg) && s.LabelSeg[l] >= 0 && s.LabelSeg[l] < len(s.Materials) {
			out[l] = s.Materials[s.LabelSeg[l]].Params
		}
	}
	return out
}

// photoPix returns the decoded selected photo, if loaded.
func (s *Session) photoPix() *photo.Image { return s.photo.img }
