package app

import (
	"fmt"
	"image"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"patina/brdf"
)

// materialsView is the table of segments with an editor for the selected one.
type materialsView struct {
	wb       *Workbench
	root     fyne.CanvasObject
	table    *widget.Table
	sel      int
	swatches map[brdf.Params]*image.RGBA

	title    *widget.Label
	model    *widget.Select
	diffuse  [3]*widget.Entry
	specular [3]*widget.Entry
	rough    *widget.Entry
	locks    [3]*widget.Check
	preset   *widget.Select
	swatch   *canvas.Image
	warn     *widget.Label
	updating bool
}

var materialColumns = []string{"", "Segment", "Model", "Diffuse albedo (± 1σ)", "Specular F0 (± 1σ)", "Roughness (± 1σ)", "Observations", "Near-specular", "Held", "Warnings"}
var materialWidths = []float32{40, 110, 90, 230, 200, 140, 100, 100, 80, 400}

func newMaterialsView(wb *Workbench) *materialsView {
	v := &materialsView{wb: wb, sel: -1, swatches: map[brdf.Params]*image.RGBA{}}
	s := wb.S
	v.table = widget.NewTableWithHeaders(
		func() (int, int) { return len(s.Materials), len(materialColumns) },
		func() fyne.CanvasObject {
			img := canvas.NewImageFromImage(placeholder)
			img.FillMode = canvas.ImageFillContain
			img.SetMinSize(fyne.NewSize(28, 28))
			l := widget.NewLabel("")
			l.Truncation = fyne.TextTruncateEllipsis
			return container.NewStack(l, img)
		},
		func(id widget.TableCellID, o fyne.CanvasObject) {
			c := o.(*fyne.Container)
			l, img := c.Objects[0].(*widget.Label), c.Objects[1].(*canvas.Image)
			if id.Row >= len(s.Materials) {
				return
			}
			sm := s.Materials[id.Row]
			if id.Col == 0 {
				l.Hide()
				img.Show()
				sw := v.swatchOf(sm.Params)
				if img.Image != sw {
					img.Image = sw
					img.Refresh()
				}
				return
			}
			img.Hide()
			l.Show()
			l.SetText(materialCell(sm, id.Col))
		})
	v.table.CreateHeader = func() fyne.CanvasObject {
		return widget.NewLabelWithStyle("", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	}
	v.table.UpdateHeader = func(id widget.TableCellID, o fyne.CanvasObject) {
		l := o.(*widget.Label)
		if id.Row < 0 && id.Col >= 0 {
			l.SetText(materialColumns[id.Col])
		} else if id.Col < 0 && id.Row >= 0 {
			l.SetText(strconv.Itoa(id.Row + 1))
		}
	}
	for i, w := range materialWidths {
		v.table.SetColumnWidth(i, w)
	}
	v.table.OnSelected = func(id widget.TableCellID) {
		v.sel = id.Row
		v.fillEditor()
	}

	v.title = widget.NewLabelWithStyle("Select a segment in the table to edit it.", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	v.model = widget.NewSelect([]string{"dielectric", "metal", "free"}, func(m string) {
		if v.updating || v.sel < 0 {
			return
		}
		if err := s.SetModel(v.sel, m); err != nil {
			s.fail("Changing the model", err, "Choose dielectric, metal or free.")
		}
	})
	num := func() *widget.Entry {
		e := widget.NewEntry()
		e.OnSubmitted = func(string) { v.commit() }
		return e
	}
	for c := 0; c < 3; c++ {
		v.diffuse[c], v.specular[c] = num(), num()
	}
	v.rough = num()
	names := []string{"diffuse", "specular", "roughness"}
	for k := 0; k < 3; k++ {
		k := k
		v.locks[k] = widget.NewCheck("hold "+names[k], func(on bool) {
			if v.updating || v.sel < 0 {
				return
			}
			s.SetLock(v.sel, Lock(1<<k), on)
		})
	}
	var presetNames []string
	for _, p := range brdf.Presets() {
		presetNames = append(presetNames, p.Name)
	}
	v.preset = widget.NewSelect(presetNames, nil)
	v.preset.PlaceHolder = "choose a preset"
	applyPreset := widget.NewButton("Apply preset", func() {
		if v.sel < 0 || v.preset.Selected == "" {
			return
		}
		if err := s.ApplyPreset(v.sel, v.preset.Selected); err != nil {
			s.fail("Applying the preset", err, "Choose a preset from the list.")
		}
	})
	apply := widget.NewButton("Set values", v.commit)
	apply.Importance = widget.HighImportance
	v.swatch = canvas.NewImageFromImage(placeholder)
	v.swatch.FillMode = canvas.ImageFillContain
	v.swatch.SetMinSize(fyne.NewSize(112, 112))
	v.warn = widget.NewLabel("")
	v.warn.Wrapping = fyne.TextWrapWord
	rgb := func(e [3]*widget.Entry) fyne.CanvasObject { return container.NewGridWithColumns(3, e[0], e[1], e[2]) }
	form := widget.NewForm(
		widget.NewFormItem("Model", v.model),
		widget.NewFormItem("Diffuse R G B", rgb(v.diffuse)),
		widget.NewFormItem("Specular F0 R G B", rgb(v.specular)),
		widget.NewFormItem("Roughness", v.rough),
		widget.NewFormItem("Hold at these values", container.NewHBox(v.locks[0], v.locks[1], v.locks[2])),
		widget.NewFormItem("Preset", container.NewBorder(nil, nil, nil, applyPreset, v.preset)),
	)
	note := widget.NewLabel("Values set here show in Relight. A held parameter stays at your value during the fit, " +
		"which estimates the other parameters with it fixed (its uncertainty shows as ±0.000).")
	note.Wrapping = fyne.TextWrapWord
	save := widget.NewButton("Save materials as…", wb.SaveMaterialsAs)
	load := widget.NewButton("Load materials…", wb.LoadMaterialsDialog)
	editor := container.NewBorder(v.title, container.NewVBox(note, container.NewHBox(apply, save, load)),
		container.NewVBox(v.swatch, widget.NewLabel("swatch, one light")), nil,
		container.NewVBox(form, v.warn))
	split := container.NewVSplit(v.table, container.NewPadded(editor))
	split.Offset = 0.45
	v.root = split
	return v
}

func (v *materialsView) swatchOf(p brdf.Params) *image.RGBA {
	if sw := v.swatches[p]; sw != nil {
		return sw
	}
	if len(v.swatches) > 256 {
		v.swatches = map[brdf.Params]*image.RGBA{}
	}
	sw := Swatch(p, 56)
	v.swatches[p] = sw
	return sw
}

func pm(v, s float64, ok bool) string {
	if !ok {
		return fmt.Sprintf("%.3f", v)
	}
	if math.IsInf(s, 0) {
		return fmt.Sprintf("%.3f ± ?", v)
	}
	return fmt.Sprintf("%.3f±%.3f", v, s)
}

func materialCell(sm SegmentMaterial, col int) string {
	p := sm.Params
	var sg brdf.Params
	ok := sm.Sigma != nil
	if ok {
		sg = *sm.Sigma
	}
	switch col {
	case 1:
		return sm.Name
	case 2:
		return p.Kind.String()
	case 3:
		if p.Kind == brdf.Metal {
			return "—"
		}
		return fmt.Sprintf("%s %s %s", pm(p.Diffuse[0], sg.Diffuse[0], ok), pm(p.Diffuse[1], sg.Diffuse[1], ok), pm(p.Diffuse[2], sg.Diffuse[2], ok))
	case 4:
		if p.Kind == brdf.Dielectric {
			return pm(p.Specular[0], sg.Specular[0], ok)
		}
		return fmt.Sprintf("%s %s %s", pm(p.Specular[0], sg.Specular[0], ok), pm(p.Specular[1], sg.Specular[1], ok), pm(p.Specular[2], sg.Specular[2], ok))
	case 5:
		return pm(p.Roughness, sg.Roughness, ok)
	case 6:
		if !sm.Fitted {
			return "—"
		}
		return strconv.Itoa(sm.Observations)
	case 7:
		if !sm.Fitted {
			return "—"
		}
		return strconv.Itoa(sm.NearSpecular)
	case 8:
		var h []string
		for k, n := range []string{"D", "F0", "r"} {
			if sm.Locked&Lock(1<<k) != 0 {
				h = append(h, n)
			}
		}
		return strings.Join(h, " ")
	case 9:
		if len(sm.Warnings) == 0 {
			if sm.Preset != "" {
				return "preset " + sm.Preset
			}
			return ""
		}
		return fmt.Sprintf("⚠ %d: %s", len(sm.Warnings), sm.Warnings[0])
	}
	return ""
}

func (v *materialsView) fillEditor() {
	s := v.wb.S
	if v.sel < 0 || v.sel >= len(s.Materials) {
		return
	}
	v.updating = true
	defer func() { v.updating = false }()
	sm := s.Materials[v.sel]
	v.title.SetText("Segment " + sm.Name)
	v.model.SetSelected(sm.Params.Kind.String())
	for c := 0; c < 3; c++ {
		v.diffuse[c].SetText(strconv.FormatFloat(sm.Params.Diffuse[c], 'f', 4, 64))
		v.specular[c].SetText(strconv.FormatFloat(sm.Params.Specular[c], 'f', 4, 64))
		v.diffuse[c].Enable()
		v.specular[c].Enable()
		if sm.Params.Kind == brdf.Metal {
			v.diffuse[c].Disable()
		}
		if sm.Params.Kind == brdf.Dielectric && c > 0 {
			v.specular[c].Disable()
		}
	}
	v.rough.SetText(strconv.FormatFloat(sm.Params.Roughness, 'f', 4, 64))
	for k := 0; k < 3; k++ {
		v.locks[k].SetChecked(sm.Locked&Lock(1<<k) != 0)
	}
	v.swatch.Image = Swatch(sm.Params, 112)
	v.swatch.Refresh()
	if len(sm.Warnings) > 0 {
		v.warn.SetText("Warnings:\n• " + strings.Join(sm.Warnings, "\n• "))
	} else {
		v.warn.SetText("")
	}
}

// commit reads the entries into the selected segment.
func (v *materialsView) commit() {
	s := v.wb.S
	if v.sel < 0 || v.sel >= len(s.Materials) {
		return
	}
	p := s.Materials[v.sel].Params
	read := func(e *widget.Entry, dst *float64, what string) bool {
		x, err := strconv.ParseFloat(strings.TrimSpace(e.Text), 64)
		if err != nil {
			s.fail("Reading "+what, fmt.Errorf("%q is not a number", e.Text), "Type a number between 0 and 1, like 0.25.")
			return false
		}
		*dst = x
		return true
	}
	for c := 0; c < 3; c++ {
		if !read(v.diffuse[c], &p.Diffuse[c], "the diffuse albedo") || !read(v.specular[c], &p.Specular[c], "the specular F0") {
			return
		}
	}
	if !read(v.rough, &p.Roughness, "the roughness") {
		return
	}
	if err := s.SetParams(v.sel, p); err != nil {
		s.fail("Setting the parameters", err, "Albedo, F0 and roughness are between 0 and 1.")
	}
}

func (v *materialsView) update(c Change) {
	switch c {
	case ChangeMaterials, ChangeCapture:
		v.table.Refresh()
		if c == ChangeCapture {
			v.sel = -1
			v.title.SetText("Select a segment in the table to edit it.")
			if len(v.wb.S.Materials) > 0 {
				v.sel = 0 // the first segment is in the editor from the start
			}
		}
		v.fillEditor()
	}
}
