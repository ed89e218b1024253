package report

import (
	"context"
	"math"
	"testing"

	"patina/assets/capture"
)

// TestIndirectClampFollowsExposure: the report's bound on light of two or
// more scatterings is the documented fraction of each photo's full scale,
// which in the capture's radiance is the photo's exposure multiplier
// (assets/capture Exposure.Multiplier, the photographic exposure
// equation); a negative option turns it off; and, the same paths being
// traced, the clamped render is nowhere brighter than the unclamped one.
func TestIndirectClampFollowsExposure(t *testing.T) {
	s := jarSmallSetup(t)
	pi := s.Capture.PhotosByUse(capture.UseHoldout)[0]
	run := func(clamp float64) *Holdout {
		h, err := s.CompareHoldout(context.Background(), pi, 0, 1, Options{SPP: 8, Threads: 2, IndirectClamp: clamp})
		if err != nil {
			t.Fatal(err)
		}
		return h
	}
	on, off, def := run(0.01), run(-1), run(0)
	m := s.Capture.Photos[pi].Exposure.Multiplier()
	if got, want := on.Sampler.IndirectClamp, 0.01*m; got != want {
		t.Errorf("clamp %v, want 0.01 x multiplier %v = %v", got, m, want)
	}
	if got, want := def.Sampler.IndirectClamp, DefaultIndirectClamp*m; got != want {
		t.Errorf("default clamp %v, want %v", got, want)
	}
	if off.Sampler.IndirectClamp != 0 {
		t.Errorf("negative option left a clamp of %v", off.Sampler.IndirectClamp)
	}
	lower := 0
	for i, v := range on.Render {
		if v > off.Render[i] {
			t.Fatalf("value %d: clamped %v brighter than unclamped %v", i, v, off.Render[i])
		}
		if v < off.Render[i] {
			lower++
		}
	}
	if lower == 0 {
		t.Error("a clamp of 1% of full scale changed no pixel: the fixture's interreflection should reach it")
	}
	if err := (Options{IndirectClamp: math.NaN()}).Check(); err == nil {
		t.Error("a NaN clamp passed the options check")
	}
}
