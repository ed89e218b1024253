package render

import (
	"fmt"
	"image"
	"image/color"
	"math"

	"patina/render/colour"
)

// Highlight says how a display image treats linear values above 1.
type Highlight uint8

const (
	// Clip clamps each channel to [0,1].
	Clip Highlight = iota
	// RollOff is Patina's shoulder: identity up to the knee RollOffKnee,
	// then k + (1-k)(1 - exp(-(x-k)/(1-k))), which meets the identity with
	// the same slope at the knee and approaches 1 without reaching it, so
	// highlights up to several stops over keep some gradation. It acts per
	// channel, so strong highlights drift towards white as film does.
	RollOff
)

// RollOffKnee is where the RollOff shoulder starts (linear display value).
const RollOffKnee = 0.8

// ParseHighlight returns the Highlight named "clip" or "rolloff".
func ParseHighlight(s string) (Highlight, error) {
	switch s {
	case "clip":
		return Clip, nil
	case "rolloff":
		return RollOff, nil
	}
	return 0, fmt.Errorf("render: highlight mode %q: expected \"clip\" or \"rolloff\"", s)
}

// ToneMap turns linear radiance into display values: multiply by
// 2^ExposureEV, apply the highlight curve, then the sRGB transfer curve of
// IEC 61966-2-1 (render/colour). The zero value is exposure 0 with
// clipping.
type ToneMap struct {
	ExposureEV float64   // exposure in stops (+1 doubles the brightness)
	Highlight  Highlight // what happens above 1
}

// Linear maps one linear channel value to display-linear [0,1], before the
// sRGB curve.
func (t ToneMap) Linear(v float64) float64 {
	v *= math.Exp2(t.ExposureEV)
	if !(v > 0) {
		return 0
	}
	if t.Highlight == RollOff {
		const k = RollOffKnee
		if v > k {
			return k + (1-k)*(1-math.Exp(-(v-k)/(1-k)))
		}
		return v
	}
	return math.Min(v, 1)
}

// Encode maps one linear channel value to the sRGB-encoded display value
// in [0,1].
func (t ToneMap) Encode(v float64) float64 {
	l := t.Linear(v)
	if l >= 1 {
		return 1 // the curve's 1.055 - 0.055 rounds to just below 1
	}
	return math.Min(1, colour.LinearToSRGB(l))
}

// Image develops the film into a display image: 8 bits per channel
// (*image.NRGBA) or 16 (*image.NRGBA64). Colour is un-premultiplied by
// coverage before tone mapping, so a transparent background keeps clean
// edges; alpha is the coverage.
func (t ToneMap) Image(f *Film, bits int) (image.Image, error) {
	if bits != 8 && bits != 16 {
		return nil, fmt.Errorf("render: display image depth %d: expected 8 or 16 bits", bits)
	}
	r := image.Rect(0, 0, f.Width, f.Height)
	var im8 *image.NRGBA
	var im16 *image.NRGBA64
	if bits == 8 {
		im8 = image.NewNRGBA(r)
	} else {
		im16 = image.NewNRGBA64(r)
	}
	for y := 0; y < f.Height; y++ {
		for x := 0; x < f.Width; x++ {
			L, a := f.Pixel(x, y)
			var e [3]float64
			if a > 0 {
				for c := 0; c < 3; c++ {
					e[c] = t.Encode(L[c] / a)
				}
			}
			a = math.Min(1, math.Max(0, a))
			if bits == 8 {
				im8.SetNRGBA(x, y, color.NRGBA{q8(e[0]), q8(e[1]), q8(e[2]), q8(a)})
			} else {
				im16.SetNRGBA64(x, y, color.NRGBA64{q16(e[0]), q16(e[1]), q16(e[2]), q16(a)})
			}
		}
	}
	if bits == 8 {
		return im8, nil
	}
	return im16, nil
}

func q8(v float64) uint8   { return uint8(math.Round(math.Min(1, math.Max(0, v)) * 255)) }
func q16(v float64) uint16 { return uint16(math.Round(math.Min(1, math.Max(0, v)) * 65535)) }
