package app

import (
	"image"
	"image/color"
	"math"
	"sync"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/widget"
)

// Viewer shows an image with pan and zoom: wheel zooms about the pointer,
// drag pans, double click fits the image to the view; an overlay is blended
// on top, and in wipe mode a second image shows left of the wipe line. It
// samples the source into one reused buffer of the raster's device-pixel
// size, nearest neighbour, so a refresh allocates nothing in steady state.
type Viewer struct {
	widget.BaseWidget
	raster *canvas.Raster

	mu           sync.Mutex
	img, overlay *image.RGBA
	left         *image.RGBA // wipe mode: shown left of the line
	wipe         float64
	fit          bool
	zoom         float64 // device pixels per image pixel
	cx, cy       float64 // image point at the view centre
	buf          *image.RGBA
	cols         []int
	lastW, lastH int

	// OnDrag, when set, receives drags instead of panning (orbit).
	OnDrag func(dx, dy float32)
	// OnScroll, when set, receives wheel steps instead of zooming (dolly).
	OnScroll func(dy float32)
	// OnTap receives a click in image pixel coordinates.
	OnTap func(x, y float64)
	// Empty is the hint drawn while there is no image.
	Empty string
	hint  *widget.Label
}

var (
	_ fyne.Draggable      = (*Viewer)(nil)
	_ fyne.Scrollable     = (*Viewer)(nil)
	_ fyne.DoubleTappable = (*Viewer)(nil)
	_ fyne.Tappable       = (*Viewer)(nil)
	_ desktop.Hoverable   = (*Viewer)(nil)
)

// NewViewer makes an empty viewer in fit-to-window mode.
func NewViewer(hint string) *Viewer {
	v := &Viewer{fit: true, zoom: 1, Empty: hint}
	v.raster = canvas.NewRaster(v.generate)
	v.raster.ScaleMode = canvas.ImageScalePixels
	v.hint = widget.NewLabel(hint)
	v.hint.Alignment = fyne.TextAlignCenter
	v.hint.Wrapping = fyne.TextWrapWord
	v.ExtendBaseWidget(v)
	return v
}

// CreateRenderer implements fyne.Widget.
func (v *Viewer) CreateRenderer() fyne.WidgetRenderer {
	return &viewerRenderer{v: v}
}

type viewerRenderer struct{ v *Viewer }

func (r *viewerRenderer) Layout(s fyne.Size) {
	r.v.raster.Resize(s)
	r.v.hint.Resize(fyne.NewSize(s.Width, r.v.hint.MinSize().Height))
	r.v.hint.Move(fyne.NewPos(0, (s.Height-r.v.hint.MinSize().Height)/2))
}
func (r *viewerRenderer) MinSize() fyne.Size { return fyne.NewSize(240, 180) }
func (r *viewerRenderer) Refresh() {
	r.v.mu.Lock()
	empty := r.v.img == nil
	r.v.hint.SetText(r.v.Empty)
	r.v.mu.Unlock()
	if empty {
		r.v.hint.Show()
	} else {
		r.v.hint.Hide()
	}
	r.v.raster.Refresh()
}
func (r *viewerRenderer) Objects() []fyne.CanvasObject {
	return []fyne.CanvasObject{r.v.raster, r.v.hint}
}
func (r *viewerRenderer) Destroy() {}

// SetImage shows img with an optional overlay; a new size refits.
func (v *Viewer) SetImage(img, overlay *image.RGBA) {
	v.mu.Lock()
	if img != nil && (v.img == nil || v.img.Rect.Size() != img.Rect.Size()) {
		v.fit = true
	}
	v.img, v.overlay = img, overlay
	v.mu.Unlock()
	v.Refresh()
}

// SetWipe shows left left of the wipe line at fraction x of the image
// width (nil left: no wipe).
func (v *Viewer) SetWipe(left *image.RGBA, x float64) {
	v.mu.Lock()
	v.left, v.wipe = left, x
	v.mu.Unlock()
	v.Refresh()
}

// FitToWindow scales the image to fill the view.
func (v *Viewer) FitToWindow() {
	v.mu.Lock()
	v.fit = true
	v.mu.Unlock()
	v.Refresh()
}

// ActualPixels shows one image pixel per screen pixel.
func (v *Viewer) ActualPixels() {
	v.mu.Lock()
	if v.img != nil {
		v.fit = false
		v.zoom = 1
		v.cx, v.cy = float64(v.img.Rect.Dx())/2, float64(v.img.Rect.Dy())/2
	}
	v.mu.Unlock()
	v.Refresh()
}

// Zoom returns the current device pixels per image pixel.
func (v *Viewer) Zoom() float64 {
	v.mu.Lock()
	defer v.mu.Unlock()
	return v.zoom
}

func (v *Viewer) canvasScale() float64 {
	if c := fyne.CurrentApp().Driver().CanvasForObject(v); c != nil {
		return float64(c.Scale())
	}
	return 1
}

// generate fills the reused buffer at the raster's device size.
func (v *Viewer) generate(w, h int) image.Image {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.buf = ensureRGBA(v.buf, w, h)
	v.lastW, v.lastH = w, h
	buf := v.buf
	bg := [4]uint8{38, 38, 42, 255}
	for i := 0; i < len(buf.Pix); i += 4 {
		copy(buf.Pix[i:i+4], bg[:])
	}
	img := v.img
	if img == nil || w == 0 || h == 0 {
		return buf
	}
	iw, ih := img.Rect.Dx(), img.Rect.Dy()
	if v.fit {
		v.zoom = math.Min(float64(w)/float64(iw), float64(h)/float64(ih))
		v.cx, v.cy = float64(iw)/2, float64(ih)/2
	}
	if cap(v.cols) < w {
		v.cols = make([]int, w)
	}
	cols := v.cols[:w]
	wipeCol := int(v.wipe * float64(iw))
	for x := range cols {
		sx := int(math.Floor(v.cx + (float64(x)+0.5-float64(w)/2)/v.zoom))
		if sx < 0 || sx >= iw {
			sx = -1
		}
		cols[x] = sx
	}
	ov := v.overlay
	if ov != nil && ov.Rect.Size() != img.Rect.Size() {
		ov = nil
	}
	left := v.left
	if left != nil && left.Rect.Size() != img.Rect.Size() {
		left = nil
	}
	for y := 0; y < h; y++ {
		sy := int(math.Floor(v.cy + (float64(y)+0.5-float64(h)/2)/v.zoom))
		if sy < 0 || sy >= ih {
			continue
		}
		row := buf.Pix[y*buf.Stride : y*buf.Stride+4*w]
		for x, sx := range cols {
			if sx < 0 {
				continue
			}
			src := img
			if left != nil && sx < wipeCol {
				src = left
			}
			o := sy*src.Stride + 4*sx
			p := row[4*x : 4*x+4 : 4*x+4]
			p[0], p[1], p[2], p[3] = src.Pix[o], src.Pix[o+1], src.Pix[o+2], 255
			if ov != nil {
				a := uint32(ov.Pix[o+3])
				if a != 0 {
					p[0] = uint8((uint32(ov.Pix[o])*a + uint32(p[0])*(255-a)) / 255)
					p[1] = uint8((uint32(ov.Pix[o+1])*a + uint32(p[1])*(255-a)) / 255)
					p[2] = uint8((uint32(ov.Pix[o+2])*a + uint32(p[2])*(255-a)) / 255)
				}
			}
		}
	}
	if left != nil {
		// The wipe line, drawn where the source column changes.
		for x := 1; x < w; x++ {
			if cols[x] >= wipeCol && cols[x-1] < wipeCol && cols[x-1] >= 0 {
				for y := 0; y < h; y++ {
					buf.SetRGBA(x, y, color.RGBA{255, 255, 255, 255})
				}
			}
		}
	}
	return buf
}

// Dragged pans (or orbits, with OnDrag).
func (v *Viewer) Dragged(e *fyne.DragEvent) {
	if v.OnDrag != nil {
		v.OnDrag(e.Dragged.DX, e.Dragged.DY)
		return
	}
	s := v.canvasScale()
	v.mu.Lock()
	v.fit = false
	v.cx -= float64(e.Dragged.DX) * s / v.zoom
	v.cy -= float64(e.Dragged.DY) * s / v.zoom
	v.mu.Unlock()
	v.Refresh()
}

// DragEnd implements fyne.Draggable.
func (v *Viewer) DragEnd() {}

// Scrolled zooms about the pointer (or dollies, with OnScroll). A wheel
// notch is about 25 units on Linux; each notch zooms by 1.25.
func (v *Viewer) Scrolled(e *fyne.ScrollEvent) {
	if v.OnScroll != nil {
		v.OnScroll(e.Scrolled.DY)
		return
	}
	s := v.canvasScale()
	v.mu.Lock()
	if v.img != nil && v.lastW > 0 {
		f := math.Pow(1.25, float64(e.Scrolled.DY)/25)
		nz := math.Max(0.02, math.Min(64, v.zoom*f))
		// Keep the image point under the pointer where it is.
		px := float64(e.Position.X)*s - float64(v.lastW)/2
		py := float64(e.Position.Y)*s - float64(v.lastH)/2
		ix, iy := v.cx+px/v.zoom, v.cy+py/v.zoom
		v.zoom = nz
		v.cx, v.cy = ix-px/nz, iy-py/nz
		v.fit = false
	}
	v.mu.Unlock()
	v.Refresh()
}

// DoubleTapped fits the image to the view.
func (v *Viewer) DoubleTapped(*fyne.PointEvent) { v.FitToWindow() }

// Tapped reports the image pixel under a click.
func (v *Viewer) Tapped(e *fyne.PointEvent) {
	if v.OnTap == nil {
		return
	}
	s := v.canvasScale()
	v.mu.Lock()
	x := v.cx + (float64(e.Position.X)*s-float64(v.lastW)/2)/v.zoom
	y := v.cy + (float64(e.Position.Y)*s-float64(v.lastH)/2)/v.zoom
	v.mu.Unlock()
	v.OnTap(x, y)
}

// MouseIn, MouseMoved and MouseOut implement desktop.Hoverable so the
// viewer receives wheel events without a focus.
func (v *Viewer) MouseIn(*desktop.MouseEvent)    {}
func (v *Viewer) MouseMoved(*desktop.MouseEvent) {}
func (v *Viewer) MouseOut()                      {}
