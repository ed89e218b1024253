//go:build goexperiment.simd && amd64

package render

import "simd/archsimd"

// With GOEXPERIMENT=simd on amd64 the traversal tests the four boxes of a
// node with one Float32x4 slab test (bvh_simd_octants.go), when the CPU has
// AVX2. The scalar loops stay compiled in: tests run both.

// vectorTraversal reports whether queries use the vector loops; tests
// switch it off to check the scalar ones in the same build.
var vectorTraversal = archsimd.X86.AVX2()

// TraversalPath names the traversal loops queries use, for reports.
func TraversalPath() string {
	if vectorTraversal {
		return "simd (GOEXPERIMENT=simd, AVX2 Float32x4 box tests)"
	}
	return "scalar"
}

func (s *Scene) traverseLoops(q *rayQuery, anyHit bool) bool {
	if vectorTraversal {
		return s.traverseOctantVec(q, anyHit)
	}
	return s.traverseOctant(q, anyHit)
}
