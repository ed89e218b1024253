package app

import (
	"fmt"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"patina/fit/metrics"
)

// compareView sets a holdout photo against the render of its view.
type compareView struct {
	wb       *Workbench
	root     fyne.CanvasObject
	left     *Viewer // photo (side by side), or the single view
	right    *Viewer // render (side by side)
	views    *fyne.Container
	photoSel *widget.Select
	mode     *widget.RadioGroup
	wipe     *widget.Slider
	tol      *widget.Select
	runB     *widget.Button
	verdict  *widget.Label
	metrics  *widget.Label
	report   *widget.Button
	ids      []int
	side     *container.Scroll
	updating bool
}

var modeNames = []string{"Side by side", "Wipe", "Delta E 2000 map"}

func newCompareView(wb *Workbench) *compareView {
	v := &compareView{wb: wb}
	s := wb.S
	v.left = NewViewer("Choose a holdout photo and press Compare.")
	v.right = NewViewer("")
	v.views = container.NewGridWithColumns(2, v.left, v.right)
	v.photoSel = widget.NewSelect(nil, func(string) {
		if v.updating {
			return
		}
		for _, id := range v.ids {
			if photoChoice(s, id) == v.photoSel.Selected {
				s.Compare.Photo = id
			}
		}
	})
	v.runB = widget.NewButtonWithIcon("Compare", theme.MediaPlayIcon(), func() {
		if _, err := s.RunCompare(); err != nil {
			s.fail("Comparing", err, "Mark a photo as holdout in the Photos view, choose it here, then press Compare.")
		}
	})
	v.runB.Importance = widget.HighImportance
	v.mode = widget.NewRadioGroup(modeNames, func(m string) {
		if v.updating {
			return
		}
		for i, n := range modeNames {
			if n == m {
				s.SetCompareMode(CompareMode(i))
			}
		}
	})
	v.mode.Horizontal = true
	v.wipe = widget.NewSlider(0, 1)
	v.wipe.Step = 0.01
	v.wipe.Value = 0.5
	v.wipe.OnChanged = func(x float64) {
		if !v.updating {
			s.SetWipe(x)
		}
	}
	var tols []string
	for _, t := range metrics.Presets() {
		tols = append(tols, t.Name)
	}
	v.tol = widget.NewSelect(tols, func(t string) {
		if !v.updating {
			if err := s.SetTolerance(t); err != nil {
				s.fail("Choosing the tolerance", err, "Pick one from the list.")
			}
		}
	})
	v.verdict = widget.NewLabelWithStyle("", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	v.metrics = widget.NewLabel("")
	v.report = widget.NewButtonWithIcon("Export report…", theme.DocumentSaveIcon(), func() {
		if s.CaptureDirty || s.MaterialsDirty || s.MaterialsPath == "" {
			s.fail("Exporting the report", ErrSaveFirst, "Press Ctrl+S (or use Save materials as…), then export again.")
			return
		}
		wb.saveDialog("report.html", []string{".html"}, func(path string) error {
			_, err := s.ExportReport(path)
			return err
		}, "Exporting the report")
	})
	reportNote := widget.NewLabel(wrapText("The report renders every holdout photo with the saved materials and writes an HTML page with a JSON record beside it, as 'patina report' does.", 40))
	top := container.NewVBox(
		container.NewBorder(nil, nil, widget.NewLabel("Holdout photo"), container.NewHBox(widget.NewLabel("Tolerance"), v.tol, v.runB), v.photoSel),
		container.NewBorder(nil, nil, v.mode, nil, container.NewBorder(nil, nil, widget.NewLabel("Wipe"), nil, v.wipe)))
	side := container.NewVScroll(container.NewPadded(container.NewVBox(
		widget.NewLabelWithStyle("Verdict", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), v.verdict,
		widget.NewSeparator(), v.metrics, widget.NewSeparator(), v.report, reportNote)))
	side.SetMinSize(fyne.NewSize(320, 200))
	v.side = side
	v.root = container.NewBorder(container.NewPadded(top), nil, nil, side, v.views)
	return v
}

func (v *compareView) update(c Change) {
	s := v.wb.S
	if c != ChangeCompare && c != ChangeCapture && c != ChangeFilter {
		return
	}
	v.updating = true
	defer func() { v.updating = false }()
	cs := &s.Compare
	if c == ChangeCapture || c == ChangeFilter {
		v.ids = s.HoldoutPhotos()
		var opts []string
		for _, id := range v.ids {
			opts = append(opts, photoChoice(s, id))
		}
		v.photoSel.Options = opts
		if cs.Photo >= 0 && s.Capture != nil && cs.Photo < len(s.Capture.Photos) {
			v.photoSel.SetSelected(photoChoice(s, cs.Photo))
		} else {
			v.photoSel.ClearSelected()
		}
		v.photoSel.Refresh()
	}
	v.tol.SetSelected(cs.Tolerance)
	v.mode.SetSelected(modeNames[cs.Mode])
	v.wipe.SetValue(cs.Wipe)
	if cs.Running {
		v.runB.Disable()
	} else {
		v.runB.Enable()
	}
	if cs.Mode == CompareWipe {
		v.wipe.Enable()
	} else {
		v.wipe.Disable()
	}
	if cs.Result == nil {
		v.left.Empty = "Choose a holdout photo and press Compare: the render of its view under its lights is set against it."
		v.left.SetImage(nil, nil)
		v.right.SetImage(nil, nil)
		v.verdict.SetText("")
		v.metrics.SetText("")
		v.side.Refresh()
		return
	}
	switch cs.Mode {
	case CompareSideBySide:
		v.views.Objects = []fyne.CanvasObject{v.left, v.right}
		v.views.Layout = container.NewGridWithColumns(2).Layout
		v.left.SetWipe(nil, 0)
		v.left.SetImage(cs.PhotoImg, nil)
		v.right.SetImage(cs.RenderImg, nil)
	case CompareWipe:
		v.views.Objects = []fyne.CanvasObject{v.left}
		v.views.Layout = container.NewGridWithColumns(1).Layout
		v.left.SetImage(cs.RenderImg, nil)
		v.left.SetWipe(cs.PhotoImg, cs.Wipe)
	case CompareDeltaE:
		v.views.Objects = []fyne.CanvasObject{v.left}
		v.views.Layout = container.NewGridWithColumns(1).Layout
		v.left.SetWipe(nil, 0)
		v.left.SetImage(cs.Maps.DeltaEImage, nil)
	}
	v.views.Refresh()
	r := cs.Result
	if cs.Verdict != nil {
		v.verdict.SetText(wrapText(cs.Verdict.String(), 40))
		if cs.Verdict.Pass {
			v.verdict.Importance = widget.SuccessImportance
		} else {
			v.verdict.Importance = widget.DangerImportance
		}
		v.verdict.Refresh()
	}
	var b strings.Builder
	label := map[CompareMode]string{CompareSideBySide: "Left: photo. Right: render.", CompareWipe: "Left of the line: photo. Right: render.", CompareDeltaE: "Delta E 2000 per pixel; the legend is under the map."}
	fmt.Fprintf(&b, "%s\n\n%d pixels compared\nPSNR %.2f dB linear, %.2f dB sRGB\nSSIM %.4f\nDelta E 2000: mean %.2f, median %.2f, 95%% %.2f, max %.2f",
		label[cs.Mode], r.Pixels, r.PSNRLinear, r.PSNRSRGB, r.SSIM, r.DE2000Mean, r.DE2000Median, r.DE2000P95, r.DE2000Max)
	if cs.Verdict != nil {
		if lines := cs.Verdict.SegmentLines(); len(lines) > 0 {
			b.WriteString("\n\nPer segment:\n" + strings.Join(lines, "\n"))
		}
	}
	v.metrics.SetText(wrapText(b.String(), 44))
	// The panel's size follows its labels only when it is laid out again.
	v.side.Content.Refresh()
	v.side.Refresh()
}
