package app

import (
	"image"
	"math"
	"sort"
	"strings"

	"patina/render"
)

// lutSize is the number of entries of the display table over linear values
// 0..lutMax: fine enough that neighbouring entries differ by less than one
// 8-bit code value in the shadows, where the sRGB curve is steepest.
const (
	lutSize = 8192
	lutMax  = 4.0
)

// Display turns linear RGB into 8-bit sRGB display pixels through
// render.ToneMap (exposure in stops, highlight curve, IEC 61966-2-1 curve),
// tabulated once per setting so a full frame costs a table look-up a
// channel.
type Display struct {
	tm    render.ToneMap
	gain  float64 // extra linear gain (photo exposure normalisation)
	table [lutSize + 1]uint8
	ok    bool
}

// NewDisplay tabulates tm with an extra linear gain applied first.
func NewDisplay(tm render.ToneMap, gain float64) *Display {
	d := &Display{}
	d.Set(tm, gain)
	return d
}

// Set changes the tone map and gain, re-tabulating only when they change.
func (d *Display) Set(tm render.ToneMap, gain float64) {
	if gain <= 0 || math.IsNaN(gain) || math.IsInf(gain, 0) {
		gain = 1
	}
	if d.ok && d.tm == tm && d.gain == gain {
		return
	}
	d.tm, d.gain, d.ok = tm, gain, true
	for i := range d.table {
		v := float64(i) / lutSize * lutMax
		d.table[i] = uint8(math.Round(255 * tm.Encode(v)))
	}
}

func (d *Display) code(v float32) uint8 {
	x := float64(v) * d.gain
	if !(x > 0) { // negative and NaN show black
		return 0
	}
	if x >= lutMax {
		return d.table[lutSize]
	}
	return d.table[int(x*(lutSize/lutMax)+0.5)]
}

// Encode writes the w x h linear RGB triples of pix into dst, reusing dst
// when it has the right size, and returns it.
func (d *Display) Encode(dst *image.RGBA, pix []float32, w, h int) *image.RGBA {
	dst = ensureRGBA(dst, w, h)
	n := w * h
	if len(pix) < 3*n {
		return dst
	}
	o := dst.Pix
	for i := 0; i < n; i++ {
		o[4*i] = d.code(pix[3*i])
		o[4*i+1] = d.code(pix[3*i+1])
		o[4*i+2] = d.code(pix[3*i+2])
		o[4*i+3] = 255
	}
	return dst
}

// ensureRGBA returns dst when it is w x h at the origin, else a new image.
func ensureRGBA(dst *image.RGBA, w, h int) *image.RGBA {
	if dst != nil && dst.Rect.Min == (image.Point{}) && dst.Rect.Dx() == w && dst.Rect.Dy() == h {
		return dst
	}
	return image.NewRGBA(image.Rect(0, 0, w, h))
}

// AutoGain returns the linear gain that puts the 99.5th percentile of the
// brightest channel of pix at 0.9 of display white, so photos of any
// exposure open legibly (common practice for previews). It samples at most
// about 20000 pixels.
func AutoGain(pix []float32, w, h int) float64 {
	n := w * h
	if n == 0 || len(pix) < 3*n {
		return 1
	}
	step := max(1, n/20000)
	vals := make([]float64, 0, n/step+1)
	for i := 0; i < n; i += step {
		m := math.Max(float64(pix[3*i]), math.Max(float64(pix[3*i+1]), float64(pix[3*i+2])))
		if m > 0 && !math.IsInf(m, 0) {
			vals = append(vals, m)
		}
	}
	if len(vals) == 0 {
		return 1
	}
	sort.Float64s(vals)
	p := vals[min(len(vals)-1, int(0.995*float64(len(vals))))]
	if p <= 0 {
		return 1
	}
	return 0.9 / p
}

// Downsample box-filters w x h linear RGB to fit inside maxW x maxH,
// keeping the aspect ratio, and returns the new pixels and size.
func Downsample(pix []float32, w, h, maxW, maxH int) ([]float32, int, int) {
	if w <= 0 || h <= 0 {
		return nil, 0, 0
	}
	f := max(1, int(math.Ceil(math.Max(float64(w)/float64(maxW), float64(h)/float64(maxH)))))
	nw, nh := max(1, w/f), max(1, h/f)
	out := make([]float32, 3*nw*nh)
	inv := 1 / float32(f*f)
	for y := 0; y < nh; y++ {
		for x := 0; x < nw; x++ {
			var r, g, b float32
			for yy := y * f; yy < y*f+f; yy++ {
				row := yy * w
				for xx := x * f; xx < x*f+f; xx++ {
					k := 3 * (row + xx)
					r += pix[k]
					g += pix[k+1]
					b += pix[k+2]
				}
			}
			k := 3 * (y*nw + x)
			out[k], out[k+1], out[k+2] = r*inv, g*inv, b*inv
		}
	}
	return out, nw, nh
}

// wrapText breaks s into lines of at most n characters at spaces, for
// labels inside scrolled panels, where Fyne's own wrapping measures the
// text before the panel has its width.
func wrapText(s string, n int) string {
	var out []string
	for _, para := range strings.Split(s, "\n") {
		line := ""
		for _, w := range strings.Fields(para) {
			switch {
			case line == "":
				line = w
			case len([]rune(line))+1+len([]rune(w)) > n:
				out = append(out, line)
				line = w
			default:
				line += " " + w
			}
		}
		out = append(out, line)
	}
	return strings.Join(out, "\n")
}
