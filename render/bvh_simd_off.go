//go:build !(goexperiment.simd && amd64)

package render

// Without GOEXPERIMENT=simd (or off amd64) queries run the scalar loops of
// bvh_octants.go only.

// vectorTraversal is false: this build has no vector loops.
const vectorTraversal = false

// TraversalPath names the traversal loops queries use, for reports.
func TraversalPath() string { return "scalar" }

func (s *Scene) traverseLoops(q *rayQuery, anyHit bool) bool { return s.traverseOctant(q, anyHit) }
