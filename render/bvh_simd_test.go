//go:build goexperiment.simd && amd64

package render

import (
	"strings"
	"testing"
)

// fourWide makes NewScene build the 4-wide tree until the returned
// function is called.
func fourWide() func() {
	w := vectorWidth
	vectorWidth = 4
	return func() { vectorWidth = w }
}

// TestOtherLoopsInVectorBuild runs the BVH checks (brute force, closed
// meshes, Möller-Trumbore, degenerate inputs) on the loops this vector
// build does not use by default, the Float32x4 one over the 4-wide tree and
// the scalar one, so one build covers every path; the other tests of the
// package run the 8-wide vector loop when the CPU has AVX2.
func TestOtherLoopsInVectorBuild(t *testing.T) {
	if !vectorTraversal {
		t.Skip("the CPU has no AVX2: every test already runs the scalar loops")
	}
	checks := func(t *testing.T) {
		t.Run("BVHAgainstBruteForce", TestBVHAgainstBruteForce)
		t.Run("Watertight", TestWatertight)
		t.Run("HitAgainstMollerTrumbore", TestHitAgainstMollerTrumbore)
		t.Run("DegenerateInputs", TestDegenerateInputs)
	}
	path := func(t *testing.T, want string) {
		s, err := NewScene(cubeMesh(), 1)
		if err != nil {
			t.Fatal(err)
		}
		if got := s.TraversalPath(); !strings.HasPrefix(got, want) {
			t.Fatalf("TraversalPath %q, want %q...", got, want)
		}
	}
	path(t, "simd: 8-wide")
	t.Run("vector4", func(t *testing.T) {
		defer fourWide()()
		path(t, "simd: 4-wide")
		checks(t)
	})
	t.Run("scalar", func(t *testing.T) {
		vectorTraversal = false
		defer func() { vectorTraversal = true }()
		path(t, "scalar")
		checks(t)
	})
}
