// Package hdr reads and writes the two high-dynamic-range image formats that
// Patina uses for renders, environment maps and linear photographs:
//
//   - Radiance RGBE (.hdr, .pic), following Greg Ward, "Real pixels",
//     Graphics Gems II (1991), and the Radiance file format notes
//     (https://radiance-online.org/learning/documentation);
//   - PFM, the portable float map (Paul Debevec's description,
//     https://www.pauldebevec.com/Research/HDR/PFM/).
//
// Both decode into Image, a linear float32 RGB image whose rows run top to
// bottom, which also satisfies image.Image. The ".hdr" format registers itself
// with image.RegisterFormat, so image.Decode and image.DecodeConfig find it.
//
// # Mantissa convention
//
// An RGBE pixel stores three 8-bit mantissas m and a shared exponent e.
// Readers of the format disagree by half a mantissa step: the Radiance
// original (colr_color in color.c) decodes (m + 0.5) 2^(e-136), while OpenCV
// (rgbe2float in rgbe.cpp) and several others decode m 2^(e-136). Both
// writers encode by truncation, m = floor(v 2^(136-e)).
//
// Patina follows the Radiance original in both directions: it encodes by
// truncation and decodes (m + 0.5) 2^(e-136) for every channel of a pixel
// whose exponent byte is not zero (a pixel with e = 0 is black). The pair is
// unbiased: a value written and read back by Patina lies within half a step
// of the original, and files written by Radiance or OpenCV are read the way
// Radiance itself reads them. The cost is that a channel stored with
// mantissa 0 beside a bright channel reads as half a step (at most 1/512 of
// the brightest channel), not as exactly zero, just as in Radiance. OpenCV
// reads a Patina file half a step lower than Patina does; the tests check
// that difference exactly against OpenCV in both directions.
//
// # Limits
//
// Dimensions are read from the header and checked against MaxPixels before
// anything is allocated. The pixel buffer is allocated whole only when the
// input is known (a file, a bytes.Reader) to be long enough to hold the
// image; otherwise it grows as pixel data arrives. So a truncated file that
// claims a large image costs memory in proportion to what it holds, not to
// its claim. Old-style RGBE runs, which legitimately repeat a pixel across
// many from four bytes, are bounded by MaxPixels like everything else.
package hdr

import (
	"fmt"
	"image"
	"image/color"
	"math"
)

// MaxPixels is the largest image, in pixels, that the decoders accept:
// 16384 x 8192, the size of the largest equirectangular environment maps in
// common use. Decoded, such an image takes 1.5 GiB (three float32 per pixel).
// Headers that claim more are refused before any pixel memory is allocated.
const MaxPixels = 16384 * 8192

// Image is a linear float RGB image with rows from top to bottom. Pix holds
// r, g, b for each pixel, row-major: pixel (x, y) starts at 3*(y*Width+x).
// Values are linear radiance in the file's scale, not display-encoded; they
// may exceed 1. Image satisfies image.Image; its At clamps to [0, 1].
type Image struct {
	Width, Height int
	Pix           []float32
}

// NewImage returns a black image of w x h pixels.
func NewImage(w, h int) *Image {
	if w < 0 || h < 0 {
		panic(fmt.Sprintf("hdr.NewImage: negative size %dx%d", w, h))
	}
	return &Image{Width: w, Height: h, Pix: make([]float32, 3*w*h)}
}

// RGB returns the pixel at (x, y); it panics when (x, y) is outside the image.
func (m *Image) RGB(x, y int) (r, g, b float32) {
	i := m.offset(x, y)
	p := m.Pix[i : i+3 : i+3]
	return p[0], p[1], p[2]
}

// SetRGB sets the pixel at (x, y); it panics when (x, y) is outside the image.
func (m *Image) SetRGB(x, y int, r, g, b float32) {
	i := m.offset(x, y)
	p := m.Pix[i : i+3 : i+3]
	p[0], p[1], p[2] = r, g, b
}

func (m *Image) offset(x, y int) int {
	if x < 0 || y < 0 || x >= m.Width || y >= m.Height {
		panic(fmt.Sprintf("hdr: pixel (%d, %d) outside the %dx%d image", x, y, m.Width, m.Height))
	}
	return 3 * (y*m.Width + x)
}

// ColorModel returns RGBFModel.
func (m *Image) ColorModel() color.Model { return RGBFModel }

// Bounds returns the rectangle (0, 0)-(Width, Height).
func (m *Image) Bounds() image.Rectangle { return image.Rect(0, 0, m.Width, m.Height) }

// At returns the pixel at (x, y) as an RGBF, or black outside the image.
func (m *Image) At(x, y int) color.Color {
	if x < 0 || y < 0 || x >= m.Width || y >= m.Height {
		return RGBF{}
	}
	r, g, b := m.RGB(x, y)
	return RGBF{r, g, b}
}

// CheckFinite returns an error naming the first pixel (in row order) with a
// NaN or infinite channel, or nil. The decoders store PFM samples as they
// are, since the format is plain float32; callers that cannot use such
// values (light transport, fitting) check with this.
func (m *Image) CheckFinite() error {
	for i, v := range m.Pix {
		f := float64(v)
		if math.IsNaN(f) || math.IsInf(f, 0) {
			p := i / 3
			return fmt.Errorf("hdr: pixel (%d, %d) channel %c is %v, expected a finite value",
				p%m.Width, p/m.Width, "rgb"[i%3], v)
		}
	}
	return nil
}

// RGBF is a linear RGB colour with float32 channels, the colour type of Image.
type RGBF struct{ R, G, B float32 }

// RGBA implements color.Color. It clamps each linear channel to [0, 1] and
// scales it to 16 bits without any transfer curve: code that displays an
// Image tone-maps and sRGB-encodes it first (render/colour). Alpha is opaque.
func (c RGBF) RGBA() (r, g, b, a uint32) {
	return clamp16(c.R), clamp16(c.G), clamp16(c.B), 0xffff
}

func clamp16(v float32) uint32 {
	if !(v > 0) { // also NaN
		return 0
	}
	if v >= 1 {
		return 0xffff
	}
	return uint32(v*0xffff + 0.5)
}

// RGBFModel converts colours to RGBF. Non-RGBF colours are taken as linear
// values in [0, 1] (their 16-bit RGBA divided by 0xffff), the inverse of
// RGBF.RGBA; alpha is ignored.
var RGBFModel = color.ModelFunc(func(c color.Color) color.Color {
	if f, ok := c.(RGBF); ok {
		return f
	}
	r, g, b, _ := c.RGBA()
	return RGBF{float32(r) / 0xffff, float32(g) / 0xffff, float32(b) / 0xffff}
})
