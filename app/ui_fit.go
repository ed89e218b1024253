package app

import (
	"fmt"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"patina/brdf"
	"patina/fit"
)

// fitView starts and watches the fit.
type fitView struct {
	wb      *Workbench
	root    fyne.CanvasObject
	startB  *widget.Button
	cancelB *widget.Button
	bar     *widget.ProgressBar
	stage   *widget.Label
	params  *widget.Label
	curve   *LossCurve
	side    *container.Scroll
	result  *widget.Label
	samples *widget.Entry
}

func newFitView(wb *Workbench) *fitView {
	v := &fitView{wb: wb}
	v.startB = widget.NewButtonWithIcon("Start fit (Ctrl+F)", theme.MediaPlayIcon(), v.start)
	v.startB.Importance = widget.HighImportance
	v.cancelB = widget.NewButtonWithIcon("Cancel (Esc)", theme.CancelIcon(), wb.S.CancelFit)
	v.cancelB.Disable()
	v.bar = widget.NewProgressBar()
	v.stage = widget.NewLabel("The fit reads the photos marked fit, solves the radiometric scale from the grey card, then fits each segment's BRDF.")
	v.stage.Wrapping = fyne.TextWrapWord
	v.params = widget.NewLabel("")
	v.params.TextStyle = fyne.TextStyle{Monospace: true}
	v.curve = NewLossCurve()
	v.result = widget.NewLabel("")
	v.samples = widget.NewEntry()
	v.samples.SetText(strconv.Itoa(wb.S.Fit.Samples))
	save := widget.NewButtonWithIcon("Save materials as…", theme.DocumentSaveIcon(), wb.SaveMaterialsAs)
	top := container.NewVBox(
		container.NewHBox(v.startB, v.cancelB, widget.NewLabel("Pixels per segment and photo:"), container.NewGridWrap(fyne.NewSize(90, 36), v.samples), save),
		v.bar, v.stage)
	curveBox := container.NewBorder(widget.NewLabelWithStyle("Loss of the segment being fitted, per pass (log scale)", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), nil, nil, nil, v.curve)
	right := container.NewVScroll(container.NewVBox(
		widget.NewLabelWithStyle("Current parameters", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), v.params,
		widget.NewSeparator(),
		widget.NewLabelWithStyle("Result", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), v.result))
	v.side = right
	split := container.NewHSplit(curveBox, right)
	split.Offset = 0.6
	v.root = container.NewPadded(container.NewBorder(top, nil, nil, nil, split))
	return v
}

func (v *fitView) start() {
	s := v.wb.S
	if n, err := strconv.Atoi(strings.TrimSpace(v.samples.Text)); err == nil && n != 0 {
		s.Fit.Samples = n
	} else {
		s.fail("Reading the pixel count", fmt.Errorf("%q is not a whole number", v.samples.Text), "Type a whole number like 2000 (negative: every usable pixel).")
		return
	}
	if s.Job("fit") != nil {
		return
	}
	if _, err := s.StartFit(); err != nil {
		s.fail("Starting the fit", err, "Open a capture first (Ctrl+O or File > Make demo capture).")
		return
	}
	v.wb.ShowView(ViewFit)
}

func paramsText(p brdf.Params) string {
	return fmt.Sprintf("model      %s\ndiffuse    %.4f %.4f %.4f\nF0         %.4f %.4f %.4f\nroughness  %.4f",
		p.Kind, p.Diffuse[0], p.Diffuse[1], p.Diffuse[2], p.Specular[0], p.Specular[1], p.Specular[2], p.Roughness)
}

func (v *fitView) update(c Change) {
	s := v.wb.S
	if c != ChangeFit && c != ChangeCapture {
		return
	}
	f := &s.Fit
	if f.Running {
		v.startB.Disable()
		v.cancelB.Enable()
	} else {
		v.startB.Enable()
		v.cancelB.Disable()
	}
	v.bar.SetValue(f.Fraction)
	switch {
	case f.Running && f.Stage == fit.StageFit:
		v.stage.SetText(fmt.Sprintf("Fitting segment %s: pass %d, loss %.5g", f.Segment, f.Pass, f.Loss))
		v.params.SetText(paramsText(f.Params))
	case f.Running:
		v.stage.SetText("Stage: " + string(f.Stage))
	case f.Cancelled:
		v.stage.SetText("Cancelled. The segment table keeps the values it had.")
	case f.Err != nil:
		v.stage.SetText("The fit stopped: " + f.Err.Error())
	}
	v.curve.SetValues(f.Curve)
	if !f.Running && s.FitResult != nil && c == ChangeFit {
		r := s.FitResult
		var b strings.Builder
		fmt.Fprintf(&b, "%d segments in %.1f s (%d passes, %s).\n%s\n", len(r.Segments), r.Seconds, r.Passes, r.Optimizer, r.Scale.Note)
		for _, sf := range r.Segments {
			fmt.Fprintf(&b, "\n%s (%s): %d observations, %d near-specular, RMS log error %.3f, stop: %s", sf.Name, sf.Kind, sf.Observations, sf.NearSpecular, sf.RMSLog, sf.Stop)
			for _, w := range sf.Warnings {
				fmt.Fprintf(&b, "\n  ⚠ %s", w)
			}
		}
		for _, w := range r.Warnings {
			fmt.Fprintf(&b, "\n⚠ %s", w)
		}
		if f.LockNote != "" {
			fmt.Fprintf(&b, "\n\n%s", f.LockNote)
		}
		b.WriteString("\n\nThe Materials view shows the values with their uncertainty; save them with Ctrl+S.")
		v.result.SetText(wrapText(b.String(), 64))
		v.stage.SetText("Done.")
	}
	if c == ChangeCapture {
		v.result.SetText("")
		v.params.SetText("")
	}
	v.side.Content.Refresh()
	v.side.Refresh()
}
