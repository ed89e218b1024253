package photo

import (
	"fmt"
	"image"
	"image/color"
	"math"

	"patina/render/colour"
)

// table maps every code value of one bit depth to linear radiance and says
// from which code on a channel is saturated.
type table struct {
	lin     []float32
	satCode int // codes >= satCode are saturated
}

func newTable(d Decoding, bits int) *table {
	maxCode := 1<<bits - 1
	t := &table{lin: make([]float32, maxCode+1)}
	scale := 1 / (d.WhiteLevel - d.BlackLevel)
	srgb := d.Encoding == "srgb"
	for c := range t.lin {
		u := (float64(c)/float64(maxCode) - d.BlackLevel) * scale
		if srgb {
			u = colour.SRGBToLinear(u)
		}
		t.lin[c] = float32(u * d.Exposure)
	}
	// The smallest code c with c/maxCode >= threshold*white, found exactly
	// in the same float64 arithmetic as the definition.
	lim := d.SaturationThreshold * d.WhiteLevel
	s := int(math.Ceil(lim * float64(maxCode)))
	s = max(0, min(s, maxCode+1))
	for s > 0 && float64(s-1)/float64(maxCode) >= lim {
		s--
	}
	for s <= maxCode && float64(s)/float64(maxCode) < lim {
		s++
	}
	t.satCode = s
	return t
}

// Convert decodes an image already in memory with d (see the package
// documentation). Common image types are converted without per-pixel
// interface calls.
func Convert(img image.Image, d Decoding) (*Image, error) {
	d, err := d.normalised()
	if err != nil {
		return nil, err
	}
	b := img.Bounds()
	w, h := b.Dx(), b.Dy()
	if w <= 0 || h <= 0 {
		return nil, fmt.Errorf("empty image (%dx%d)", w, h)
	}
	if w > MaxDimension || h > MaxDimension || int64(w)*int64(h) > MaxPixels {
		return nil, fmt.Errorf("image of %dx%d pixels is beyond the limit of %d pixels", w, h, MaxPixels)
	}
	out := &Image{Width: w, Height: h, Pix: make([]float32, 3*w*h), Saturated: make([]bool, w*h)}
	if _, ok := img.(*image.CMYK); ok {
		return nil, fmt.Errorf("CMYK image: export the photo as RGB (sRGB) instead")
	}
	if is16(img) {
		t := newTable(d, 16)
		row := make([]uint16, 3*w)
		for y := 0; y < h; y++ {
			fill16(img, b.Min.Y+y, row)
			t.emit16(out, y, row)
		}
	} else {
		t := newTable(d, 8)
		row := make([]uint8, 3*w)
		var pal [][3]uint8
		if p, ok := img.(*image.Paletted); ok {
			pal = paletteRGB(p.Palette)
		}
		for y := 0; y < h; y++ {
			fill8(img, b.Min.Y+y, row, pal)
			t.emit8(out, y, row)
		}
	}
	return out, nil
}

func is16(img image.Image) bool {
	switch img.(type) {
	case *image.RGBA, *image.NRGBA, *image.Gray, *image.YCbCr, *image.Paletted:
		return false
	case *image.RGBA64, *image.NRGBA64, *image.Gray16:
		return true
	}
	return true // the generic path reads 16-bit colours
}

func (t *table) emit8(out *Image, y int, row []uint8) {
	w := out.Width
	pix := out.Pix[3*y*w : 3*(y+1)*w]
	sat := out.Saturated[y*w : (y+1)*w]
	lin := t.lin[:256]
	s := t.satCode
	for x := range sat {
		r, g, b := row[3*x], row[3*x+1], row[3*x+2]
		pix[3*x], pix[3*x+1], pix[3*x+2] = lin[r], lin[g], lin[b]
		sat[x] = int(r) >= s || int(g) >= s || int(b) >= s
	}
}

func (t *table) emit16(out *Image, y int, row []uint16) {
	w := out.Width
	pix := out.Pix[3*y*w : 3*(y+1)*w]
	sat := out.Saturated[y*w : (y+1)*w]
	lin := t.lin[:65536]
	s := t.satCode
	for x := range sat {
		r, g, b := row[3*x], row[3*x+1], row[3*x+2]
		pix[3*x], pix[3*x+1], pix[3*x+2] = lin[r], lin[g], lin[b]
		sat[x] = int(r) >= s || int(g) >= s || int(b) >= s
	}
}

// unpremul8 divides a premultiplied 8-bit channel by its alpha.
func unpremul8(c, a uint8) uint8 {
	if a == 0xff {
		return c
	}
	if a == 0 {
		return 0
	}
	return uint8(min(255, (uint32(c)*255+uint32(a)/2)/uint32(a)))
}

func unpremul16(c, a uint16) uint16 {
	if a == 0xffff {
		return c
	}
	if a == 0 {
		return 0
	}
	return uint16(min(65535, (uint32(c)*65535+uint32(a)/2)/uint32(a)))
}

func paletteRGB(p color.Palette) [][3]uint8 {
	out := make([][3]uint8, 256)
	for i, c := range p {
		if i >= 256 {
			break
		}
		n := color.NRGBAModel.Convert(c).(color.NRGBA)
		out[i] = [3]uint8{n.R, n.G, n.B}
	}
	return out
}

// fill8 writes the 8-bit r, g, b codes of row y of img into row.
func fill8(img image.Image, y int, row []uint8, pal [][3]uint8) {
	b := img.Bounds()
	w := b.Dx()
	switch m := img.(type) {
	case *image.NRGBA:
		src := m.Pix[m.PixOffset(b.Min.X, y):]
		for x := 0; x < w; x++ {
			row[3*x], row[3*x+1], row[3*x+2] = src[4*x], src[4*x+1], src[4*x+2]
		}
	case *image.RGBA:
		src := m.Pix[m.PixOffset(b.Min.X, y):]
		for x := 0; x < w; x++ {
			a := src[4*x+3]
			row[3*x], row[3*x+1], row[3*x+2] = unpremul8(src[4*x], a), unpremul8(src[4*x+1], a), unpremul8(src[4*x+2], a)
		}
	case *image.Gray:
		src := m.Pix[m.PixOffset(b.Min.X, y):]
		for x := 0; x < w; x++ {
			v := src[x]
			row[3*x], row[3*x+1], row[3*x+2] = v, v, v
		}
	case *image.YCbCr:
		// Chroma index as image.YCbCr.COffset computes it, with the row
		// part hoisted: x/hdiv - Rect.Min.X/hdiv within the row.
		hdiv := 1
		switch m.SubsampleRatio {
		case image.YCbCrSubsampleRatio422, image.YCbCrSubsampleRatio420:
			hdiv = 2
		case image.YCbCrSubsampleRatio411, image.YCbCrSubsampleRatio410:
			hdiv = 4
		}
		y0 := m.YOffset(b.Min.X, y)
		c0 := m.COffset(b.Min.X, y) - (b.Min.X/hdiv - m.Rect.Min.X/hdiv)
		ys := m.Y[y0 : y0+w]
		for x := range ys {
			ci := c0 + (b.Min.X+x)/hdiv - m.Rect.Min.X/hdiv
			row[3*x], row[3*x+1], row[3*x+2] = color.YCbCrToRGB(ys[x], m.Cb[ci], m.Cr[ci])
		}
	case *image.Paletted:
		src := m.Pix[m.PixOffset(b.Min.X, y):]
		for x := 0; x < w; x++ {
			c := pal[src[x]]
			row[3*x], row[3*x+1], row[3*x+2] = c[0], c[1], c[2]
		}
	default:
		panic("photo: fill8 on a 16-bit image type")
	}
}

// fill16 writes the 16-bit r, g, b codes of row y of img into row.
func fill16(img image.Image, y int, row []uint16) {
	b := img.Bounds()
	w := b.Dx()
	be := func(p []uint8, i int) uint16 { return uint16(p[i])<<8 | uint16(p[i+1]) }
	switch m := img.(type) {
	case *image.NRGBA64:
		src := m.Pix[m.PixOffset(b.Min.X, y):]
		for x := 0; x < w; x++ {
			row[3*x], row[3*x+1], row[3*x+2] = be(src, 8*x), be(src, 8*x+2), be(src, 8*x+4)
		}
	case *image.RGBA64:
		src := m.Pix[m.PixOffset(b.Min.X, y):]
		for x := 0; x < w; x++ {
			a := be(src, 8*x+6)
			row[3*x], row[3*x+1], row[3*x+2] = unpremul16(be(src, 8*x), a), unpremul16(be(src, 8*x+2), a), unpremul16(be(src, 8*x+4), a)
		}
	case *image.Gray16:
		src := m.Pix[m.PixOffset(b.Min.X, y):]
		for x := 0; x < w; x++ {
			v := be(src, 2*x)
			row[3*x], row[3*x+1], row[3*x+2] = v, v, v
		}
	default:
		// Any other image type: through the colour interface, one call
		// per pixel (slow, but every standard decoder has a fast path).
		for x := 0; x < w; x++ {
			c := color.NRGBA64Model.Convert(img.At(b.Min.X+x, y)).(color.NRGBA64)
			row[3*x], row[3*x+1], row[3*x+2] = c.R, c.G, c.B
		}
	}
}
