package app

import (
	"context"
	"fmt"
	"image"
	"image/color"
	"math"
	"path/filepath"

	"patina/assets/photo"
	"patina/fit"
	"patina/render"
)

// photoView is the selected photo as decoded, displayed and overlaid.
type photoView struct {
	index   int
	img     *photo.Image
	mask    []bool
	gain    float64
	display *image.RGBA
	overlay *image.RGBA
	gb      *render.GBuffer
	gbCam   string
	reasons RejectionCounts
}

// RejectionCounts counts the pixels the mask overlay marks, by reason.
type RejectionCounts struct {
	Border, Unassigned, Grazing, Masked, Saturated, UnderExposed, Shadow, Kept int
	// Clipped counts the saturated pixels the fit keeps, their clipped
	// channels as lower bounds (fit.PixelClipped); Saturated counts those
	// it leaves out (no channel it can tell clipped).
	Clipped int
}

// Total is the number of pixels counted: every pixel on the object.
func (r RejectionCounts) Total() int {
	return r.Border + r.Unassigned + r.Grazing + r.Masked + r.Saturated + r.UnderExposed + r.Shadow + r.Kept + r.Clipped
}

// Reason colours of the mask overlay.
var (
	colBorder     = color.RGBA{0, 200, 220, 170}
	colUnassigned = color.RGBA{120, 120, 120, 170}
	colGrazing    = color.RGBA{255, 150, 0, 170}
	colMasked     = color.RGBA{40, 40, 40, 200}
	colSaturated  = color.RGBA{255, 0, 200, 200}
	colClipped    = color.RGBA{190, 255, 0, 200}
	colUnderExp   = color.RGBA{150, 90, 30, 200}
	colShadow     = color.RGBA{40, 80, 255, 170}
	colWire       = color.RGBA{120, 255, 120, 110}
)

// SegmentColour is the overlay colour of capture segment i.
func SegmentColour(i int) color.RGBA {
	pal := []color.RGBA{{230, 80, 60, 255}, {240, 200, 40, 255}, {70, 150, 240, 255}, {90, 200, 110, 255},
		{200, 90, 220, 255}, {250, 140, 40, 255}, {60, 210, 210, 255}, {180, 180, 180, 255}}
	if i < 0 {
		return color.RGBA{0, 0, 0, 0}
	}
	return pal[i%len(pal)]
}

// LightColour is the marker colour of capture light i.
func LightColour(i int) color.RGBA {
	pal := []color.RGBA{{255, 240, 60, 255}, {255, 120, 40, 255}, {120, 220, 255, 255}, {255, 90, 200, 255}, {160, 255, 120, 255}}
	return pal[i%len(pal)]
}

// PhotoImage returns the display image of the selected photo and its
// overlay (either may be nil while loading).
func (s *Session) PhotoImage() (img, overlay *image.RGBA) { return s.photo.display, s.photo.overlay }

// PhotoRejections returns the mask overlay's counts for the selected photo.
func (s *Session) PhotoRejections() RejectionCounts { return s.photo.reasons }

// PhotoLoaded reports whether the selected photo has been decoded.
func (s *Session) PhotoLoaded() bool { return s.photo.img != nil && s.photo.index == s.Selected }

// scaledPinhole is cam at a fraction f of its resolution, imaging the same
// view: pixel centres move with the (0,0)-at-centre convention, so
// c' = (c + 0.5) f - 0.5.
func scaledPinhole(cam render.Pinhole, f float64) render.Pinhole {
	if f == 1 {
		return cam
	}
	cam.Width = max(1, int(math.Round(float64(cam.Width)*f)))
	cam.Height = max(1, int(math.Round(float64(cam.Height)*f)))
	cam.Fx *= f
	cam.Fy *= f
	cam.Cx = (cam.Cx+0.5)*f - 0.5
	cam.Cy = (cam.Cy+0.5)*f - 0.5
	return cam
}

// photoLights returns the renderer's lights of photo i.
func (s *Session) photoLights(i int) ([]render.Light, error) {
	var out []render.Light
	for _, id := range s.Capture.Photos[i].Lights {
		l, _ := s.Capture.LightByID(id)
		if l == nil {
			return nil, fmt.Errorf("photos[%d].lights names %q, which the capture does not define", i, id)
		}
		rl, err := l.RenderLight()
		if err != nil {
			return nil, err
		}
		out = append(out, rl)
	}
	return out, nil
}

// photoCamera returns the calibrated camera of photo i.
func (s *Session) photoCamera(i int) (render.Pinhole, error) {
	id := s.Capture.Photos[i].Camera
	c, _ := s.Capture.CameraByID(id)
	if c == nil {
		return render.Pinhole{}, fmt.Errorf("photos[%d].camera names %q, which the capture does not define", i, id)
	}
	return c.Pinhole(), nil
}

// SelectPhoto selects photo i and loads it (and its overlays) in the
// background.
func (s *Session) SelectPhoto(i int) {
	if s.Capture == nil || i < 0 || i >= len(s.Capture.Photos) {
		return
	}
	s.Selected = i
	s.notify(ChangePhoto)
	c := s.Capture
	var gb *render.GBuffer
	if s.photo.gbCam == c.Photos[i].Camera {
		gb = s.photo.gb
	}
	cam, camErr := s.photoCamera(i)
	lights, lightErr := s.photoLights(i)
	in := overlayInput{ov: s.Overlays, sc: s.Scene, labelSeg: s.LabelSeg, gb: gb, cam: cam, lights: lights, floor: s.noiseFloor(i), clip: s.clipLevel(i)}
	file := c.Photos[i].File
	s.setStatus("Loading "+filepath.Base(file), 0)
	var pv photoView
	s.jobs.start("photo", func(ctx context.Context) error {
		if camErr != nil {
			return camErr
		}
		if lightErr != nil {
			return lightErr
		}
		img, err := c.LoadPhoto(i)
		if err != nil {
			return err
		}
		pv = photoView{index: i, img: img, gbCam: c.Photos[i].Camera}
		if pv.mask, err = c.LoadMask(i, img.Width, img.Height); err != nil {
			return err
		}
		pv.gain = AutoGain(img.Pix, img.Width, img.Height)
		pv.display = NewDisplay(render.ToneMap{}, pv.gain).Encode(nil, img.Pix, img.Width, img.Height)
		in.img, in.mask = img, pv.mask
		if err := in.build(ctx); err != nil {
			return err
		}
		pv.gb, pv.overlay, pv.reasons = in.gb, in.dst, in.counts
		return nil
	}, func(err error) {
		s.post(func() {
			if err != nil {
				s.fail("Loading photo "+filepath.Base(file), err, "Check that the file exists and is a PNG, JPEG or TIFF the capture describes ('patina check' lists bad photos); the other photos still work.")
				return
			}
			if s.Selected != i {
				return
			}
			s.photo = pv
			s.setStatus(fmt.Sprintf("Photo %s (%dx%d)", filepath.Base(file), pv.img.Width, pv.img.Height), -1)
			s.notify(ChangePhoto)
		})
	})
}

// refreshOverlay rebuilds the overlay of the loaded photo in the
// background after the overlay switches changed.
func (s *Session) refreshOverlay() {
	if !s.PhotoLoaded() || s.Scene == nil {
		return
	}
	pv := s.photo
	cam, err := s.photoCamera(pv.index)
	if err != nil {
		return
	}
	lights, _ := s.photoLights(pv.index)
	in := overlayInput{ov: s.Overlays, sc: s.Scene, labelSeg: s.LabelSeg, gb: pv.gb, cam: cam, lights: lights, img: pv.img, mask: pv.mask,
		floor: s.noiseFloor(pv.index), clip: s.clipLevel(pv.index)}
	idx := pv.index
	s.jobs.start("overlay", func(ctx context.Context) error { return in.build(ctx) }, func(err error) {
		s.post(func() {
			if err != nil || s.photo.index != idx {
				return
			}
			s.photo.gb, s.photo.overlay, s.photo.reasons = in.gb, in.dst, in.counts
			s.notify(ChangePhoto)
		})
	})
}

// overlayInput is what an overlay is drawn from.
type overlayInput struct {
	ov       Overlays
	sc       *render.Scene
	labelSeg []int
	cam      render.Pinhole
	lights   []render.Light
	img      *photo.Image
	mask     []bool
	gb       *render.GBuffer
	dst      *image.RGBA
	counts   RejectionCounts
	// floor is the radiance below which a pixel is under-exposed.
	floor float64
	// clip is the radiance at which the fit takes a channel as clipped.
	clip float64
}

// overlayNoiseFloor mirrors the fit's default noise floor
// (fit.Options.NoiseFloor): 0.002 times the photo's exposure multiplier,
// about half an 8-bit code value of linear signal.
const overlayNoiseFloor = 0.002

// noiseFloor is the under-exposure threshold of photo i in the radiance
// of its decoded pixels, as the fit sets it by default.
func (s *Session) noiseFloor(i int) float64 {
	e := 1.0
	if d, err := s.Capture.Decoding(i); err == nil && d.Exposure > 0 {
		e = d.Exposure
	}
	return overlayNoiseFloor * e
}

// clipLevel is the radiance of photo i's decoded pixels at which the fit
// takes a channel as clipped (fit.ClipLevel); +Inf when the photo's
// decoding cannot be read, so that no pixel counts as kept clipped.
func (s *Session) clipLevel(i int) float64 {
	d, err := s.Capture.Decoding(i)
	if err != nil {
		return math.Inf(1)
	}
	return fit.ClipLevel(d)
}

// Fit rejection rules mirrored for display (the fit's defaults, see
// fit.Options): cosines below 0.15 are grazing, pixels within 2 of a
// silhouette or segment border are border pixels.
const (
	overlayMinCosine = 0.15
	overlayBorder    = 2
)

func (in *overlayInput) build(ctx context.Context) error {
	if in.sc == nil || in.img == nil {
		return nil
	}
	w, h := in.img.Width, in.img.Height
	if in.cam.Width != w || in.cam.Height != h {
		in.cam = scaledPinhole(in.cam, float64(w)/float64(in.cam.Width))
	}
	if !in.ov.Wireframe && !in.ov.Segments && !in.ov.Mask && !in.ov.Lights {
		in.dst = nil
		return nil
	}
	if in.gb == nil || in.gb.Width != w || in.gb.Height != h {
		gb, err := render.Cast(ctx, in.sc, in.cam, image.Rect(0, 0, w, h), 0)
		if err != nil {
			return err
		}
		in.gb = gb
	}
	dst := image.NewRGBA(image.Rect(0, 0, w, h))
	gb := in.gb
	seg := func(k int) int {
		l := int(gb.Segment[k])
		if l < 0 || l >= len(in.labelSeg) {
			return -1
		}
		return in.labelSeg[l]
	}
	if in.ov.Segments {
		for k := range gb.Hit {
			if gb.Hit[k] {
				c := SegmentColour(seg(k))
				c.A = 150
				blend(dst, k%w, k/w, c)
			}
		}
	}
	if in.ov.Mask {
		in.counts = RejectionCounts{}
		for y := 0; y < h; y++ {
			if y%16 == 0 && ctx.Err() != nil {
				return ctx.Err()
			}
			for x := 0; x < w; x++ {
				k := y*w + x
				if !gb.Hit[k] {
					continue
				}
				c, ok := in.reject(x, y, k, seg)
				if ok {
					blend(dst, x, y, c)
				} else {
					in.counts.Kept++
				}
			}
		}
	}
	if in.ov.Wireframe {
		in.wireframe(dst)
	}
	if in.ov.Lights {
		for i, l := range in.lights {
			if l.Kind == render.DirectionalLight {
				continue
			}
			if px, py, ok := in.cam.Project(l.Position); ok {
				marker(dst, px, py, LightColour(i))
			}
		}
	}
	in.dst = dst
	return nil
}

// reject classifies one pixel in the fit's order of reasons.
func (in *overlayInput) reject(x, y, k int, seg func(int) int) (color.RGBA, bool) {
	gb := in.gb
	w, h := gb.Width, gb.Height
	s0 := seg(k)
	for dy := -overlayBorder; dy <= overlayBorder; dy++ {
		for dx := -overlayBorder; dx <= overlayBorder; dx++ {
			xx, yy := x+dx, y+dy
			if xx < 0 || yy < 0 || xx >= w || yy >= h {
				continue
			}
			kk := yy*w + xx
			if !gb.Hit[kk] || seg(kk) != s0 {
				in.counts.Border++
				return colBorder, true
			}
		}
	}
	if s0 < 0 {
		in.counts.Unassigned++
		return colUnassigned, true
	}
	p, n := gb.Pos[k], gb.Ns[k]
	view := in.cam.Position.Sub(p).Norm()
	if n.Dot(view) < overlayMinCosine {
		in.counts.Grazing++
		return colGrazing, true
	}
	for _, l := range in.lights {
		var d render.Vec3
		if l.Kind == render.DirectionalLight {
			d = l.Direction.Norm()
		} else {
			d = l.Position.Sub(p).Norm()
		}
		if n.Dot(d) < overlayMinCosine {
			in.counts.Grazing++
			return colGrazing, true
		}
	}
	if in.mask != nil && !in.mask[k] {
		in.counts.Masked++
		return colMasked, true
	}
	if in.img.Saturated != nil && in.img.Saturated[k] {
		// The fit keeps a saturated pixel whose clipped channels it can
		// tell, as lower bounds on the radiance (fit.PixelClipped).
		if fit.ClippedChannels(in.img.Pix[3*k:3*k+3], in.clip) != 0 {
			in.counts.Clipped++
			return colClipped, true
		}
		in.counts.Saturated++
		return colSaturated, true
	}
	// A pixel darker than the noise floor is in the cast shadow of the
	// photo's lights or else under-exposed (the fit makes the same split
	// with a shadow ray); a brighter pixel whose lights are all occluded
	// is dropped as shadow when the fit draws it.
	px := in.img.Pix[3*k : 3*k+3]
	dark := (float64(px[0])+float64(px[1])+float64(px[2]))/3 < in.floor
	if len(in.lights) > 0 {
		shadowed := 0
		o := p.AddScaled(gb.Ng[k], 1e-4*(1+p.Len()))
		for _, l := range in.lights {
			var d render.Vec3
			tmax := math.Inf(1)
			if l.Kind == render.DirectionalLight {
				d = l.Direction.Norm()
			} else {
				v := l.Position.Sub(o)
				tmax = v.Len() * (1 - 1e-6)
				d = v.Norm()
			}
			if in.sc.Occluded(render.Ray{O: o, D: d}, tmax) {
				shadowed++
			}
		}
		if shadowed == len(in.lights) {
			in.counts.Shadow++
			return colShadow, true
		}
	}
	if dark {
		in.counts.UnderExposed++
		return colUnderExp, true
	}
	return color.RGBA{}, false
}

// wireframe draws the edges of the triangles the camera sees.
func (in *overlayInput) wireframe(dst *image.RGBA) {
	m := in.sc.Mesh()
	gb := in.gb
	seen := make(map[int32]struct{})
	for _, t := range gb.Tri {
		if t >= 0 {
			seen[t] = struct{}{}
		}
	}
	vert := func(i uint32) render.Vec3 {
		x, y, z := m.Vertex(i)
		return render.Vec3{X: float64(x), Y: float64(y), Z: float64(z)}
	}
	for t := range seen {
		var px, py [3]float64
		ok := true
		for j := 0; j < 3 && ok; j++ {
			px[j], py[j], ok = in.cam.Project(vert(m.Indices[3*int(t)+j]))
		}
		if !ok {
			continue
		}
		for j := 0; j < 3; j++ {
			// Blended, so a dense scan reads as a mesh rather than a fill.
			blendLine(dst, px[j], py[j], px[(j+1)%3], py[(j+1)%3], colWire)
		}
	}
}

// blend draws c over dst at (x, y) with c's alpha.
func blend(dst *image.RGBA, x, y int, c color.RGBA) {
	if !(image.Point{x, y}.In(dst.Rect)) {
		return
	}
	o := dst.PixOffset(x, y)
	p := dst.Pix[o : o+4 : o+4]
	a := uint32(c.A)
	// Premultiplied "over" of c onto the pixel.
	p[0] = uint8((uint32(c.R)*a + uint32(p[0])*(255-a)) / 255)
	p[1] = uint8((uint32(c.G)*a + uint32(p[1])*(255-a)) / 255)
	p[2] = uint8((uint32(c.B)*a + uint32(p[2])*(255-a)) / 255)
	p[3] = uint8(a + uint32(p[3])*(255-a)/255)
}

// line draws a segment with a simple DDA, clipped to dst.
func line(dst *image.RGBA, x0, y0, x1, y1 float64, c color.RGBA) {
	dx, dy := x1-x0, y1-y0
	n := int(math.Ceil(math.Max(math.Abs(dx), math.Abs(dy))))
	if n > 4*(dst.Rect.Dx()+dst.Rect.Dy()) {
		return // a degenerate projection far outside the frame
	}
	for i := 0; i <= n; i++ {
		t := 0.0
		if n > 0 {
			t = float64(i) / float64(n)
		}
		x, y := int(math.Round(x0+t*dx)), int(math.Round(y0+t*dy))
		if image.Pt(x, y).In(dst.Rect) {
			o := dst.PixOffset(x, y)
			dst.Pix[o], dst.Pix[o+1], dst.Pix[o+2], dst.Pix[o+3] = c.R, c.G, c.B, c.A
		}
	}
}

// blendLine is line with c blended over the pixels (each pixel once per
// segment).
func blendLine(dst *image.RGBA, x0, y0, x1, y1 float64, c color.RGBA) {
	dx, dy := x1-x0, y1-y0
	n := int(math.Ceil(math.Max(math.Abs(dx), math.Abs(dy))))
	if n > 4*(dst.Rect.Dx()+dst.Rect.Dy()) {
		return
	}
	for i := 0; i < n; i++ { // the end point belongs to the next edge
		t := float64(i) / float64(max(n, 1))
		blend(dst, int(math.Round(x0+t*dx)), int(math.Round(y0+t*dy)), c)
	}
}

// marker draws a ring with a cross at (px, py).
func marker(dst *image.RGBA, px, py float64, c color.RGBA) {
	r := math.Max(6, float64(dst.Rect.Dx())/60)
	for a := 0; a < 64; a++ {
		t0, t1 := 2*math.Pi*float64(a)/64, 2*math.Pi*float64(a+1)/64
		line(dst, px+r*math.Cos(t0), py+r*math.Sin(t0), px+r*math.Cos(t1), py+r*math.Sin(t1), c)
	}
	line(dst, px-1.6*r, py, px+1.6*r, py, c)
	line(dst, px, py-1.6*r, px, py+1.6*r, c)
}
