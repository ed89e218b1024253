package app

import (
	"image"
	"image/color"
	"math"
	"sync"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/widget"
)

// LossCurve draws a loss history on a log scale into a reused raster
// buffer, decimated to at most one point per pixel column.
type LossCurve struct {
	widget.BaseWidget
	raster *canvas.Raster
	mu     sync.Mutex
	values []float64
	buf    *image.RGBA
}

// NewLossCurve makes an empty curve.
func NewLossCurve() *LossCurve {
	c := &LossCurve{}
	c.raster = canvas.NewRaster(c.generate)
	c.ExtendBaseWidget(c)
	return c
}

// SetValues replaces the curve (the slice is copied).
func (c *LossCurve) SetValues(v []float64) {
	c.mu.Lock()
	c.values = append(c.values[:0], v...)
	c.mu.Unlock()
	c.Refresh()
}

// CreateRenderer implements fyne.Widget.
func (c *LossCurve) CreateRenderer() fyne.WidgetRenderer {
	r := widget.NewSimpleRenderer(c.raster)
	return &minSized{WidgetRenderer: r, min: fyne.NewSize(320, 160)}
}

type minSized struct {
	fyne.WidgetRenderer
	min fyne.Size
}

func (m *minSized) MinSize() fyne.Size { return m.min }

func (c *LossCurve) generate(w, h int) image.Image {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.buf = ensureRGBA(c.buf, w, h)
	b := c.buf
	for i := 0; i < len(b.Pix); i += 4 {
		b.Pix[i], b.Pix[i+1], b.Pix[i+2], b.Pix[i+3] = 30, 32, 36, 255
	}
	grid := color.RGBA{60, 62, 68, 255}
	for k := 1; k < 4; k++ {
		y := k * h / 4
		for x := 0; x < w; x++ {
			b.SetRGBA(x, y, grid)
		}
	}
	if len(c.values) < 1 || w < 4 || h < 4 {
		return b
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range c.values {
		if v > 0 && !math.IsInf(v, 0) {
			lv := math.Log10(v)
			lo, hi = math.Min(lo, lv), math.Max(hi, lv)
		}
	}
	if math.IsInf(lo, 0) {
		return b
	}
	if hi-lo < 1e-6 {
		lo, hi = lo-0.5, hi+0.5
	}
	n := len(c.values)
	line := color.RGBA{250, 180, 60, 255}
	px, py := -1.0, -1.0
	step := math.Max(1, float64(n)/float64(w/2))
	for fi := 0.0; int(fi) < n; fi += step {
		i := int(fi)
		v := c.values[i]
		if !(v > 0) {
			continue
		}
		x := 4 + float64(i)/math.Max(1, float64(n-1))*float64(w-8)
		y := 4 + (hi-math.Log10(v))/(hi-lo)*float64(h-8)
		if px >= 0 {
			rasterLine(b, px, py, x, y, line)
		}
		px, py = x, y
	}
	return b
}

// rasterLine draws a two-pixel-wide line.
func rasterLine(b *image.RGBA, x0, y0, x1, y1 float64, c color.RGBA) {
	line(b, x0, y0, x1, y1, c)
	line(b, x0, y0+1, x1, y1+1, c)
}

// DirectionPad picks a direction on the upper hemisphere seen from above:
// the centre is straight overhead, the rim the horizon, azimuth counted
// from the right (+X) counter-clockwise. Drag or click to move the light.
type DirectionPad struct {
	widget.BaseWidget
	raster   *canvas.Raster
	mu       sync.Mutex
	az, el   float64 // degrees
	buf      *image.RGBA
	lastW    int
	OnChange func(az, el float64)
}

// NewDirectionPad makes a pad at the given direction.
func NewDirectionPad(az, el float64) *DirectionPad {
	d := &DirectionPad{az: az, el: el}
	d.raster = canvas.NewRaster(d.generate)
	d.ExtendBaseWidget(d)
	return d
}

// CreateRenderer implements fyne.Widget.
func (d *DirectionPad) CreateRenderer() fyne.WidgetRenderer {
	return &minSized{WidgetRenderer: widget.NewSimpleRenderer(d.raster), min: fyne.NewSize(120, 120)}
}

// Direction returns azimuth and elevation in degrees.
func (d *DirectionPad) Direction() (az, el float64) {
	d.mu.Lock()
	defer d.mu.Unlock()
	return d.az, d.el
}

// SetDirection moves the marker without calling OnChange.
func (d *DirectionPad) SetDirection(az, el float64) {
	d.mu.Lock()
	d.az, d.el = az, el
	d.mu.Unlock()
	d.Refresh()
}

func (d *DirectionPad) generate(w, h int) image.Image {
	d.mu.Lock()
	defer d.mu.Unlock()
	d.buf = ensureRGBA(d.buf, w, h)
	d.lastW = w
	b := d.buf
	s := float64(min(w, h))
	cx, cy, r := float64(w)/2, float64(h)/2, s/2-3
	az, el := d.az*math.Pi/180, d.el*math.Pi/180
	lx, ly, lz := math.Cos(el)*math.Cos(az), math.Cos(el)*math.Sin(az), math.Sin(el)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			u, v := (float64(x)+0.5-cx)/r, -(float64(y)+0.5-cy)/r
			o := b.PixOffset(x, y)
			if u*u+v*v > 1 {
				b.Pix[o], b.Pix[o+1], b.Pix[o+2], b.Pix[o+3] = 30, 32, 36, 255
				continue
			}
			// Shade the dome as a sphere seen from above lit by the light.
			nz := math.Sqrt(1 - u*u - v*v)
			c := math.Max(0, u*lx+v*ly+nz*lz)
			g := uint8(40 + 150*c)
			b.Pix[o], b.Pix[o+1], b.Pix[o+2], b.Pix[o+3] = g, g, uint8(float64(g)*0.95), 255
		}
	}
	rr := r * (1 - d.el/90)
	mx, my := cx+rr*math.Cos(az), cy-rr*math.Sin(az)
	marker(b, mx, my, color.RGBA{255, 220, 60, 255})
	return b
}

func (d *DirectionPad) set(pos fyne.Position) {
	size := d.Size()
	s := math.Min(float64(size.Width), float64(size.Height))
	r := s/2 - 3
	u := (float64(pos.X) - float64(size.Width)/2) / r
	v := -(float64(pos.Y) - float64(size.Height)/2) / r
	rad := math.Min(1, math.Hypot(u, v))
	az := math.Atan2(v, u) * 180 / math.Pi
	el := 90 * (1 - rad)
	d.mu.Lock()
	d.az, d.el = az, math.Max(0, el)
	d.mu.Unlock()
	d.Refresh()
	if d.OnChange != nil {
		d.OnChange(az, math.Max(0, el))
	}
}

// Tapped moves the light to the click.
func (d *DirectionPad) Tapped(e *fyne.PointEvent) { d.set(e.Position) }

// Dragged moves the light with the pointer.
func (d *DirectionPad) Dragged(e *fyne.DragEvent) { d.set(e.Position) }

// DragEnd implements fyne.Draggable.
func (d *DirectionPad) DragEnd() {}
