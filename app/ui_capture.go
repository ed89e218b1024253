package app

import (
	"fmt"
	"path/filepath"
	"sort"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"patina/assets/capture"
)

// captureView opens captures and lists what the check found.
type captureView struct {
	wb       *Workbench
	root     fyne.CanvasObject
	summary  *widget.Label
	problems *widget.List
	probHead *widget.Label
	recent   *fyne.Container
	right    *fyne.Container
}

func newCaptureView(wb *Workbench) *captureView {
	v := &captureView{wb: wb}
	open := widget.NewButtonWithIcon("Open capture…", theme.FolderOpenIcon(), wb.OpenDialog)
	open.Importance = widget.HighImportance
	demoBtn := widget.NewButtonWithIcon("Make demo capture", theme.MediaPlayIcon(), wb.MakeDemo)
	mats := widget.NewButtonWithIcon("Load materials…", theme.DocumentIcon(), wb.LoadMaterialsDialog)
	v.recent = container.NewVBox()
	v.fillRecent()
	intro := widget.NewLabel("A capture is a JSON file naming the mesh, the calibrated cameras, the lights and the photos. " +
		"Open one, or make the demo capture: a glazed jar on a grey card photographed under a dome of lamps.")
	intro.Wrapping = fyne.TextWrapWord
	left := container.NewVBox(widget.NewLabelWithStyle("Start", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		open, demoBtn, mats, widget.NewSeparator(),
		widget.NewLabelWithStyle("Recent captures", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), v.recent)

	v.summary = widget.NewLabel("No capture open.")
	v.probHead = widget.NewLabelWithStyle("Check results", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	v.problems = widget.NewList(
		func() int { return len(wb.S.Problems) },
		func() fyne.CanvasObject {
			icon := widget.NewIcon(theme.WarningIcon())
			l := widget.NewLabel("problem")
			l.Truncation = fyne.TextTruncateEllipsis
			return container.NewBorder(nil, nil, icon, nil, l)
		},
		func(id widget.ListItemID, o fyne.CanvasObject) {
			if id >= len(wb.S.Problems) {
				return
			}
			p := wb.S.Problems[id]
			c := o.(*fyne.Container)
			l := c.Objects[0].(*widget.Label)
			icon := c.Objects[1].(*widget.Icon)
			path := p.Path
			if path == "" {
				path = "(whole file)"
			}
			l.SetText(fmt.Sprintf("%s  %s", path, p.Msg))
			if p.Severity == capture.SevError {
				icon.SetResource(theme.ErrorIcon())
			} else {
				icon.SetResource(theme.WarningIcon())
			}
		})
	v.problems.OnSelected = func(id widget.ListItemID) {
		v.problems.Unselect(id)
		v.showProblem(id)
	}
	v.right = container.NewBorder(container.NewVBox(intro, widget.NewSeparator(), v.summary, widget.NewSeparator(), v.probHead), nil, nil, nil, v.problems)
	split := container.NewHSplit(container.NewPadded(left), container.NewPadded(v.right))
	split.Offset = 0.28
	v.root = split
	return v
}

func (v *captureView) fillRecent() {
	v.recent.RemoveAll()
	list := v.wb.recent()
	if len(list) == 0 {
		v.recent.Add(widget.NewLabel("(none yet)"))
	}
	for _, p := range list {
		p := p
		b := widget.NewButton(shortPath(p), func() { v.wb.S.Open(p, "") })
		b.Alignment = widget.ButtonAlignLeading
		v.recent.Add(b)
	}
	v.recent.Refresh()
}

func shortPath(p string) string {
	dir := filepath.Base(filepath.Dir(p))
	return filepath.Join(dir, filepath.Base(p))
}

// showProblem explains one problem and offers to go to its photo.
func (v *captureView) showProblem(id int) {
	s := v.wb.S
	if id < 0 || id >= len(s.Problems) {
		return
	}
	p := s.Problems[id]
	where := p.Path
	if where == "" {
		where = "the whole file"
	}
	if p.Line > 0 {
		where += fmt.Sprintf(" (line %d, column %d)", p.Line, p.Col)
	}
	msg := widget.NewLabel(fmt.Sprintf("%s in %s:\n%s\n\nCorrect it in the capture file, then open the capture again.", strings.ToUpper(p.Severity[:1])+p.Severity[1:], where, p.Msg))
	msg.Wrapping = fyne.TextWrapWord
	content := container.NewVBox(msg)
	d := dialog.NewCustom("Check result", "Close", container.NewGridWrap(fyne.NewSize(520, 160), content), v.wb.Win)
	if i := ProblemPhoto(p); i >= 0 && s.Capture != nil && i < len(s.Capture.Photos) {
		content.Add(widget.NewButton("Show this photo", func() {
			d.Hide()
			s.SelectPhoto(i)
			v.wb.ShowView(ViewPhotos)
		}))
	}
	d.Show()
}

func (v *captureView) update(c Change) {
	s := v.wb.S
	switch c {
	case ChangeCapture, ChangeFilter, ChangeDirty:
	default:
		return
	}
	if c == ChangeCapture {
		v.fillRecent()
	}
	if s.Capture == nil {
		v.summary.SetText("No capture open.")
		v.problems.Refresh()
		return
	}
	cc := s.Capture
	uses := map[string]int{}
	for _, p := range cc.Photos {
		u := p.Use
		if u == "" {
			u = capture.UseFit
		}
		uses[u]++
	}
	var segs []string
	for _, seg := range s.Segments {
		segs = append(segs, fmt.Sprintf("%s (%s)", seg.Name, seg.Model))
	}
	tri := 0
	if s.Mesh != nil {
		tri = s.Mesh.NumTriangles()
	}
	var lights []string
	for _, l := range cc.Lights {
		lights = append(lights, l.ID+" ("+l.Type+")")
	}
	sort.Strings(lights)
	v.summary.SetText(fmt.Sprintf("%s\n%s\nMesh: %s, %d triangles\nSegments: %s\nCameras: %d   Lights: %s\nPhotos: %d (fit %d, holdout %d, ignore %d)",
		cc.Name, cc.Path, cc.Mesh, tri, strings.Join(segs, ", "), len(cc.Cameras), strings.Join(lights, ", "),
		len(cc.Photos), uses[capture.UseFit], uses[capture.UseHoldout], uses[capture.UseIgnore]))
	ne := capture.Errors(s.Problems)
	switch {
	case len(s.Problems) == 0:
		v.probHead.SetText("Check results: no problems found")
	default:
		v.probHead.SetText(fmt.Sprintf("Check results: %d errors, %d warnings (click one for details)", ne, len(s.Problems)-ne))
	}
	v.problems.Refresh()
	// The summary's height changed: lay the panel out again.
	v.right.Objects[1].Refresh()
	v.right.Refresh()
}
