package app

import (
	"fmt"
	"math"
	"path/filepath"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

const (
	orbitChoice  = "Free orbit (drag to turn, wheel to move in)"
	noneChoice   = "None"
	envFileLabel = "HDR file…"
)

// relightView is the progressive render with its camera and light controls.
type relightView struct {
	wb       *Workbench
	root     fyne.CanvasObject
	viewer   *Viewer
	info     *widget.Label
	camSel   *widget.Select
	litSel   *widget.Select
	point    *widget.Check
	pad      *DirectionPad
	pointI   *widget.Slider
	envSel   *widget.Select
	skyEl    *widget.Slider
	skyAz    *widget.Slider
	envRot   *widget.Slider
	envI     *widget.Slider
	expo     *widget.Slider
	skyBox   *fyne.Container
	photoIDs []int
	updating bool
}

func newRelightView(wb *Workbench) *relightView {
	v := &relightView{wb: wb}
	s := wb.S
	v.viewer = NewViewer("Open a capture; the render starts when this view shows.")
	v.viewer.OnDrag = func(dx, dy float32) {
		r := s.Relight
		if r.Camera >= 0 {
			r.Camera = -1
		}
		r.Azimuth = math.Mod(r.Azimuth-float64(dx)*0.4+360, 360)
		r.Elevation = math.Max(-85, math.Min(85, r.Elevation+float64(dy)*0.4))
		v.apply(r)
	}
	v.viewer.OnScroll = func(dy float32) {
		r := s.Relight
		if r.Camera >= 0 {
			r.Camera = -1
		}
		r.Distance *= math.Pow(1.1, -float64(dy)/25)
		r.Distance = math.Max(1e-3, r.Distance)
		v.apply(r)
	}
	v.info = widget.NewLabel("")
	v.camSel = widget.NewSelect([]string{orbitChoice}, func(string) { v.changed() })
	v.litSel = widget.NewSelect([]string{noneChoice}, func(string) { v.changed() })
	v.point = widget.NewCheck("Point light you place", func(bool) { v.changed() })
	v.pad = NewDirectionPad(60, 45)
	v.pad.OnChange = func(float64, float64) {
		if !v.point.Checked {
			v.point.SetChecked(true) // placing a light switches it on
			return
		}
		v.changed()
	}
	slider := func(lo, hi, step, val float64) *widget.Slider {
		sl := widget.NewSlider(lo, hi)
		sl.Step = step
		sl.Value = val
		sl.OnChanged = func(float64) { v.changed() }
		return sl
	}
	v.pointI = slider(0, 4, 0.05, 1)
	v.envSel = widget.NewSelect([]string{EnvNone, EnvStudio, EnvSky, envFileLabel}, func(e string) {
		if e == envFileLabel && !v.updating {
			v.pickEnvFile()
			return
		}
		v.changed()
	})
	v.skyEl = slider(0, 90, 1, 30)
	v.skyAz = slider(0, 360, 1, 120)
	v.envRot = slider(0, 360, 1, 0)
	v.envI = slider(0, 4, 0.05, 1)
	v.expo = widget.NewSlider(-6, 6)
	v.expo.Step = 0.1
	v.expo.OnChanged = func(ev float64) {
		if !v.updating {
			s.SetExposure(ev)
		}
	}
	v.skyBox = container.NewVBox(widget.NewLabel("Sun elevation (degrees)"), v.skyEl, widget.NewLabel("Sun azimuth (degrees)"), v.skyAz)
	saveHDR := widget.NewButtonWithIcon("Save .hdr…", theme.DocumentSaveIcon(), func() {
		wb.saveDialog("relit.hdr", []string{".hdr", ".pfm"}, s.SaveRender, "Saving the render")
	})
	savePNG := widget.NewButtonWithIcon("Save .png…", theme.DocumentSaveIcon(), func() {
		wb.saveDialog("relit.png", []string{".png"}, s.SaveRender, "Saving the render")
	})
	bold := func(t string) *widget.Label {
		return widget.NewLabelWithStyle(t, fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	}
	controls := container.NewVBox(
		bold("Camera"), v.camSel,
		bold("Lights of a photo"), v.litSel,
		widget.NewSeparator(), v.point,
		widget.NewLabel("Drag on the dome: centre is overhead"), container.NewCenter(container.NewGridWrap(fyne.NewSize(140, 140), v.pad)),
		widget.NewLabel("Intensity (× the studio's level)"), v.pointI,
		widget.NewSeparator(), bold("Environment"), v.envSel, v.skyBox,
		widget.NewLabel("Rotation (degrees)"), v.envRot, widget.NewLabel("Intensity"), v.envI,
		widget.NewSeparator(), bold("Exposure (stops)"), v.expo,
		container.NewGridWithColumns(2, saveHDR, savePNG))
	side := container.NewVScroll(container.NewPadded(controls))
	side.SetMinSize(fyne.NewSize(300, 200))
	v.root = container.NewBorder(nil, v.info, nil, side, v.viewer)
	v.sync()
	return v
}

func (v *relightView) pickEnvFile() {
	d := dialog.NewFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil || r == nil {
			v.updating = true
			v.envSel.SetSelected(v.wb.S.Relight.Env)
			v.updating = false
			return
		}
		path := r.URI().Path()
		r.Close()
		rs := v.wb.S.Relight
		rs.Env, rs.EnvFile = EnvFile, path
		v.apply(rs)
	}, v.wb.Win)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".hdr", ".pfm"}))
	d.Resize(fyne.NewSize(900, 600))
	d.Show()
}

// changed reads the controls into the settings and restarts the render.
func (v *relightView) changed() {
	if v.updating {
		return
	}
	s := v.wb.S
	r := s.Relight
	r.Camera = -1
	for i, id := range v.photoIDs {
		if v.camSel.Selected == photoChoice(s, id) {
			r.Camera = v.photoIDs[i]
		}
	}
	r.PhotoLights = -1
	for _, id := range v.photoIDs {
		if v.litSel.Selected == photoChoice(s, id) {
			r.PhotoLights = id
		}
	}
	r.Point = v.point.Checked
	r.PointAzimuth, r.PointElevation = v.pad.Direction()
	r.PointIntensity = v.pointI.Value * s.pointIntensity()
	if r.PointIntensity == 0 {
		r.PointIntensity = 1e-12 // zero means the default in the session
	}
	switch v.envSel.Selected {
	case EnvNone, EnvStudio, EnvSky:
		r.Env = v.envSel.Selected
	}
	r.SkyElevation, r.SkyAzimuth = v.skyEl.Value, v.skyAz.Value
	r.EnvRotate, r.EnvIntensity = v.envRot.Value, v.envI.Value
	v.apply(r)
}

func (v *relightView) apply(r RelightState) {
	v.wb.S.SetRelight(r)
	v.sync()
}

func photoChoice(s *Session, i int) string {
	return fmt.Sprintf("%d: %s", i+1, filepath.Base(s.Capture.Photos[i].File))
}

// sync shows the session's settings in the controls.
func (v *relightView) sync() {
	s := v.wb.S
	r := s.Relight
	v.updating = true
	defer func() { v.updating = false }()
	cams, lits := []string{orbitChoice}, []string{noneChoice}
	v.photoIDs = nil
	if s.Capture != nil {
		for i := range s.Capture.Photos {
			v.photoIDs = append(v.photoIDs, i)
			cams = append(cams, photoChoice(s, i))
			lits = append(lits, photoChoice(s, i))
		}
	}
	v.camSel.Options, v.litSel.Options = cams, lits
	if r.Camera >= 0 && s.Capture != nil && r.Camera < len(s.Capture.Photos) {
		v.camSel.SetSelected(photoChoice(s, r.Camera))
	} else {
		v.camSel.SetSelected(orbitChoice)
	}
	if r.PhotoLights >= 0 && s.Capture != nil && r.PhotoLights < len(s.Capture.Photos) {
		v.litSel.SetSelected(photoChoice(s, r.PhotoLights))
	} else {
		v.litSel.SetSelected(noneChoice)
	}
	v.point.SetChecked(r.Point)
	v.pad.SetDirection(r.PointAzimuth, r.PointElevation)
	env := r.Env
	if env == EnvFile {
		env = envFileLabel
	}
	v.envSel.SetSelected(env)
	if r.Env == EnvSky {
		v.skyBox.Show()
	} else {
		v.skyBox.Hide()
	}
	v.expo.SetValue(r.Exposure)
}

func (v *relightView) update(c Change) {
	s := v.wb.S
	switch c {
	case ChangeCapture:
		v.sync()
		v.viewer.SetImage(nil, nil)
		s.RestartRelight()
	case ChangeRelight:
		v.viewer.SetImage(s.RelightImage(), nil)
		r := s.Relight
		cam := "free orbit"
		if r.Camera >= 0 {
			cam = "camera of photo " + fmt.Sprint(r.Camera+1)
		}
		v.info.SetText(fmt.Sprintf("  %dx%d, %d samples per pixel, %.1f s (first image after %.0f ms) · %s, azimuth %.0f°, elevation %.0f°",
			r.W, r.H, r.Done, r.Elapsed.Seconds(), float64(r.FirstImage.Microseconds())/1000, cam, r.Azimuth, r.Elevation))
	}
}
