package hdr

import (
	"bytes"
	"io"
	"math"
	"math/rand/v2"
	"sync"
	"testing"
)

// benchEnvironment builds a 4096x2048 environment-map-like image: a sky
// whose brightness falls off with elevation with 1% noise (so mantissas are
// mostly literals, exponents mostly runs), a bright sun, and a ground of
// flat blocks (long runs).
var benchEnvironment = sync.OnceValue(func() *Image {
	const w, h = 4096, 2048
	m := NewImage(w, h)
	rng := rand.New(rand.NewPCG(7, 7))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var r, g, b float64
			if y < h/2 {
				k := math.Exp(-3*float64(y)/float64(h/2)) * (1 + 0.01*rng.NormFloat64())
				r, g, b = 0.4*k, 0.6*k, 1.2*k
				if dx, dy := float64(x-1000), float64(y-300); dx*dx+dy*dy < 400 {
					r, g, b = 5e4, 4.8e4, 4.5e4
				}
			} else {
				v := 0.05 + 0.02*float64((x/64+y/64)%5)
				r, g, b = v, 0.9*v, 0.7*v
			}
			m.SetRGB(x, y, float32(r), float32(g), float32(b))
		}
	}
	return m
})

var benchRGBE = sync.OnceValue(func() []byte {
	var b bytes.Buffer
	if err := EncodeRGBE(&b, benchEnvironment()); err != nil {
		panic(err)
	}
	return b.Bytes()
})

// onlyReader hides Len, so the decoder cannot know the input's size and
// grows its buffer as data arrives (a pipe or network stream).
type onlyReader struct{ r io.Reader }

func (o onlyReader) Read(p []byte) (int, error) { return o.r.Read(p) }

// loopWithCPU runs body b.N times and also reports the process CPU time per
// operation (cpu-ns/op), see processCPU.
func loopWithCPU(b *testing.B, body func()) {
	c0, ok := processCPU()
	n := 0
	for b.Loop() {
		body()
		n++
	}
	if c1, ok1 := processCPU(); ok && ok1 && n > 0 {
		b.ReportMetric(float64(c1-c0)/float64(n), "cpu-ns/op")
	}
}

// BenchmarkDecodeRGBE4096x2048 decodes a new-style run-length .hdr of
// 4096x2048 from memory. Goal (issue 2): under 0.3 s on the 2-core machine,
// allocation proportional to the output (one 96 MiB pixel buffer).
func BenchmarkDecodeRGBE4096x2048(b *testing.B) {
	data := benchRGBE()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	loopWithCPU(b, func() {
		if _, _, err := DecodeRGBE(bytes.NewReader(data)); err != nil {
			b.Fatal(err)
		}
	})
}

// BenchmarkDecodeRGBE4096x2048Stream is the same from a reader of unknown
// length: the buffer doubles as rows arrive, about twice the output in all.
func BenchmarkDecodeRGBE4096x2048Stream(b *testing.B) {
	data := benchRGBE()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	loopWithCPU(b, func() {
		if _, _, err := DecodeRGBE(onlyReader{bytes.NewReader(data)}); err != nil {
			b.Fatal(err)
		}
	})
}

func BenchmarkEncodeRGBE4096x2048(b *testing.B) {
	m := benchEnvironment()
	b.ReportAllocs()
	loopWithCPU(b, func() {
		if err := EncodeRGBE(io.Discard, m); err != nil {
			b.Fatal(err)
		}
	})
}

func BenchmarkDecodePFM4096x2048(b *testing.B) {
	var buf bytes.Buffer
	if err := EncodePFM(&buf, benchEnvironment()); err != nil {
		b.Fatal(err)
	}
	data := buf.Bytes()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	loopWithCPU(b, func() {
		if _, err := DecodePFM(bytes.NewReader(data)); err != nil {
			b.Fatal(err)
		}
	})
}
