package app

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/widget"

	"patina/assets/demo"
)

// Options say what the workbench opens with.
type Options struct {
	Capture   string // capture file to open, or empty
	Materials string // materials file to load with it, or empty
	// Post hands work to the UI goroutine; nil means fyne.Do. Tests pass
	// a queue they drain themselves.
	Post Poster
}

// View names, in tab order; Ctrl+1 .. Ctrl+6 select them.
const (
	ViewCapture   = "Capture"
	ViewPhotos    = "Photos"
	ViewMaterials = "Materials"
	ViewFit       = "Fit"
	ViewRelight   = "Relight"
	ViewCompare   = "Compare"
)

// Workbench is the window over a session.
type Workbench struct {
	App     fyne.App
	Win     fyne.Window
	S       *Session
	Tabs    *container.AppTabs
	ctx     context.Context
	cancel  context.CancelFunc
	status  *widget.Label
	prog    *widget.ProgressBar
	stopBtn *widget.Button

	capture   *captureView
	photos    *photosView
	materials *materialsView
	fitv      *fitView
	relight   *relightView
	compare   *compareView
	// Shortcuts lists the keyboard shortcuts, for the Help menu.
	Shortcuts [][2]string
	closing   bool
}

// recentKey is the preference holding recently opened captures.
const recentKey = "recent-captures"

// New builds the workbench window of app a (fyne.io/fyne/v2/app in the
// binary, fyne.io/fyne/v2/test in tests).
func New(ctx context.Context, a fyne.App, opt Options) *Workbench {
	ctx, cancel := context.WithCancel(ctx)
	wb := &Workbench{App: a, ctx: ctx, cancel: cancel}
	post := opt.Post
	if post == nil {
		post = fyne.Do
	}
	wb.S = NewSession(ctx, post)
	wb.Win = a.NewWindow("Patina")
	wb.S.OnError = wb.showError

	wb.capture = newCaptureView(wb)
	wb.photos = newPhotosView(wb)
	wb.materials = newMaterialsView(wb)
	wb.fitv = newFitView(wb)
	wb.relight = newRelightView(wb)
	wb.compare = newCompareView(wb)
	wb.Tabs = container.NewAppTabs(
		container.NewTabItem(ViewCapture, wb.capture.root),
		container.NewTabItem(ViewPhotos, wb.photos.root),
		container.NewTabItem(ViewMaterials, wb.materials.root),
		container.NewTabItem(ViewFit, wb.fitv.root),
		container.NewTabItem(ViewRelight, wb.relight.root),
		container.NewTabItem(ViewCompare, wb.compare.root),
	)
	wb.Tabs.OnSelected = func(ti *container.TabItem) {
		wb.S.SetRelightActive(ti.Text == ViewRelight)
		if ti.Text != ViewCompare {
			wb.S.Cancel("compare")
		} else if cs := wb.S.Compare; cs.Result == nil && !cs.Running && cs.Photo >= 0 {
			// The first visit compares at once: there is nothing else to see.
			wb.S.RunCompare()
		}
	}
	wb.status = widget.NewLabel("Open a capture (Ctrl+O) or make the demo capture (File menu).")
	wb.status.Truncation = fyne.TextTruncateEllipsis
	wb.prog = widget.NewProgressBar()
	wb.prog.Hide()
	wb.stopBtn = widget.NewButton("Stop", wb.cancelTask)
	wb.stopBtn.Hide()
	bar := container.NewBorder(nil, nil, nil, container.NewHBox(wb.prog, wb.stopBtn), wb.status)
	wb.Win.SetContent(container.NewBorder(nil, bar, nil, nil, wb.Tabs))
	wb.Win.Resize(fyne.NewSize(1200, 760))
	wb.buildMenus()
	wb.S.Listen(wb.onChange)

	wb.Win.SetCloseIntercept(func() {
		if wb.S.Dirty() {
			dialog.ShowConfirm("Unsaved changes",
				"The capture or the materials have changes that are not saved.\nQuit without saving? (Choose No, then File > Save.)",
				func(quit bool) {
					if quit {
						wb.closeNow()
					}
				}, wb.Win)
			return
		}
		wb.closeNow()
	})
	if opt.Capture != "" {
		wb.S.Open(opt.Capture, opt.Materials)
	}
	return wb
}

func (wb *Workbench) closeNow() {
	wb.closing = true
	wb.S.jobs.cancelAll()
	wb.cancel()
	wb.Win.Close()
}

// Run shows the window, runs the application until the window closes, then
// stops every job and waits for them.
func (wb *Workbench) Run() {
	go func() {
		<-wb.ctx.Done()
		fyne.Do(func() {
			if !wb.closing {
				wb.closeNow()
			}
		})
	}()
	wb.Win.ShowAndRun()
	wb.cancel()
	wb.S.Close()
}

// onChange routes session changes to the views (UI goroutine).
func (wb *Workbench) onChange(c Change) {
	switch c {
	case ChangeStatus:
		wb.status.SetText(wb.S.Status)
		if wb.S.Progress >= 0 {
			wb.prog.SetValue(wb.S.Progress)
			wb.prog.Show()
			wb.stopBtn.Show()
		} else {
			wb.prog.Hide()
			wb.stopBtn.Hide()
		}
	case ChangeDirty:
		wb.Win.SetTitle(wb.S.Title())
	case ChangeCapture:
		wb.Win.SetTitle(wb.S.Title())
		if wb.S.Capture != nil {
			wb.addRecent(wb.S.Capture.Path)
		}
	}
	wb.capture.update(c)
	wb.photos.update(c)
	wb.materials.update(c)
	wb.fitv.update(c)
	wb.relight.update(c)
	wb.compare.update(c)
}

// cancelTask stops the task the status line shows.
func (wb *Workbench) cancelTask() {
	for _, k := range []string{"fit", "compare", "report", "demo", "open"} {
		if wb.S.Job(k) != nil {
			wb.S.Cancel(k)
			return
		}
	}
}

// showError shows a dialog that says what failed and what to do.
func (wb *Workbench) showError(e *UserError) {
	msg := widget.NewLabel(e.Err.Error())
	msg.Wrapping = fyne.TextWrapWord
	what := widget.NewLabel("What to do: " + e.Advice)
	what.Wrapping = fyne.TextWrapWord
	box := container.NewVBox(msg, widget.NewSeparator(), what)
	d := dialog.NewCustom(e.Title+" failed", "OK", container.NewGridWrap(fyne.NewSize(520, box.MinSize().Height+60), box), wb.Win)
	d.Show()
}

func (wb *Workbench) recent() []string {
	return wb.App.Preferences().StringListWithFallback(recentKey, nil)
}

func (wb *Workbench) addRecent(path string) {
	list := []string{path}
	for _, p := range wb.recent() {
		if p != path && len(list) < 8 {
			list = append(list, p)
		}
	}
	wb.App.Preferences().SetStringList(recentKey, list)
}

// OpenDialog asks for a capture file.
func (wb *Workbench) OpenDialog() {
	d := dialog.NewFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil || r == nil {
			return
		}
		path := r.URI().Path()
		r.Close()
		wb.S.Open(path, "")
	}, wb.Win)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".json"}))
	d.Resize(fyne.NewSize(900, 600))
	d.Show()
}

// LoadMaterialsDialog asks for a materials file.
func (wb *Workbench) LoadMaterialsDialog() {
	d := dialog.NewFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil || r == nil {
			return
		}
		path := r.URI().Path()
		r.Close()
		if err := wb.S.LoadMaterials(path); err != nil {
			wb.S.fail("Loading materials", err, "Choose a materials file written for this capture (by Patina's fit); its segment names must match the capture's.")
		}
	}, wb.Win)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".json"}))
	d.Resize(fyne.NewSize(900, 600))
	d.Show()
}

// saveDialog asks for a file name to write, then calls write with it.
func (wb *Workbench) saveDialog(name string, exts []string, write func(path string) error, what string) {
	d := dialog.NewFileSave(func(w fyne.URIWriteCloser, err error) {
		if err != nil || w == nil {
			return
		}
		path := w.URI().Path()
		w.Close()
		os.Remove(path) // the dialog creates an empty file; ours is written atomically
		if err := write(path); err != nil {
			wb.S.fail(what, err, "Choose a folder you can write to and a file name ending in "+strings.Join(exts, " or ")+".")
		}
	}, wb.Win)
	d.SetFileName(name)
	d.SetFilter(storage.NewExtensionFileFilter(exts))
	d.Resize(fyne.NewSize(900, 600))
	d.Show()
}

// Save writes what changed (Ctrl+S): the capture, and the materials,
// asking for a file name the first time.
func (wb *Workbench) Save() {
	if wb.S.Capture == nil {
		return
	}
	need, err := wb.S.Save()
	if err != nil {
		wb.S.fail("Saving", err, "Check that the capture's folder is writable; nothing was overwritten.")
		return
	}
	if need {
		wb.SaveMaterialsAs()
	}
}

// SaveMaterialsAs asks for a materials file name and writes it.
func (wb *Workbench) SaveMaterialsAs() {
	if wb.S.Capture == nil {
		return
	}
	wb.saveDialog("materials.json", []string{".json"}, wb.S.SaveMaterials, "Saving materials")
}

// DemoDir is where the workbench keeps the demo capture it makes.
func DemoDir() string {
	base, err := os.UserCacheDir()
	if err != nil {
		base = os.TempDir()
	}
	return filepath.Join(base, "patina", "demo-small-seed1")
}

// MakeDemo opens the demo capture, making it first if it is not there yet
// (the small jar-in-the-dome scenario, under a minute).
func (wb *Workbench) MakeDemo() {
	dir := DemoDir()
	path := filepath.Join(dir, "capture.json")
	if _, err := os.Stat(path); err == nil {
		wb.S.Open(path, "")
		return
	}
	s := wb.S
	s.setStatus("Making the demo capture in "+dir, 0)
	s.jobs.start("demo", func(ctx context.Context) error {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			return err
		}
		_, err := demo.Generate(ctx, dir, demo.Options{Size: demo.Small, Force: true, Progress: func(done, total int, file string) {
			s.postStatus(fmt.Sprintf("Making the demo capture: %d of %d files (%s)", done, total, filepath.Base(file)), float64(done)/float64(max(total, 1)))
		}})
		return err
	}, func(err error) {
		s.post(func() {
			if err != nil {
				s.fail("Making the demo capture", err, "Check that "+dir+" can be written, then choose File > Make demo capture again.")
				return
			}
			s.Open(path, "")
		})
	})
}

// shortcut binds a key with Ctrl (and optionally Shift) to f, on the
// canvas and in the list shown by Help.
func (wb *Workbench) shortcut(key fyne.KeyName, shift bool, label, what string, f func()) *desktop.CustomShortcut {
	mod := fyne.KeyModifierShortcutDefault
	if shift {
		mod |= fyne.KeyModifierShift
	}
	sc := &desktop.CustomShortcut{KeyName: key, Modifier: mod}
	wb.Win.Canvas().AddShortcut(sc, func(fyne.Shortcut) { f() })
	wb.Shortcuts = append(wb.Shortcuts, [2]string{label, what})
	return sc
}

// ShowView selects a view by name.
func (wb *Workbench) ShowView(name string) {
	for _, ti := range wb.Tabs.Items {
		if ti.Text == name {
			wb.Tabs.Select(ti)
			return
		}
	}
}

func (wb *Workbench) buildMenus() {
	views := []string{ViewCapture, ViewPhotos, ViewMaterials, ViewFit, ViewRelight, ViewCompare}
	openSc := wb.shortcut(fyne.KeyO, false, "Ctrl+O", "open a capture", wb.OpenDialog)
	saveSc := wb.shortcut(fyne.KeyS, false, "Ctrl+S", "save the capture and materials", wb.Save)
	for i, v := range views {
		v := v
		wb.shortcut(fyne.KeyName(fmt.Sprint(i+1)), false, fmt.Sprintf("Ctrl+%d", i+1), "show "+v, func() { wb.ShowView(v) })
	}
	fitSc := wb.shortcut(fyne.KeyF, false, "Ctrl+F", "start the fit", wb.fitv.start)
	wb.shortcut(fyne.KeyF, true, "Ctrl+Shift+F", "cancel the fit (Escape cancels too)", wb.S.CancelFit)
	wb.shortcut(fyne.KeyM, false, "Ctrl+M", "toggle the mesh wireframe overlay", func() { wb.S.ToggleOverlay("wireframe") })
	wb.shortcut(fyne.KeyG, false, "Ctrl+G", "toggle the segment colours overlay", func() { wb.S.ToggleOverlay("segments") })
	wb.shortcut(fyne.KeyR, false, "Ctrl+R", "toggle the rejection mask overlay", func() { wb.S.ToggleOverlay("mask") })
	wb.shortcut(fyne.KeyL, false, "Ctrl+L", "toggle the light positions overlay", func() { wb.S.ToggleOverlay("lights") })
	wb.shortcut(fyne.KeyRight, false, "Ctrl+Right", "next photo (Page Down too)", func() { wb.S.StepPhoto(+1) })
	wb.shortcut(fyne.KeyLeft, false, "Ctrl+Left", "previous photo (Page Up too)", func() { wb.S.StepPhoto(-1) })
	wb.shortcut(fyne.KeyW, true, "Ctrl+Shift+W", "next compare display: side by side, wipe, Delta E map", wb.S.CycleCompareMode)
	wb.shortcut(fyne.Key0, false, "Ctrl+0", "fit the image to the view", wb.fitImages)
	wb.Shortcuts = append(wb.Shortcuts, [2]string{"Escape", "cancel the running fit or comparison"},
		[2]string{"F1", "this list"},
		[2]string{"Wheel / drag", "zoom / pan a photo; dolly / orbit in Relight"},
		[2]string{"Double click", "fit the image to the view"})
	wb.Win.Canvas().SetOnTypedKey(func(e *fyne.KeyEvent) {
		switch e.Name {
		case fyne.KeyEscape:
			wb.cancelTask()
		case fyne.KeyF1:
			wb.ShowShortcuts()
		case fyne.KeyPageDown:
			wb.S.StepPhoto(+1)
		case fyne.KeyPageUp:
			wb.S.StepPhoto(-1)
		}
	})

	openItem := fyne.NewMenuItem("Open capture…", wb.OpenDialog)
	openItem.Shortcut = openSc
	saveItem := fyne.NewMenuItem("Save", wb.Save)
	saveItem.Shortcut = saveSc
	fitItem := fyne.NewMenuItem("Start fit", wb.fitv.start)
	fitItem.Shortcut = fitSc
	viewItems := []*fyne.MenuItem{}
	for _, v := range views {
		v := v
		viewItems = append(viewItems, fyne.NewMenuItem(v, func() { wb.ShowView(v) }))
	}
	viewItems = append(viewItems, fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("Wireframe overlay", func() { wb.S.ToggleOverlay("wireframe") }),
		fyne.NewMenuItem("Segment colours overlay", func() { wb.S.ToggleOverlay("segments") }),
		fyne.NewMenuItem("Rejection mask overlay", func() { wb.S.ToggleOverlay("mask") }),
		fyne.NewMenuItem("Light positions overlay", func() { wb.S.ToggleOverlay("lights") }))
	wb.Win.SetMainMenu(fyne.NewMainMenu(
		fyne.NewMenu("File", openItem,
			fyne.NewMenuItem("Make demo capture", wb.MakeDemo),
			fyne.NewMenuItem("Load materials…", wb.LoadMaterialsDialog),
			fyne.NewMenuItemSeparator(),
			saveItem,
			fyne.NewMenuItem("Save materials as…", wb.SaveMaterialsAs)),
		fyne.NewMenu("View", viewItems...),
		fyne.NewMenu("Fit", fitItem, fyne.NewMenuItem("Cancel fit", wb.S.CancelFit)),
		fyne.NewMenu("Help", fyne.NewMenuItem("Keyboard shortcuts", wb.ShowShortcuts),
			fyne.NewMenuItem("About Patina", func() {
				dialog.ShowInformation("About Patina", "Patina fits physically based materials (GGX microfacet BRDF) to calibrated photographs of an object,\nrelights it in a path tracer and compares the result with photos the fit never saw.", wb.Win)
			})),
	))
}

// ShowShortcuts lists the keyboard shortcuts.
func (wb *Workbench) ShowShortcuts() {
	form := widget.NewForm()
	for _, s := range wb.Shortcuts {
		l := widget.NewLabel(s[1])
		form.Append(s[0], l)
	}
	d := dialog.NewCustom("Keyboard shortcuts", "Close", container.NewVScroll(form), wb.Win)
	d.Resize(fyne.NewSize(620, 560))
	d.Show()
}

func (wb *Workbench) fitImages() {
	wb.photos.viewer.FitToWindow()
	wb.relight.viewer.FitToWindow()
	wb.compare.left.FitToWindow()
	wb.compare.right.FitToWindow()
}
