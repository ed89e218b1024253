package metrics

import (
	"sync"
	"testing"
	"time"
)

// benchPair is a 1280 x 960 pair with a circular object mask, saturated
// pixels and four segments.
var benchPair = sync.OnceValue(func() *testPair { return makePair(1280, 960, 42, true) })

// BenchmarkCompare1280x960 measures the metrics of a 1280 x 960 pair (the
// issue's goal: under 0.3 s), without drawing the pictures.
func BenchmarkCompare1280x960(b *testing.B) {
	p := benchPair()
	names := []string{"left", "middle", "right", "base"}
	b.ReportAllocs()
	b.ResetTimer()
	c0, ok := processCPU()
	for i := 0; i < b.N; i++ {
		if _, _, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, names, Options{NoImages: true}); err != nil {
			b.Fatal(err)
		}
	}
	reportCPU(b, c0, ok)
}

// reportCPU adds the process CPU time per call (all threads) as cpu-ms/op.
func reportCPU(b *testing.B, c0 time.Duration, ok bool) {
	if c1, ok1 := processCPU(); ok && ok1 {
		b.ReportMetric(float64(c1-c0)/float64(time.Millisecond)/float64(b.N), "cpu-ms/op")
	}
}

// BenchmarkCompare1280x960WithImages adds the map, lightness and strip
// pictures.
func BenchmarkCompare1280x960WithImages(b *testing.B) {
	p := benchPair()
	names := []string{"left", "middle", "right", "base"}
	b.ReportAllocs()
	b.ResetTimer()
	c0, ok := processCPU()
	for i := 0; i < b.N; i++ {
		if _, _, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, names, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	reportCPU(b, c0, ok)
}
