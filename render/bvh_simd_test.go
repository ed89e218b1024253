//go:build goexperiment.simd && amd64

package render

import "testing"

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
	t.Run("vector4", func(t *testing.T) {
		defer fourWide()()
		checks(t)
	})
	t.Run("scalar", func(t *testing.T) {
		vectorTraversal = false
		defer func() { vectorTraversal = true }()
		checks(t)
	})
}
