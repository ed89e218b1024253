package app

import (
	"image"
	"math"

	"patina/brdf"
	"patina/render"
)

// Swatch draws a sphere of material p under one neutral white light from
// the upper left plus a dim uniform surround, evaluated with brdf.Eval at
// each pixel (direct light only, no path tracing: it must cost well under a
// millisecond per segment). size is the side in pixels.
func Swatch(p brdf.Params, size int) *image.RGBA {
	img := image.NewRGBA(image.Rect(0, 0, size, size))
	light := render.V3(-0.5, 0.6, 0.75).Norm() // view space: x right, y up, z towards the viewer
	view := render.V3(0, 0, 1)
	const irradiance, surround = 2.6, 0.12
	var d Display
	d.Set(render.ToneMap{Highlight: render.RollOff}, 1)
	pix := make([]float32, 3*size*size)
	for y := 0; y < size; y++ {
		for x := 0; x < size; x++ {
			k := 3 * (y*size + x)
			u := (float64(x)+0.5)/float64(size)*2 - 1
			v := 1 - (float64(y)+0.5)/float64(size)*2
			r2 := u*u + v*v
			if r2 >= 1 {
				// A checker background shows dark and light materials alike.
				c := float32(0.18)
				if (x/4+y/4)%2 == 0 {
					c = 0.32
				}
				pix[k], pix[k+1], pix[k+2] = c, c, c
				continue
			}
			n := render.V3(u, v, math.Sqrt(1-r2))
			fr := render.NewFrame(n)
			wo, wi := fr.ToLocal(view), fr.ToLocal(light)
			f := brdf.Eval(&p, wo, wi)
			cos := math.Max(wi.Z, 0)
			for c := 0; c < 3; c++ {
				// The surround lights the diffuse part and the specular
				// reflectance at normal incidence, a crude ambient term.
				amb := surround * (p.Diffuse[c] + p.Specular[c])
				pix[k+c] = float32(f[c]*irradiance*cos + amb)
			}
		}
	}
	return d.Encode(img, pix, size, size)
}
