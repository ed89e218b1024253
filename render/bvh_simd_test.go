//go:build goexperiment.simd && amd64

package render

import "testing"

// TestScalarLoopsInVectorBuild runs the BVH checks (brute force, closed
// meshes, Möller-Trumbore, degenerate inputs, level collapse) on the scalar
// loops of this vector build, so one build covers both paths; the other
// tests of the package run the vector loops when the CPU has AVX2.
func TestScalarLoopsInVectorBuild(t *testing.T) {
	if !vectorTraversal {
		t.Skip("the CPU has no AVX2: every test already runs the scalar loops")
	}
	vectorTraversal = false
	defer func() { vectorTraversal = true }()
	t.Run("BVHAgainstBruteForce", TestBVHAgainstBruteForce)
	t.Run("Watertight", TestWatertight)
	t.Run("HitAgainstMollerTrumbore", TestHitAgainstMollerTrumbore)
	t.Run("DegenerateInputs", TestDegenerateInputs)
	t.Run("LevelCollapse", TestLevelCollapse)
}
