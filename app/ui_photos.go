package app

import (
	"fmt"
	"image"
	"image/color"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"patina/assets/capture"
)

const anyChoice = "(any)"

// photosView lists the photos and shows one with its overlays.
type photosView struct {
	wb       *Workbench
	root     fyne.CanvasObject
	list     *widget.List
	ids      []int
	viewer   *Viewer
	camSel   *widget.Select
	lightSel *widget.Select
	useSel   *widget.Select
	useRadio *widget.RadioGroup
	info     *widget.Label
	legend   *widget.Label
	checks   map[string]*widget.Check
	side     *container.Scroll
	segKey   *fyne.Container
	updating bool
}

func newPhotosView(wb *Workbench) *photosView {
	v := &photosView{wb: wb, checks: map[string]*widget.Check{}}
	s := wb.S
	v.viewer = NewViewer("Open a capture to see its photos.")
	filter := func(string) {
		if v.updating {
			return
		}
		f := PhotoFilter{}
		if x := v.camSel.Selected; x != anyChoice {
			f.Camera = x
		}
		if x := v.lightSel.Selected; x != anyChoice {
			f.Light = x
		}
		if x := v.useSel.Selected; x != anyChoice {
			f.Use = x
		}
		s.SetFilter(f)
	}
	v.camSel = widget.NewSelect([]string{anyChoice}, filter)
	v.lightSel = widget.NewSelect([]string{anyChoice}, filter)
	v.useSel = widget.NewSelect([]string{anyChoice, capture.UseFit, capture.UseHoldout, capture.UseIgnore}, filter)
	v.camSel.SetSelected(anyChoice)
	v.lightSel.SetSelected(anyChoice)
	v.useSel.SetSelected(anyChoice)
	filters := widget.NewForm(widget.NewFormItem("Camera", v.camSel), widget.NewFormItem("Light", v.lightSel), widget.NewFormItem("Use", v.useSel))

	v.list = widget.NewList(
		func() int { return len(v.ids) },
		func() fyne.CanvasObject {
			img := canvas.NewImageFromImage(image.NewRGBA(image.Rect(0, 0, 4, 3)))
			img.FillMode = canvas.ImageFillContain
			img.ScaleMode = canvas.ImageScaleFastest
			img.SetMinSize(fyne.NewSize(ThumbW, ThumbH))
			l := widget.NewLabel("photo\ncamera")
			l.Truncation = fyne.TextTruncateEllipsis
			return container.NewBorder(nil, nil, img, nil, l)
		},
		func(id widget.ListItemID, o fyne.CanvasObject) {
			if id >= len(v.ids) {
				return
			}
			i := v.ids[id]
			c := o.(*fyne.Container)
			l := c.Objects[0].(*widget.Label)
			img := c.Objects[1].(*canvas.Image)
			l.SetText(s.PhotoLabel(i))
			th := s.Thumbnail(i)
			if th == nil {
				th = placeholder
			}
			if img.Image != th {
				img.Image = th
				img.Refresh()
			}
		})
	v.list.OnSelected = func(id widget.ListItemID) {
		if v.updating || id >= len(v.ids) {
			return
		}
		if v.ids[id] != s.Selected {
			s.SelectPhoto(v.ids[id])
		}
	}

	mk := func(name, label string) *widget.Check {
		c := widget.NewCheck(label, func(on bool) {
			if v.updating {
				return
			}
			o := s.Overlays
			switch name {
			case "wireframe":
				o.Wireframe = on
			case "segments":
				o.Segments = on
			case "mask":
				o.Mask = on
			case "lights":
				o.Lights = on
			}
			s.SetOverlays(o)
		})
		v.checks[name] = c
		return c
	}
	overlays := container.NewVBox(widget.NewLabelWithStyle("Overlays", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		mk("wireframe", "Mesh wireframe (Ctrl+M)"), mk("segments", "Segment colours (Ctrl+G)"),
		mk("mask", "Rejected pixels (Ctrl+R)"), mk("lights", "Light positions (Ctrl+L)"))
	v.legend = widget.NewLabel("")
	v.useRadio = widget.NewRadioGroup([]string{capture.UseFit, capture.UseHoldout, capture.UseIgnore}, func(u string) {
		if v.updating || u == "" || s.Selected < 0 {
			return
		}
		if err := s.SetPhotoUse(s.Selected, u); err != nil {
			s.fail("Changing the photo's use", err, "Pick fit, holdout or ignore.")
		}
	})
	v.useRadio.Horizontal = true
	v.segKey = container.NewGridWithColumns(2)
	v.info = widget.NewLabel("")
	fitBtn := widget.NewButton("Fit to view", v.viewer.FitToWindow)
	oneBtn := widget.NewButton("1:1", v.viewer.ActualPixels)
	prev := widget.NewButton("◀ Previous", func() { s.StepPhoto(-1) })
	next := widget.NewButton("Next ▶", func() { s.StepPhoto(+1) })
	side := container.NewVBox(
		widget.NewLabelWithStyle("This photo is used for", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), v.useRadio,
		widget.NewSeparator(), overlays, v.segKey, legendSwatches(), v.legend,
		widget.NewSeparator(), container.NewGridWithColumns(2, fitBtn, oneBtn), container.NewGridWithColumns(2, prev, next),
		widget.NewSeparator(), v.info)
	left := container.NewBorder(filters, nil, nil, nil, v.list)
	v.side = container.NewVScroll(container.NewPadded(side))
	centre := container.NewBorder(nil, nil, nil, v.side, v.viewer)
	split := container.NewHSplit(left, centre)
	split.Offset = 0.24
	v.root = split
	return v
}

var placeholder = func() *image.RGBA {
	m := image.NewRGBA(image.Rect(0, 0, 4, 3))
	for i := 0; i < len(m.Pix); i += 4 {
		m.Pix[i], m.Pix[i+1], m.Pix[i+2], m.Pix[i+3] = 60, 60, 66, 255
	}
	return m
}()

// legendSwatches shows the colours of the rejection mask.
func legendSwatches() fyne.CanvasObject {
	items := []struct {
		c    color.RGBA
		name string
	}{{colBorder, "edge"}, {colGrazing, "grazing"}, {colShadow, "shadow"}, {colSaturated, "saturated"}, {colClipped, "clipped, kept"}, {colUnderExp, "under-exposed"}, {colMasked, "masked"}, {colUnassigned, "no segment"}}
	box := container.NewGridWithColumns(3)
	for _, it := range items {
		c := it.c
		c.A = 255
		r := canvas.NewRectangle(c)
		r.SetMinSize(fyne.NewSize(12, 12))
		box.Add(container.NewHBox(container.NewCenter(r), widget.NewLabel(it.name)))
	}
	return box
}

func (v *photosView) update(c Change) {
	s := v.wb.S
	v.updating = true
	defer func() { v.updating = false }()
	switch c {
	case ChangeCapture:
		v.camSel.Options = append([]string{anyChoice}, s.Cameras()...)
		v.lightSel.Options = append([]string{anyChoice}, s.LightIDs()...)
		v.camSel.SetSelected(anyChoice)
		v.lightSel.SetSelected(anyChoice)
		v.useSel.SetSelected(anyChoice)
		s.Filter = PhotoFilter{}
		v.segKey.RemoveAll()
		for i, seg := range s.Segments {
			r := canvas.NewRectangle(SegmentColour(i))
			r.SetMinSize(fyne.NewSize(12, 12))
			v.segKey.Add(container.NewHBox(container.NewCenter(r), widget.NewLabel(seg.Name)))
		}
		v.ids = s.FilteredPhotos()
		v.list.Refresh()
		v.viewer.Empty = "Loading…"
		v.viewer.SetImage(nil, nil)
	case ChangeFilter:
		v.ids = s.FilteredPhotos()
		v.list.Refresh()
		v.showInfo()
	case ChangeThumbnail:
		v.list.Refresh()
	case ChangePhoto:
		img, ov := s.PhotoImage()
		if !s.PhotoLoaded() {
			img, ov = nil, nil
		}
		v.viewer.SetImage(img, ov)
		for i, id := range v.ids {
			if id == s.Selected {
				v.list.Select(i)
				v.list.ScrollTo(i)
			}
		}
		o := s.Overlays
		v.checks["wireframe"].SetChecked(o.Wireframe)
		v.checks["segments"].SetChecked(o.Segments)
		v.checks["mask"].SetChecked(o.Mask)
		v.checks["lights"].SetChecked(o.Lights)
		v.showInfo()
	}
}

func (v *photosView) showInfo() {
	s := v.wb.S
	if s.Capture == nil || s.Selected < 0 || s.Selected >= len(s.Capture.Photos) {
		v.info.SetText("")
		return
	}
	p := s.Capture.Photos[s.Selected]
	use := p.Use
	if use == "" {
		use = capture.UseFit
	}
	v.useRadio.SetSelected(use)
	var ls []string
	for _, id := range p.Lights {
		l, idx := s.Capture.LightByID(id)
		if l != nil {
			ls = append(ls, fmt.Sprintf("%s (%s, marker %d)", id, l.Type, idx+1))
		}
	}
	enc := p.Encoding
	if enc == "" {
		enc = capture.EncodingSRGB
	}
	v.info.SetText(fmt.Sprintf("%s\nCamera %s\nLights %s\nEncoding %s, exposure ×%.3g\nMask %s",
		filepath.Base(p.File), p.Camera, strings.Join(ls, ", "), enc, p.Exposure.Multiplier(), orNone(p.Mask)))
	if s.Overlays.Mask && s.PhotoLoaded() {
		rc := s.PhotoRejections()
		v.legend.SetText(wrapText(fmt.Sprintf("Kept %d pixels, and %d clipped ones as lower bounds; left out: edge %d, grazing %d, shadow %d, saturated %d, under-exposed %d, masked %d, no segment %d (the fit's default rules).",
			rc.Kept, rc.Clipped, rc.Border, rc.Grazing, rc.Shadow, rc.Saturated, rc.UnderExposed, rc.Masked, rc.Unassigned), 42))
	} else {
		v.legend.SetText(wrapText("Wireframe and segment colours are drawn through this photo's calibrated camera: if they do not sit on the object, the calibration is off.", 42))
	}
	v.side.Content.Refresh()
	v.side.Refresh()
}

func orNone(s string) string {
	if s == "" {
		return "none"
	}
	return s
}
