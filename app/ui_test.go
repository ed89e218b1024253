package app

import (
	"context"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"
)

// newTestWorkbench opens a copy of the fixture in a workbench on the test
// driver (no display). In the test driver fyne.Do runs at once on the
// caller, so jobs hand their results over on their own goroutine; the
// tests wait on the jobs before reading.
func newTestWorkbench(t *testing.T) *Workbench {
	t.Helper()
	return openTestWorkbench(t, func(q chan func()) Poster { return func(f func()) { q <- f } }, nil)
}

// openTestWorkbench is newTestWorkbench with the Poster made by post from
// the stand-in UI queue; beforeClose, if set, runs first at cleanup.
func openTestWorkbench(t *testing.T, post func(q chan func()) Poster, beforeClose func()) *Workbench {
	t.Helper()
	a := test.NewTempApp(t)
	dir := t.TempDir()
	copyTree(t, filepath.Dir(fixture), dir)
	q := make(chan func(), 4096)
	wb := New(context.Background(), a, Options{Capture: filepath.Join(dir, "capture.json"), Post: post(q)})
	wb.S.queue = q
	t.Cleanup(func() {
		if beforeClose != nil {
			beforeClose()
		}
		wb.cancel()
		wb.S.jobs.cancelAll()
		done := make(chan struct{})
		go func() { wb.S.jobs.wait(); close(done) }()
		for {
			select {
			case f := <-q:
				f()
				continue
			case <-done:
			}
			break
		}
	})
	wb.Win.Resize(fyne.NewSize(1200, 760))
	if err := waitJob(t, wb.S, "open"); err != nil {
		t.Fatal(err)
	}
	waitJob(t, wb.S, "photo")
	return wb
}

func TestWorkbenchOpens(t *testing.T) {
	wb := newTestWorkbench(t)
	if got := wb.Win.Title(); got != "jar, small (synthetic fixture) - Patina" {
		t.Errorf("title %q", got)
	}
	if !strings.Contains(wb.capture.summary.Text, "Photos: 4 (fit 3, holdout 1, ignore 0)") {
		t.Errorf("summary %q", wb.capture.summary.Text)
	}
	if len(wb.recent()) != 1 || !strings.HasSuffix(wb.recent()[0], "capture.json") {
		t.Errorf("recent %v", wb.recent())
	}
	// The photo viewer shows the first photo.
	if wb.photos.viewer.img == nil || wb.photos.list.Length() != 4 {
		t.Fatalf("viewer image %v, list %d", wb.photos.viewer.img != nil, wb.photos.list.Length())
	}
	// The status line reports the open.
	if !strings.HasPrefix(wb.status.Text, "Photo ") && !strings.HasPrefix(wb.status.Text, "Opened ") {
		t.Errorf("status %q", wb.status.Text)
	}
}

func TestWorkbenchPhotosView(t *testing.T) {
	wb := newTestWorkbench(t)
	wb.ShowView(ViewPhotos)
	// Next photo by keyboard: Page Down on the canvas.
	wb.Win.Canvas().OnTypedKey()(&fyne.KeyEvent{Name: fyne.KeyPageDown})
	waitJob(t, wb.S, "photo")
	if wb.S.Selected != 1 {
		t.Fatalf("selected %d after Page Down", wb.S.Selected)
	}
	// Toggle an overlay with its check box: the session and the viewer follow.
	test.Tap(wb.photos.checks["segments"])
	waitJob(t, wb.S, "overlay")
	if !wb.S.Overlays.Segments || wb.photos.viewer.overlay == nil {
		t.Fatal("segment overlay not shown")
	}
	// The shortcut toggles it back.
	wb.S.ToggleOverlay("segments")
	waitJob(t, wb.S, "overlay")
	if wb.photos.checks["segments"].Checked {
		t.Error("check box not updated by the toggle")
	}
	// Filtering by use narrows the list.
	wb.photos.useSel.SetSelected("holdout")
	if wb.photos.list.Length() != 1 {
		t.Errorf("holdout filter lists %d photos", wb.photos.list.Length())
	}
	// Switching the photo's use marks the title unsaved.
	wb.S.SelectPhoto(3)
	waitJob(t, wb.S, "photo")
	wb.photos.useRadio.SetSelected("ignore")
	if wb.S.Capture.Photos[3].Use != "ignore" || !strings.HasPrefix(wb.Win.Title(), "* ") {
		t.Errorf("use %q title %q", wb.S.Capture.Photos[3].Use, wb.Win.Title())
	}
	// Zoom with the wheel, then fit again with a double tap.
	v := wb.photos.viewer
	wb.Win.Canvas().Refresh(v)
	test.Scroll(wb.Win.Canvas(), fyne.NewPos(400, 300), 0, 50)
	z := v.Zoom()
	v.DoubleTapped(nil)
	v.generate(400, 300)
	if v.Zoom() == z {
		t.Errorf("zoom unchanged by wheel and fit (%v)", z)
	}
}

func TestWorkbenchFitStartCancel(t *testing.T) {
	wb := newTestWorkbench(t)
	test.Tap(wb.fitv.startB)
	j := wb.S.Job("fit")
	if j == nil {
		t.Fatal("no fit job after Start")
	}
	if !wb.fitv.startB.Disabled() || wb.fitv.cancelB.Disabled() {
		t.Error("buttons not switched while running")
	}
	test.Tap(wb.fitv.cancelB)
	waitFor(t, wb.S, j)
	if !wb.S.Fit.Cancelled || wb.fitv.startB.Disabled() {
		t.Fatalf("after cancel: %+v", wb.S.Fit)
	}
	if !strings.Contains(wb.fitv.stage.Text, "Cancelled") {
		t.Errorf("stage %q", wb.fitv.stage.Text)
	}
	// A full fit fills the table.
	wb.fitv.start()
	if err := waitJob(t, wb.S, "fit"); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(wb.fitv.result.Text, "3 segments") {
		t.Errorf("result %q", wb.fitv.result.Text)
	}
	cell := materialCell(wb.S.Materials[0], 5)
	if !strings.Contains(cell, "±") {
		t.Errorf("roughness cell %q has no sigma", cell)
	}
}

func TestWorkbenchMaterialsEditor(t *testing.T) {
	wb := newTestWorkbench(t)
	mv := wb.materials
	mv.table.Select(widget.TableCellID{Row: 0, Col: 1})
	if mv.title.Text != "Segment glaze" {
		t.Fatalf("editor title %q", mv.title.Text)
	}
	mv.rough.SetText("0.33")
	mv.commit()
	if wb.S.Materials[0].Params.Roughness != 0.33 {
		t.Errorf("roughness %v", wb.S.Materials[0].Params.Roughness)
	}
	test.Tap(mv.locks[2])
	if wb.S.Materials[0].Locked&LockRoughness == 0 {
		t.Error("lock not set")
	}
	mv.preset.SetSelected("copper")
	mv.table.Select(widget.TableCellID{Row: 1, Col: 1})
	mv.preset.SetSelected("copper")
	if err := wb.S.ApplyPreset(1, "copper"); err != nil {
		t.Fatal(err)
	}
	if wb.S.Materials[1].Preset != "copper" || materialCell(wb.S.Materials[1], 9) != "preset copper" {
		t.Errorf("preset not shown: %q", materialCell(wb.S.Materials[1], 9))
	}
	mv.rough.SetText("abc")
	var got *UserError
	wb.S.OnError = func(e *UserError) { got = e }
	mv.commit()
	if got == nil || got.Advice == "" {
		t.Error("bad number gave no error with advice")
	}
}

func TestWorkbenchRelightView(t *testing.T) {
	wb := newTestWorkbench(t)
	wb.S.Relight.SPP = 2
	wb.S.Relight.Width, wb.S.Relight.Height = 64, 48
	wb.ShowView(ViewRelight)
	if !wb.S.Relight.Active {
		t.Fatal("relight not active when shown")
	}
	waitJob(t, wb.S, "relight")
	if wb.relight.viewer.img == nil || !strings.Contains(wb.relight.info.Text, "samples per pixel") {
		t.Fatalf("no relight image; info %q", wb.relight.info.Text)
	}
	g := wb.S.Relight.Generation
	// Move the light on the dome: the render restarts with the new direction.
	wb.relight.pad.Resize(fyne.NewSize(140, 140))
	test.TapAt(wb.relight.pad, fyne.NewPos(70, 70)) // the centre: straight overhead
	waitJob(t, wb.S, "relight")
	if wb.S.Relight.Generation == g || wb.S.Relight.PointElevation < 80 {
		t.Errorf("light not moved overhead: generation %d, elevation %v", wb.S.Relight.Generation, wb.S.Relight.PointElevation)
	}
	// The sky environment shows its sun controls.
	wb.relight.envSel.SetSelected(EnvSky)
	waitJob(t, wb.S, "relight")
	if wb.S.Relight.Env != EnvSky || !wb.relight.skyBox.Visible() {
		t.Error("sky not selected")
	}
	// Dragging orbits.
	az := wb.S.Relight.Azimuth
	wb.relight.viewer.Dragged(&fyne.DragEvent{Dragged: fyne.Delta{DX: 20}})
	if wb.S.Relight.Azimuth == az {
		t.Error("drag did not orbit")
	}
	wb.ShowView(ViewCompare)
	// Leaving the view cancels the render; its goroutine notices at the
	// next tile, so allow it a moment to return.
	if j := wb.S.Job("relight"); j != nil {
		deadline := time.After(5 * time.Second)
	wait:
		for {
			select {
			case f := <-wb.S.queue:
				f()
			case <-j.Done():
				break wait
			case <-deadline:
				t.Fatal("render kept running 5 s after leaving the view")
			}
		}
		drain(wb.S.queue)
	}
	if wb.S.Job("relight") != nil {
		t.Error("a render was started again after leaving the view")
	}
}

func TestWorkbenchCompareModes(t *testing.T) {
	wb := newTestWorkbench(t)
	wb.ShowView(ViewCompare)
	test.Tap(wb.compare.runB)
	if err := waitJob(t, wb.S, "compare"); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(5 * time.Second)
	for wb.S.Compare.Running && time.Now().Before(deadline) {
		time.Sleep(5 * time.Millisecond)
	}
	cv := wb.compare
	if len(cv.views.Objects) != 2 || cv.right.img == nil || !strings.Contains(cv.verdict.Text, "fadgi-3star") {
		t.Fatalf("side by side not shown: %d views, verdict %q", len(cv.views.Objects), cv.verdict.Text)
	}
	cv.mode.SetSelected("Wipe")
	if wb.S.Compare.Mode != CompareWipe || len(cv.views.Objects) != 1 || cv.left.left == nil || cv.wipe.Disabled() {
		t.Fatal("wipe mode not shown")
	}
	cv.wipe.SetValue(0.25)
	if wb.S.Compare.Wipe != 0.25 {
		t.Errorf("wipe %v", wb.S.Compare.Wipe)
	}
	wb.S.CycleCompareMode()
	if cv.mode.Selected != "Delta E 2000 map" || cv.left.img != wb.S.Compare.Maps.DeltaEImage {
		t.Error("Delta E map not shown")
	}
	// The report is made from saved files: unsaved materials are refused
	// with advice.
	if _, err := wb.S.ExportReport(filepath.Join(t.TempDir(), "r.html")); err != ErrSaveFirst {
		t.Errorf("report with unsaved materials: %v", err)
	}
}

func TestWorkbenchShortcutsListed(t *testing.T) {
	wb := newTestWorkbench(t)
	want := []string{"Ctrl+O", "Ctrl+S", "Ctrl+F", "Escape", "Ctrl+M", "Ctrl+Right", "Ctrl+Left", "Ctrl+Shift+W"}
	have := map[string]bool{}
	for _, s := range wb.Shortcuts {
		have[s[0]] = true
	}
	for _, w := range want {
		if !have[w] {
			t.Errorf("shortcut %s not listed", w)
		}
	}
	// Ctrl+3 shows the Materials view; Ctrl+M toggles the wireframe.
	typed := wb.Win.Canvas().(interface{ TypedShortcut(fyne.Shortcut) })
	ctrl := func(k fyne.KeyName) {
		typed.TypedShortcut(&desktop.CustomShortcut{KeyName: k, Modifier: fyne.KeyModifierShortcutDefault})
	}
	ctrl(fyne.Key3)
	if wb.Tabs.Selected().Text != ViewMaterials {
		t.Errorf("Ctrl+3 selected %q", wb.Tabs.Selected().Text)
	}
	ctrl(fyne.KeyM)
	waitJob(t, wb.S, "overlay")
	if !wb.S.Overlays.Wireframe || !wb.photos.checks["wireframe"].Checked {
		t.Error("Ctrl+M did not toggle the wireframe")
	}
	ctrl(fyne.KeyRight)
	waitJob(t, wb.S, "photo")
	if wb.S.Selected != 1 {
		t.Errorf("Ctrl+Right selected photo %d", wb.S.Selected)
	}
}
