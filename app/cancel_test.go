package app

import (
	"context"
	"crypto/sha256"
	"encoding/json"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"reflect"
	"sync/atomic"
	"testing"
	"time"

	"fyne.io/fyne/v2/test"

	"patina/fit"
)

// The workbench's promise on cancel (issue 11, point 4): cancelling a fit
// or a render leaves the session exactly as it was before the task
// started: the segment table, the last fit's result, the selected photo,
// the overlays and filter, the relight settings and image, the capture and
// every file on disk. Only the record of the task itself (the fit view's
// "cancelled") may change.
//
// To cancel provably in the middle of the work, and not before it starts
// or after it ends, the workbench's Poster is gated: once armed, the first
// goroutine that hands a result to the UI (the task's worker, with its
// first progress report or first image) is held until the test has
// cancelled, and only then is its result queued. That result must then
// change nothing.

// gate holds the first post made after arm until release.
type gate struct {
	armed   atomic.Bool
	hit     chan struct{}
	release chan struct{}
}

func (g *gate) arm() {
	g.hit, g.release = make(chan struct{}, 1), make(chan struct{})
	g.armed.Store(true) // publishes the channels to the poster
}

// newGatedWorkbench opens a copy of the fixture in a workbench on the test
// driver, as newTestWorkbench does, with a gated Poster.
func newGatedWorkbench(t *testing.T) (*Workbench, *gate) {
	t.Helper()
	g := &gate{}
	post := func(q chan func()) Poster {
		return func(f func()) {
			if g.armed.CompareAndSwap(true, false) {
				g.hit <- struct{}{}
				<-g.release
			}
			q <- f
		}
	}
	release := func() {
		if g.armed.Swap(false) && g.release != nil {
			close(g.release)
		}
	}
	return openTestWorkbench(t, post, release), g
}

// settle waits until no job of the session runs and the UI queue is empty,
// so that a snapshot is not taken while something is still arriving.
func settle(t *testing.T, s *Session) {
	t.Helper()
	for range 1000 {
		s.jobs.mu.Lock()
		var j *Job
		for _, r := range s.jobs.running {
			j = r
			break
		}
		s.jobs.mu.Unlock()
		if j != nil {
			waitFor(t, s, j)
			continue
		}
		if len(s.queue) == 0 {
			return
		}
		drain(s.queue) // may start jobs: look again
	}
	t.Fatal("jobs kept starting")
}

// waitHit serves the UI queue until the gate holds a poster.
func waitHit(t *testing.T, s *Session, g *gate, what string) {
	t.Helper()
	timeout := time.After(90 * time.Second)
	for {
		select {
		case f := <-s.queue:
			f()
		case <-g.hit:
			return
		case <-timeout:
			t.Fatalf("%s: no result was handed to the UI in 90 s", what)
		}
	}
}

// fileState is what a file on disk is: its size, time and content.
type fileState struct {
	Size int64
	Mod  time.Time
	Sum  [32]byte
}

// sessionSnap is everything a cancel must leave as it was.
type sessionSnap struct {
	Materials      []SegmentMaterial
	MaterialsPath  string
	FitResult      *fit.Result
	Scale          float64
	CaptureDirty   bool
	MaterialsDirty bool
	Selected       int
	Filter         PhotoFilter
	Overlays       Overlays
	Relight        RelightState // settings only: image fields are below
	RelightPix     []float32
	RelightSize    [3]int // W, H, Done
	Status         string
	Progress       float64
	Capture        string // the capture as JSON (cameras, lights, photos and their uses)
	Title          string
	Files          map[string]fileState
}

func snapshot(t *testing.T, wb *Workbench) sessionSnap {
	t.Helper()
	s := wb.S
	sn := sessionSnap{MaterialsPath: s.MaterialsPath, FitResult: s.FitResult, Scale: s.Scale,
		CaptureDirty: s.CaptureDirty, MaterialsDirty: s.MaterialsDirty, Selected: s.Selected,
		Filter: s.Filter, Overlays: s.Overlays, Status: s.Status, Progress: s.Progress, Title: wb.Win.Title()}
	for _, m := range s.Materials {
		c := m
		if m.Sigma != nil {
			sig := *m.Sigma
			c.Sigma = &sig
		}
		c.Warnings = append([]string(nil), m.Warnings...)
		sn.Materials = append(sn.Materials, c)
	}
	r := s.Relight
	sn.RelightPix = append([]float32(nil), r.Pix...)
	sn.RelightSize = [3]int{r.W, r.H, r.Done}
	// Generation counts restarts (a counter, not a setting); the rest of
	// the image record is compared above.
	r.Pix, r.W, r.H, r.Done, r.Elapsed, r.FirstImage, r.Generation = nil, 0, 0, 0, 0, 0, 0
	r.imageGen, r.display, r.disp, r.envKey, r.envMap = 0, nil, Display{}, "", nil
	sn.Relight = r
	js, err := json.Marshal(struct {
		Cameras, Lights, Photos, Segments any
	}{s.Capture.Cameras, s.Capture.Lights, s.Capture.Photos, s.Capture.Segments})
	if err != nil {
		t.Fatal(err)
	}
	sn.Capture = string(js)
	sn.Files = map[string]fileState{}
	err = filepath.WalkDir(s.Capture.Dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		info, err := d.Info()
		if err != nil {
			return err
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		sn.Files[p] = fileState{Size: info.Size(), Mod: info.ModTime(), Sum: sha256.Sum256(data)}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return sn
}

// compareSnaps reports every field of got that differs from want.
func compareSnaps(t *testing.T, what string, want, got sessionSnap) {
	t.Helper()
	wv, gv := reflect.ValueOf(want), reflect.ValueOf(got)
	for i := 0; i < wv.NumField(); i++ {
		if !reflect.DeepEqual(wv.Field(i).Interface(), gv.Field(i).Interface()) {
			name := wv.Type().Field(i).Name
			if name == "RelightPix" {
				t.Errorf("%s changed the relight image (%d values before, %d after)", what, len(want.RelightPix), len(got.RelightPix))
				continue
			}
			t.Errorf("%s changed %s:\n before %+v\n after  %+v", what, name, wv.Field(i).Interface(), gv.Field(i).Interface())
		}
	}
}

// TestWorkbenchCancelFitKeepsSession cancels a fit in the middle, after a
// first fit has filled the table and the user has edited it, selected a
// photo, turned on an overlay and changed relight settings.
func TestWorkbenchCancelFitKeepsSession(t *testing.T) {
	wb, g := newGatedWorkbench(t)
	s := wb.S
	// A finished fit first, so that there is a result to keep.
	wb.ShowView(ViewFit)
	wb.fitv.start()
	if err := waitJob(t, s, "fit"); err != nil {
		t.Fatal(err)
	}
	if s.FitResult == nil {
		t.Fatal("no result from the first fit")
	}
	// The user's own edits after it.
	p := s.Materials[1].Params
	p.Roughness = 0.42
	if err := s.SetParams(1, p); err != nil {
		t.Fatal(err)
	}
	s.SetLock(0, LockRoughness, true)
	s.SelectPhoto(2)
	s.ToggleOverlay("segments")
	s.SetFilter(PhotoFilter{Use: "fit"})
	rs := s.Relight
	rs.Env, rs.Exposure, rs.PointAzimuth = EnvSky, 0.5, 100
	s.SetRelight(rs) // not shown: no render starts
	settle(t, s)
	before := snapshot(t, wb)

	g.arm()
	test.Tap(wb.fitv.startB)
	j := s.Job("fit")
	if j == nil {
		t.Fatal("no fit job after Start")
	}
	waitHit(t, s, g, "fit")
	// The fit's worker is held in its first progress report: the fit is
	// under way. Cancel it with the button, as the user would.
	test.Tap(wb.fitv.cancelB)
	close(g.release)
	if err := waitFor(t, s, j); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled fit returned %v", err)
	}
	settle(t, s)
	if s.Fit.Running || !s.Fit.Cancelled {
		t.Fatalf("fit state after cancel: running %v, cancelled %v", s.Fit.Running, s.Fit.Cancelled)
	}
	after := snapshot(t, wb)
	// The status line says the fit was cancelled; everything else is as it
	// was.
	after.Status, after.Progress = before.Status, before.Progress
	compareSnaps(t, "cancelling the fit", before, after)
	if s.Materials[1].Params.Roughness != 0.42 || s.Materials[0].Locked&LockRoughness == 0 {
		t.Errorf("the user's edits are gone: %+v", s.Materials[:2])
	}
}

// TestWorkbenchCancelRenderKeepsSession cancels a render by leaving the
// relight view while its worker holds its first image: first when no
// render has finished yet, then when an earlier render's image is shown.
// The held image must not arrive after the cancel.
func TestWorkbenchCancelRenderKeepsSession(t *testing.T) {
	wb, g := newGatedWorkbench(t)
	s := wb.S
	s.Relight.SPP = 2
	s.Relight.Width, s.Relight.Height = 64, 48
	s.SelectPhoto(1)
	s.ToggleOverlay("wireframe")
	wb.ShowView(ViewPhotos)
	settle(t, s)

	for round, what := range []string{"cancelling the first render", "cancelling a render over a finished one"} {
		if round == 1 {
			// A finished render to keep.
			wb.ShowView(ViewRelight)
			if err := waitJob(t, s, "relight"); err != nil {
				t.Fatal(err)
			}
			if s.Relight.Pix == nil {
				t.Fatal("no image from the finished render")
			}
			wb.ShowView(ViewPhotos)
			settle(t, s)
		}
		before := snapshot(t, wb)
		g.arm()
		wb.ShowView(ViewRelight)
		j := s.Job("relight")
		if j == nil {
			t.Fatalf("%s: no render started", what)
		}
		waitHit(t, s, g, what)
		// The worker holds its coarse first image. Leave the view.
		wb.ShowView(ViewPhotos)
		close(g.release)
		if err := waitFor(t, s, j); err != nil && !errors.Is(err, context.Canceled) {
			t.Fatalf("%s: the render returned %v", what, err)
		}
		settle(t, s)
		if s.Relight.Active || s.Job("relight") != nil {
			t.Fatalf("%s: the render still runs", what)
		}
		compareSnaps(t, what, before, snapshot(t, wb))
	}
}
