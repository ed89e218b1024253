//go:build !(goexperiment.simd && amd64)

package render

// Without GOEXPERIMENT=simd (or off amd64) queries run the scalar loops of
// bvh_octants.go over the 4-wide tree only.

// vectorTraversal is false: this build has no vector loops.
const vectorTraversal = false

// TraversalPath names the traversal loops the scene's queries run, for
// reports.
func (s *Scene) TraversalPath() string { return "scalar" }

// packedLeaves is false: leaves are tested one triangle at a time.
func packedLeaves() bool { return false }

// vectorNodes is empty: this build makes no tree for vector loops.
type vectorNodes struct{}

// collapse makes the traversed 4-wide tree from the binary one (after
// s.tris is filled) and returns its node count.
func (s *Scene) collapse(bin []bvhNode, threads int) int {
	s.nodes, _ = collapseBVH(bin, threads)
	return len(s.nodes)
}

func (s *Scene) traverseLoops(q *rayQuery, anyHit bool) bool {
	if len(s.nodes) == 0 || len(s.tris) == 0 {
		return false
	}
	return s.traverseOctant(q, anyHit)
}
