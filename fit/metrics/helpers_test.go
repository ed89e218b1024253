package metrics

import (
	"encoding/binary"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// testPair is a synthetic photo and a render that departs from it the way a
// fitted simulation does: a colour cast, a slight blur and offset, its own
// noise, and a region with a wrong material.
type testPair struct {
	w, h          int
	render, photo []float32
	valid         []bool
	segment       []int32
}

func makePair(w, h int, seed uint64, withMask bool) *testPair {
	rng := rand.New(rand.NewPCG(seed, 7))
	p := &testPair{w: w, h: h, render: make([]float32, 3*w*h), photo: make([]float32, 3*w*h),
		valid: make([]bool, w*h), segment: make([]int32, w*h)}
	fx, fy := 5+rng.Float64()*20, 5+rng.Float64()*20
	cast := [3]float64{1 + 0.06*rng.Float64(), 1 - 0.04*rng.Float64(), 1 + 0.02*rng.NormFloat64()}
	scene := func(x, y float64, c int) float64 {
		v := 0.25 + 0.18*math.Sin(x/fx+float64(c))*math.Cos(y/fy-0.5*float64(c))
		if (int(x/23)+int(y/19))%2 == 0 { // sharp edges: a printed pattern
			v *= 0.45 + 0.2*float64(c)
		}
		v *= 0.4 + 1.2*y/float64(h) // shading gradient down the object
		return v
	}
	cx, cy, rad := float64(w)/2, float64(h)/2, 0.45*math.Min(float64(w), float64(h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			seg := int32((x * 3) / w)
			if y > h*2/3 {
				seg = 3
			}
			p.segment[i] = seg
			inside := math.Hypot(float64(x)-cx, float64(y)-cy) < rad
			p.valid[i] = !withMask || inside
			for c := 0; c < 3; c++ {
				ph := scene(float64(x), float64(y), c) + 0.01*rng.NormFloat64()
				re := cast[c]*scene(float64(x)+0.4, float64(y)-0.3, c) + 0.008*rng.NormFloat64()
				if seg == 2 { // a wrongly fitted segment
					re *= 1.25
				}
				if ph > 0.95 && withMask { // saturated in the photo
					p.valid[i] = false
				}
				p.photo[3*i+c] = float32(ph)
				p.render[3*i+c] = float32(re)
			}
			if !p.valid[i] && withMask && !inside { // background: anything
				p.render[3*i] = float32(math.NaN())
				p.photo[3*i+1] = float32(rng.Float64() * 5)
			}
		}
	}
	return p
}

// writeFloats stores float32 values little-endian for numpy.fromfile.
func writeFloats(t *testing.T, dir, name string, v []float32) string {
	t.Helper()
	b := make([]byte, 4*len(v))
	for i, f := range v {
		binary.LittleEndian.PutUint32(b[4*i:], math.Float32bits(f))
	}
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}
