package hdr

import (
	"math"
	"math/rand/v2"
)

// testImage returns a deterministic image whose values span several
// decades (1e-3 to 1e3), with a black pixel, a pixel with one zero channel,
// and exact powers of two, so the RGBE checks meet every case.
func testImage(w, h int, seed uint64) *Image {
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	m := NewImage(w, h)
	for i := range m.Pix {
		m.Pix[i] = float32(math.Pow(10, rng.Float64()*6-3))
	}
	set := func(i int, r, g, b float32) {
		if i < w*h {
			m.Pix[3*i], m.Pix[3*i+1], m.Pix[3*i+2] = r, g, b
		}
	}
	set(0, 0, 0, 0)
	set(1, 1, 0, 0)
	set(2, 0.5, 0.25, 2)
	set(3, 1000, 1e-3, 7)
	// A run of equal pixels so run-length encoding has something to do.
	for i := 4; i < min(w*h, 40); i++ {
		set(i, 0.18, 0.18, 0.18)
	}
	return m
}

// rgbeStep returns 2^(e-136) for the exponent RGBE gives the brightest of
// r, g, b: the size of one mantissa step (Ward, "Real pixels": the exponent
// is that of the largest component, the mantissas are 8 bits). It returns
// 0 for a pixel that RGBE stores as black (every channel below 1e-32).
func rgbeStep(r, g, b float32) float64 {
	v := max(float64(r), float64(g), float64(b), 0)
	if v <= 1e-32 {
		return 0
	}
	_, e := math.Frexp(v)
	return math.Ldexp(1, e-8)
}
